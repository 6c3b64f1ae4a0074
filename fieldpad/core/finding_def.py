"""What one finding is: its code, severities, priority, wording, threshold source and rule.

A rule module lists its definitions with :func:`collector`; :mod:`fieldpad.core.registry` gathers them.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

#: Severities, most urgent first.
SEVERITIES = ("alarm", "warning", "info")


@dataclass(frozen=True)
class Definition:
    """One finding.

    ``rule(q, th)`` returns a list of ``(severity, mask, value, threshold, phase)``, one per severity it
    can raise (the same list length on every block); ``value``, ``threshold`` and ``phase`` are each a
    number, a result name or an array (see :class:`fieldpad.core.analysis.Analysis`).  ``priority`` orders
    findings of one severity (lower first: the cause before its consequences).  ``seen`` says what was
    seen and ``check`` what to check next (never that equipment is safe); both are format strings over
    ``ph``, ``value``, ``threshold``, ``derating``, ``reason``, ``std``, ``rot`` and ``expected``.
    ``source`` is a key of :data:`fieldpad.core.thresholds.SOURCES` (``"voltage"``: by the reading's
    voltage standard).
    """

    code: str
    severities: tuple
    priority: int
    unit: str
    source: str
    seen: str
    check: str
    rule: Callable


def collector(into: list):
    """A decorator that appends a :class:`Definition` built around the decorated rule to ``into``."""

    def finding(code, severities, priority, unit, source, seen, check):
        def wrap(rule):
            into.append(Definition(code, tuple(severities), priority, unit, source, seen, check, rule))
            return rule

        return wrap

    return finding
