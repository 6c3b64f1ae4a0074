"""What a correction took away, for the tables (day review, history): the worst finding an earlier version of
a reading had, where it is worse than what the current version shows.  A correction that makes an alarm go
away stays in view of the supervisor; every version is kept and shown in full on Enter."""

from __future__ import annotations

from ..report.export import analyze_rows
from ..storage import versions

SEVERITY_RANK = {"alarm": 0, "warning": 1, "info": 2, None: 3}


def worst_before(db, site: dict, records: list[dict]) -> dict:
    """``records``: dicts with ``reading_id``, ``version``, ``version_id`` (the version shown) and
    ``findings`` (its findings, worst first).  Returns reading id -> the worst finding of the earlier
    (not void) versions of each corrected reading, where that is worse than the shown version's."""
    out = {}
    for rec in records:
        if rec["version"] < 2:
            continue
        earlier = [v for v in versions.history(db, rec["reading_id"]) if v["id"] != rec["version_id"] and not v["void"]]
        if not earlier:
            continue
        rows = [
            {**v, "thresholds_json": site["thresholds_json"], "phase_labels": site["phase_labels"]} for v in earlier
        ]
        found = [f for res in analyze_rows(rows) for f in res["findings"]]
        if not found:
            continue
        was = min(found, key=lambda f: SEVERITY_RANK[f["severity"]])
        now = rec["findings"][0]["severity"] if rec["findings"] else None
        if SEVERITY_RANK[was["severity"]] < SEVERITY_RANK[now]:
            out[rec["reading_id"]] = was
    return out
