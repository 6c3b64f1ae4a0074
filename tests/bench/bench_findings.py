"""Field-scenario benchmark of the findings (not part of the test run): do they name what is wrong?

Generates healthy boards of every system type and boards with each wiring or supply fault of the catalogue
(tests/field_scenarios.py states the supply, load and meter models), runs the analysis the app runs and
prints, per kind: boards tried, boards with a warning or an alarm, how many were detected and how often the
top finding (the first one the sheet shows: severity, then the registry's priority) names the fault.

Targets (issue 12): healthy boards at most 1 % with a warning and none with an alarm; each fault kind at
least 99 % detected (a warning or an alarm, or the finding that names it where the fault is by design an
info, as all CTs reversed, which an exporting board also shows) and named by the top finding at least 95 %.

Usage: python tests/bench/bench_findings.py [N] [--seed S] [--misses K]   (default N = 2000 per kind)
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
from field_scenarios import KINDS, evaluate  # noqa: E402


def main() -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("n", nargs="?", type=int, default=2000)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--misses", type=int, default=0, help="print up to K missed boards per kind")
    args = ap.parse_args()
    t0 = time.perf_counter()
    print(f"{'kind':34} {'tried':>6} {'warn+':>7} {'alarm':>7} {'detect':>7} {'top':>7}  target  top findings")
    all_ok = True
    for kind in KINDS:
        r = evaluate(kind, args.n, args.seed)
        c = r["counts"]
        n = c["tried"]
        pct = {k: 100.0 * c[k] / n for k in ("warn_or_alarm", "alarm", "detected", "named_top")}
        if kind == "healthy":
            ok = pct["warn_or_alarm"] <= 1.0 and c["alarm"] == 0
        else:
            ok = pct["detected"] >= 99.0 and pct["named_top"] >= 95.0
        all_ok &= ok
        common = ", ".join(f"{k} {100.0 * v / n:.0f}%" for k, v in r["tops"].most_common(3))
        print(
            f"{kind:34} {n:6d} {pct['warn_or_alarm']:6.1f}% {pct['alarm']:6.1f}% {pct['detected']:6.1f}% "
            f"{pct['named_top']:6.1f}%  {'met' if ok else 'NOT'}    {common}"
        )
        for t, codes, rec in r["misses"][: args.misses]:
            shown = {k: round(v, 2) for k, v in rec.items() if v == v}
            print(f"    miss on {t}: {codes}\n      {shown}")
    print(
        f"\nall targets {'met' if all_ok else 'NOT met'}; {time.perf_counter() - t0:.1f} s "
        f"(N = {args.n} per kind, seed {args.seed})"
    )
    return 0


if __name__ == "__main__":
    sys.exit(main())
