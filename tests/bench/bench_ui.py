"""Benchmark of the entry app (not part of the test run).

1. Keystroke to updated results and drawing, headless at 80x24, over a few hundred keystrokes:
   median and 95th percentile of (a) the sheet's own update (parse, analysis, results text, drawing)
   and (b) the whole round trip from the key press until the app is idle again (pilot included).
   Target: 95th percentile under 16 ms.
2. Start-up to a usable sheet on the demo database, beside a minimal Textual app's start-up, both in fresh
   processes, in the same run (target: within 1.5x).

Usage: python tests/bench/bench_ui.py
"""
from __future__ import annotations

import asyncio
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

KEYS = ["2", "7", "7", "tab", "tab", "1", "0", "0", "tab", "-", "3", "0", "tab", "2", "7", "6", "tab", "2", "4",
        "0", "tab", "9", "9", "tab", "-", "1", "5", "0", "tab", "2", "7", "8", "tab", "1", "2", "0", "tab", "9",
        "8", "tab", "9", "0", "tab", "7"]

STARTUP_FIELDPAD = r"""
import asyncio, sys, time
t0 = time.perf_counter()
from fieldpad.ui.app import FieldpadApp
from fieldpad.ui.sheet import ReadingSheet
from fieldpad.storage import repo
async def main():
    app = FieldpadApp(sys.argv[1], technician="bench")
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        bid = repo.list_boards(app.db, app.site_id)[0]["id"]
        app.push_screen(ReadingSheet(bid))
        await pilot.pause()
        await pilot.press("2")
        await pilot.pause()
        assert app.screen.result is None or True
        print(time.perf_counter() - t0)
asyncio.run(main())
"""

STARTUP_MINIMAL = r"""
import asyncio, time
t0 = time.perf_counter()
from textual.app import App
from textual.widgets import Static, Footer
class Minimal(App):
    def compose(self):
        yield Static("hello")
        yield Footer()
async def main():
    app = Minimal()
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        await pilot.press("2")
        await pilot.pause()
        print(time.perf_counter() - t0)
asyncio.run(main())
"""


def pct(v, q):
    v = sorted(v)
    return v[min(len(v) - 1, int(q * len(v)))]


async def keystrokes(db_path: Path):
    from fieldpad.storage import repo
    from fieldpad.ui.app import FieldpadApp
    from fieldpad.ui.sheet import ReadingSheet

    app = FieldpadApp(db_path, technician="bench")
    own, trip = [], []
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        bid = repo.list_boards(app.db, app.site_id)[0]["id"]
        for _round in range(8):
            app.push_screen(ReadingSheet(bid))
            await pilot.pause()
            sheet = app.screen
            for k in KEYS:
                t = time.perf_counter()
                await pilot.press(k)
                await pilot.pause()
                trip.append((time.perf_counter() - t) * 1e3)
                own.append(sheet.last_compute_ms)
            sheet.dirty = False
            app.pop_screen()
            await pilot.pause()
    return own, trip


async def minimal_keystrokes():
    from textual.app import App
    from textual.widgets import Input

    class Minimal(App):
        def compose(self):
            yield Input()

    app = Minimal()
    trip = []
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        for k in KEYS * 8:
            t = time.perf_counter()
            await pilot.press(k if k != "tab" else "x")
            await pilot.pause()
            trip.append((time.perf_counter() - t) * 1e3)
    return trip


def main():
    from fieldpad.demo_site import build_demo

    with tempfile.TemporaryDirectory() as d:
        db = Path(d) / "demo.db"
        build_demo(db)
        own, trip = asyncio.run(keystrokes(db))
        print(f"keystrokes measured: {len(trip)}")
        print(f"sheet update per keystroke: median {statistics.median(own):.2f} ms, p95 {pct(own, 0.95):.2f} ms")
        print(f"key press to idle (pilot round trip): median {statistics.median(trip):.2f} ms, "
              f"p95 {pct(trip, 0.95):.2f} ms")
        base = asyncio.run(minimal_keystrokes())
        print(f"same round trip typing into a bare Textual Input: median {statistics.median(base):.2f} ms, "
              f"p95 {pct(base, 0.95):.2f} ms (the pilot's own cost)")
        print(f"fieldpad's cost above the bare Input: p95 {pct(trip, 0.95) - pct(base, 0.95):.2f} ms; "
              f"sheet update p95 {pct(own, 0.95):.2f} ms (target p95 < 16 ms)")
        runs = 5
        fp = [float(subprocess.run([sys.executable, "-c", STARTUP_FIELDPAD, str(db)], capture_output=True,
                                   text=True, check=True).stdout.strip().splitlines()[-1]) for _ in range(runs)]
        mini = [float(subprocess.run([sys.executable, "-c", STARTUP_MINIMAL], capture_output=True, text=True,
                                     check=True).stdout.strip().splitlines()[-1]) for _ in range(runs)]
        print(f"start-up to a usable sheet (demo db), median of {runs}: {statistics.median(fp) * 1e3:.0f} ms")
        print(f"minimal Textual app start-up, median of {runs}: {statistics.median(mini) * 1e3:.0f} ms")
        print(f"ratio: {statistics.median(fp) / statistics.median(mini):.2f}x (target <= 1.5x)")


if __name__ == "__main__":
    main()
