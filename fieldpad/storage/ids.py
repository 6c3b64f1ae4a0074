"""Identifiers and timestamps for stored records.

IDs are UUIDv7 (RFC 9562 section 5.7): 48 bits of Unix time in milliseconds,
then random bits, so they sort by creation time and never clash between
laptops.  Times are stored as UTC ISO 8601 text with microseconds and a ``Z``.
"""

from __future__ import annotations

import os
import time
import uuid
from datetime import UTC, datetime, timedelta


def uuid7() -> str:
    """A new UUIDv7 as text (RFC 9562 section 5.7)."""
    ms = time.time_ns() // 1_000_000
    rand = int.from_bytes(os.urandom(10), "big")
    value = (ms & ((1 << 48) - 1)) << 80
    value |= 0x7 << 76  # version 7
    value |= ((rand >> 62) & 0xFFF) << 64  # rand_a, 12 bits
    value |= 0b10 << 62  # RFC 9562 variant
    value |= rand & ((1 << 62) - 1)  # rand_b, 62 bits
    return str(uuid.UUID(int=value))


def utc_now() -> str:
    return to_utc_text(datetime.now(UTC))


def stamp_after(stamp: str | None) -> str:
    """Now, or one microsecond after ``stamp`` where this laptop's clock is not past it (a change made
    here is then recorded after what it changes, even when another laptop's clock ran ahead)."""
    now = utc_now()
    if stamp is None or stamp < now:
        return now
    return to_utc_text(datetime.fromisoformat(stamp.replace("Z", "+00:00")) + timedelta(microseconds=1))


def to_utc_text(dt: datetime) -> str:
    """UTC ISO 8601 text; a naive datetime is taken as the machine's local time."""
    if dt.tzinfo is None:
        dt = dt.astimezone()  # local time zone of this machine
    return dt.astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%S.%fZ")


def parse_time(text: str) -> str:
    """Parse ISO 8601 text (with an offset, ``Z``, or naive = local time) to stored UTC text.

    Raises ValueError with a reason a person can act on.
    """
    t = text.strip()
    if t.endswith(("Z", "z")):
        t = t[:-1] + "+00:00"
    try:
        dt = datetime.fromisoformat(t)
    except ValueError:
        raise ValueError(f"{text!r} is not an ISO 8601 date and time (e.g. 2026-03-14T09:30:00+01:00)") from None
    if not 1990 <= dt.year <= 2200:
        raise ValueError(f"{text!r}: year {dt.year} is not plausible for a reading")
    if dt.tzinfo is None:
        _check_local_time(text, dt)
    return to_utc_text(dt)


def _check_local_time(text: str, dt: datetime) -> None:
    """A time without an offset is this laptop's local time: refuse one that does not exist (the clocks
    went forward over it) or that happened twice (the clocks went back), since either would be stored
    as a guess."""
    early, late = dt.replace(fold=0).astimezone(UTC), dt.replace(fold=1).astimezone(UTC)
    if early != late:
        if early.astimezone().replace(tzinfo=None) != dt and late.astimezone().replace(tzinfo=None) != dt:
            raise ValueError(
                f"{text!r} does not exist in this laptop's time zone (the clocks went forward "
                "over it): give the time with its UTC offset, e.g. 2026-03-29T03:30:00+02:00"
            )
        raise ValueError(
            f"{text!r} happened twice in this laptop's time zone (the clocks went back): give "
            "the time with its UTC offset, e.g. 2026-10-25T02:30:00+01:00"
        )


def local_text(utc_text: str | None, fmt: str = "%Y-%m-%d %H:%M") -> str:
    """Stored UTC text shown in the machine's local time."""
    if not utc_text:
        return ""
    dt = datetime.fromisoformat(utc_text.replace("Z", "+00:00"))
    return dt.astimezone().strftime(fmt)
