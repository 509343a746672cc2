"""UI cost: CPU used by the monitor process while a simulated 10 Hz receiver with about 40
satellites in view plays at real time, and how often the screen is repainted.

Usage: python bench/bench_ui.py [--seconds 20] [--size 160x50] [--scenario rooftop]
CPU comes from /proc/self/stat (whole process: UI + reader + analysis threads) and
/proc/self/task/<tid>/stat (the UI thread alone; the analysis thread alone: framing, decoding,
state and statistics, the live pipeline), measured from the first frame to exit. Textual runs
headless here, so terminal output costs are left out; the compositing work is included. The reader
thread runs the simulated receiver itself, which a real receiver would not cost.
Targets: whole process under 20 % of one core; the live pipeline and analysis under 5 % of one core
(issue 17; run once more with LIVEFIX_PURE=1 for the pure path's figure); at most 5 repaints per second.
"""

from __future__ import annotations

import argparse
import os
import threading
import time

from livefix.framing import native_core
from livefix.session import Session
from livefix.sources import open_source
from livefix.ui.app import MonitorApp

CPU_TARGET = 20.0  # % of one core
PIPELINE_TARGET = 5.0  # % of one core, the analysis thread (issue 17)
REPAINT_TARGET = 5.0  # per second
TICK = os.sysconf("SC_CLK_TCK")


def cpu_s(path: str) -> float:
    """utime + stime of a /proc stat file, seconds (fields 14 and 15, after the ')' of comm)."""
    with open(path, encoding="ascii") as f:
        fields = f.read().rsplit(")", 1)[1].split()
    return (int(fields[11]) + int(fields[12])) / TICK


class BenchApp(MonitorApp):
    def __init__(self, feed: Session, seconds: float, **kw) -> None:  # noqa: ANN003
        super().__init__(feed, **kw)
        self.seconds = seconds
        self.figures: dict[str, float] = {}

    def on_mount(self) -> None:  # Textual also runs MonitorApp.on_mount (handlers follow the MRO)
        self._t0 = (time.monotonic(), cpu_s("/proc/self/stat"),
                    cpu_s(f"/proc/self/task/{threading.get_native_id()}/stat"), self.repaints,
                    cpu_s(f"/proc/self/task/{_analysis_tid()}/stat"))
        self.set_timer(self.seconds, self.finish)

    def finish(self) -> None:
        t0, p0, u0, r0, a0 = self._t0
        dt = time.monotonic() - t0
        self.figures = {
            "wall_s": dt,
            "process_pct": 100 * (cpu_s("/proc/self/stat") - p0) / dt,
            "ui_thread_pct": 100 * (cpu_s(f"/proc/self/task/{threading.get_native_id()}/stat") - u0) / dt,
            "repaints_per_s": (self.repaints - r0) / dt,
            "pipeline_pct": 100 * (cpu_s(f"/proc/self/task/{_analysis_tid()}/stat") - a0) / dt,
            "in_view": len({(o.system, o.prn) for o in (self.snap.sky if self.snap else ())}),
            "epochs": float((self.snap.analysis.get("stream") or {}).get("epochs") or 0) if self.snap else 0,
        }
        self.exit(0)


def _analysis_tid() -> int | None:
    """Native id of the session's analysis thread (livefix.session: framing .. statistics)."""
    return next((t.native_id for t in threading.enumerate() if t.name == "livefix-analysis"), None)


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seconds", type=float, default=20.0)
    ap.add_argument("--size", default="160x50")
    ap.add_argument("--scenario", default="rooftop")
    args = ap.parse_args()
    w, h = (int(x) for x in args.size.lower().split("x"))
    session = Session(open_source(f"sim:{args.scenario}", speed=1.0, rate_hz=10.0)).start()
    try:
        app = BenchApp(session, args.seconds)
        app.run(headless=True, size=(w, h))
    finally:
        session.stop()
    f = app.figures
    if not f:
        print("bench_ui: the app ended before the measurement finished")
        return 1
    print(f"{f['wall_s']:.1f} s at {w}x{h}, {f['in_view']:.0f} satellites in view, {f['epochs']:.0f} epochs")
    print(f"process CPU {f['process_pct']:.1f} % of one core (UI thread {f['ui_thread_pct']:.1f} %), "
          f"{f['repaints_per_s']:.2f} repaints/s")
    met = "met" if f["process_pct"] < CPU_TARGET else "NOT met"
    print(f"RESULT | ui_cpu | {f['process_pct']:.1f} % of one core (UI thread {f['ui_thread_pct']:.1f} %) "
          f"| < {CPU_TARGET:.0f} % | {met}")
    path = "C core" if native_core() is not None else "pure path"
    met = "met" if f["pipeline_pct"] < PIPELINE_TARGET else "NOT met"
    print(f"RESULT | live pipeline + analysis thread ({path}) | {f['pipeline_pct']:.1f} % of one core "
          f"| < {PIPELINE_TARGET:.0f} % | {met}")
    met = "met" if f["repaints_per_s"] <= REPAINT_TARGET + 0.05 else "NOT met"
    print(f"RESULT | ui_repaint_rate | {f['repaints_per_s']:.2f} /s | <= {REPAINT_TARGET:.0f} /s | {met}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
