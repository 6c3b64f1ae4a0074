"""How typed values are understood (see fieldpad.core.readings for the decisions)."""

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from fieldpad.core.readings import ReadingError, parse_value


@pytest.mark.parametrize(
    "text, kind, expected",
    [
        ("277", "V", 277.0),
        (" 277.5 ", "V", 277.5),
        ("277,5", "V", 277.5),
        ("277V", "V", 277.0),
        ("277 v", "V", 277.0),
        ("13.8kV", "V", 13800.0),
        ("12 A", "A", 12.0),
        ("1.2kA", "A", 1200.0),
        ("-120", "deg", -120.0),
        ("240", "deg", 240.0),
        ("30 lag", "deg", -30.0),
        ("30 lead", "deg", 30.0),
        ("-120°", "deg", -120.0),
        ("15deg", "deg", 15.0),
        ("", "V", None),
        (None, "V", None),
        (5, "A", 5.0),
    ],
)
def test_accepted(text, kind, expected):
    assert parse_value(text, kind) == expected


@pytest.mark.parametrize(
    "text, kind, reason",
    [
        ("abc", "V", "not a number"),
        ("nan", "V", "finite"),
        ("-Infinity", "A", "finite"),
        ("1,234", "V", "ambiguous"),
        ("1.234,5", "V", "decimal separator"),
        ("277A", "V", "not a unit for a voltage"),
        ("12 V", "A", "not a unit"),
        ("-1", "A", "negative"),
        ("50000", "V", "too large"),
        ("400", "deg", "outside"),
        (True, "V", "not a number"),
        ("1_000", "V", "not a unit"),
        (float("nan"), "V", "finite"),
        ("0\x1f", "V", "control character"),
        ("\u0663", "V", "not a number"),  # an Arabic-Indic digit: only ASCII digits are read
    ],
)
def test_refused_with_reason(text, kind, reason):
    with pytest.raises(ReadingError, match=reason):
        parse_value(text, kind)


@settings(max_examples=500)
@given(st.text(max_size=30), st.sampled_from(["V", "A", "deg"]))
def test_any_text_is_a_number_or_a_reason(text, kind):
    try:
        v = parse_value(text, kind)
    except ReadingError as e:
        assert str(e)
    else:
        assert v is None or v == v
