"""The registry of findings: every definition (code, severities, priority, wording, threshold source, rule)
from the rule modules, and :func:`evaluate`, which the analysis runs.

Order shown to a technician ("top finding" first): severity (alarm, warning, info), then the definition's
``priority`` (the cause before its consequences: a lost phase before the voltage out of range it causes).
"""

from __future__ import annotations

from . import rules_current, rules_voltage
from .finding_def import SEVERITIES, Definition

#: code -> Definition, in evaluation order.
REGISTRY: dict[str, Definition] = {d.code: d for d in rules_voltage.DEFINITIONS + rules_current.DEFINITIONS}
#: (severity rank, priority) per (code, severity): the sort key of the worded findings.
ORDER = {(d.code, s): (SEVERITIES.index(s), d.priority) for d in REGISTRY.values() for s in d.severities}


def evaluate(q, th) -> list:
    """Every finding of a block: a list of ``(code, severity, mask, value, threshold, unit, phase)``
    (see :class:`fieldpad.core.analysis.Analysis`), one entry per (definition, severity) in registry order."""
    rules_voltage.prepare(q, th)
    rules_current.prepare(q, th)
    out = []
    for d in REGISTRY.values():
        raised = d.rule(q, th)
        if [r[0] for r in raised] != list(d.severities):
            raise RuntimeError(
                f"finding {d.code}: the rule raised {[r[0] for r in raised]}, its definition says {list(d.severities)}"
            )
        for severity, mask, value, threshold, phase in raised:
            out.append((d.code, severity, mask, value, threshold, d.unit, phase))
    return out
