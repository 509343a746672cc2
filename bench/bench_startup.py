"""Startup: `livefix --help` versus `python -c pass`, and the monitor's first full frame.

Usage: python bench/bench_startup.py [--runs N] [--size 160x50]
Each figure is a fresh process (best of N, wall time). The first-frame figure is measured in a
child process from just before it imports the UI until the first frame showing data from the
simulated receiver has been composited (Textual run_test, headless); the interpreter's own start
(`python -c pass`, measured here) is added, so it is the time from launch to a full screen.
Speed is measured here, never asserted in tests.
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import time

HELP_TARGET = 3.0  # x python -c pass
FRAME_TARGET = 1.5  # seconds

_CHILD = r"""
import asyncio, sys, time
t0 = time.perf_counter()
from livefix.session import Session
from livefix.sources import open_source
from livefix.ui.app import MonitorApp
w, h = int(sys.argv[1]), int(sys.argv[2])

async def main():
    session = Session(open_source("sim:rooftop", speed=1.0, rate_hz=10.0)).start()
    try:
        app = MonitorApp(session)
        async with app.run_test(size=(w, h)) as pilot:
            t_end = time.perf_counter() + 10.0
            while app.repaints == 0 and time.perf_counter() < t_end:
                await pilot.pause(0.005)
            await pilot.pause()  # let the frame with data be composited
            t1 = time.perf_counter()
            ok = app.repaints > 0
            app.exit(0)
    finally:
        session.stop()
    print(f"FRAME {t1 - t0:.4f} {int(ok)}")

asyncio.run(main())
"""


def best_of(cmd: list[str], runs: int) -> float:
    best = float("inf")
    for _ in range(runs):
        t0 = time.perf_counter()
        subprocess.run(cmd, check=True, capture_output=True, timeout=60)
        best = min(best, time.perf_counter() - t0)
    return best


def first_frame(size: tuple[int, int], runs: int) -> float | None:
    best: float | None = None
    for _ in range(runs):
        out = subprocess.run([sys.executable, "-c", _CHILD, str(size[0]), str(size[1])], check=True,
                             capture_output=True, text=True, timeout=120).stdout
        rows = [ln.split() for ln in out.splitlines() if ln.startswith("FRAME ")]
        if not rows or rows[-1][2] != "1":
            continue
        t = float(rows[-1][1])
        best = t if best is None else min(best, t)
    return best


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=5, help="best of N processes (default 5)")
    ap.add_argument("--size", default="160x50", help="terminal size for the first frame (default 160x50)")
    a = ap.parse_args(argv)
    w, h = (int(x) for x in a.size.lower().split("x"))
    py = best_of([sys.executable, "-c", "pass"], a.runs)
    helpt = best_of([sys.executable, "-m", "livefix", "--help"], a.runs)
    ratio = helpt / py
    print(f"python -c pass      : {py * 1000:7.1f} ms")
    print(f"livefix --help      : {helpt * 1000:7.1f} ms  ({ratio:.2f}x)")
    print(f"RESULT | startup livefix --help vs python -c pass | {ratio:.2f}x | < {HELP_TARGET:.0f}x | "
          f"{'met' if ratio < HELP_TARGET else 'NOT met'}")
    ff = first_frame((w, h), max(1, min(a.runs, 3)))
    if ff is None:
        print("RESULT | UI first full frame | no frame | < 1.5 s | NOT met")
        return 1
    total = ff + py
    print(f"UI first full frame : {total:7.3f} s at {w}x{h} (imports + app start + first data frame "
          f"{ff:.3f} s, + interpreter start {py:.3f} s)")
    print(f"RESULT | UI first full frame | {total:.2f} s | < {FRAME_TARGET} s | "
          f"{'met' if total < FRAME_TARGET else 'NOT met'}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
