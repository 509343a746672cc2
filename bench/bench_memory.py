"""Memory: peak RSS while analysing fast-forwarded simulated streams of 1 hour, 1 day and 7 days.

Usage: python bench/bench_memory.py [--rate HZ] [--lengths 1h,1d,7d] [--sim]
Each length runs in a fresh subprocess which feeds the Pipeline as fast as it can and reads its
own VmHWM (peak resident set, /proc/self/status) at the end, plus VmRSS at each quarter.
By default the epochs come from one simulated hour (GSV every epoch) cached in memory and
re-stamped: host times advance and the NMEA time/date fields are rewritten (checksums redone),
so the state model and every statistic see a continuous multi-day stream. The cache (about
25 MB at 10 Hz) is part of the measured RSS. --sim runs the simulator live instead (slower).
Targets: every peak under 300 MB; 7-day peak within 15 % of the 1-day peak.
Speed is measured here, never asserted in tests.
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import time

PEAK_TARGET_MB = 300.0
FLAT_TARGET = 0.15
LENGTHS = {"1h": 3600.0, "1d": 86400.0, "7d": 7 * 86400.0}

_CHILD = r"""
import sys, time, datetime as dt
sys.path.insert(0, sys.argv[4])
from bench_replay import sim_epochs
from livefix.pipeline import Pipeline
from livefix.sources.base import Chunk, Link, LinkEvent

seconds, rate, live = float(sys.argv[1]), int(sys.argv[2]), sys.argv[3] == "1"
START = 1_778_574_600.0  # 2026-05-12T08:30:00Z, the rooftop scenario's start


def rss(key):
    for ln in open("/proc/self/status"):
        if ln.startswith(key):
            return int(ln.split()[1]) / 1024.0
    return float("nan")


def cks(body):
    x = 0
    for b in body:
        x ^= b
    return b"%02X" % x


def restamp(data, shift):
    # rewrite hhmmss.ss (and RMC/ZDA dates) in every timed sentence by `shift` seconds
    out = []
    for ln in data.split(b"\r\n")[:-1]:
        f = ln[:ln.rfind(b"*")].split(b",")
        tid = f[0][3:]
        if tid in (b"GGA", b"RMC", b"GST", b"ZDA", b"GNS") and len(f[1]) >= 6:
            t0 = int(f[1][:2]) * 3600 + int(f[1][2:4]) * 60 + int(f[1][4:6])
            d = dt.datetime(2026, 5, 12, tzinfo=dt.UTC) + dt.timedelta(seconds=t0 + shift)
            f[1] = d.strftime("%H%M%S").encode() + f[1][6:]
            if tid == b"RMC" and len(f) > 9 and f[9]:
                f[9] = d.strftime("%d%m%y").encode()
            if tid == b"ZDA":
                f[2], f[3], f[4] = d.strftime("%d").encode(), d.strftime("%m").encode(), d.strftime("%Y").encode()
        body = b",".join(f)
        out.append(body + b"*" + cks(body[1:]))
    return b"\r\n".join(out) + b"\r\n"


def epochs():
    if live:
        yield from sim_epochs(rate=rate, seconds=seconds)
        return
    base = list(sim_epochs(rate=rate, seconds=min(3600.0, seconds)))
    period = len(base) / rate
    k = 0
    while True:
        lap, (t, data) = divmod(k, len(base))[0], base[k % len(base)]
        tt = lap * period + t
        if tt >= seconds - 1e-9:
            return
        if lap:
            # timed fields move on by whole laps of the cached hour
            data = restamp(data, int(lap * period))
        yield tt, data
        k += 1


p = Pipeline(source="bench")
p.feed(LinkEvent(0.0, START, Link.STREAMING, "simulated receiver"))
t0 = time.perf_counter()
marks = []
quarter = seconds / 4
nxt = quarter
n = 0
for t, data in epochs():
    p.feed(Chunk(t, START + t, data))
    n += 1
    if t >= nxt:
        marks.append(rss("VmRSS:"))
        nxt += quarter
p.finish()
snap = p.snapshot()
dur = time.perf_counter() - t0
print("MEM", rss("VmHWM:"), dur, n, snap.counters.lines, snap.analysis["stream"]["epochs"],
      " ".join(f"{m:.1f}" for m in marks))
"""


def run_length(seconds: float, rate: int, live: bool, here: str) -> tuple[float, float, int, int, str]:
    out = subprocess.run([sys.executable, "-c", _CHILD, str(seconds), str(rate), "1" if live else "0", here],
                         check=True, capture_output=True, text=True).stdout
    row = [ln for ln in out.splitlines() if ln.startswith("MEM ")][-1].split(maxsplit=6)
    return float(row[1]), float(row[2]), int(row[4]), int(row[5]), row[6] if len(row) > 6 else ""


def main(argv: list[str] | None = None) -> int:
    from pathlib import Path

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rate", type=int, default=10, help="epochs per second (default 10)")
    ap.add_argument("--lengths", default="1h,1d,7d", help="comma list of 1h, 1d, 7d (default all)")
    ap.add_argument("--sim", action="store_true", help="run the simulator live instead of the cache")
    a = ap.parse_args(argv)
    here = str(Path(__file__).resolve().parent)
    peaks: dict[str, float] = {}
    for name in a.lengths.split(","):
        t0 = time.perf_counter()
        peak, dur, lines, epochs, marks = run_length(LENGTHS[name], a.rate, a.sim, here)
        peaks[name] = peak
        print(f"{name}: {epochs:,} epochs, {lines:,} lines at {a.rate} Hz in {dur:.0f} s "
              f"({time.perf_counter() - t0:.0f} s with start-up); peak RSS {peak:.1f} MB; "
              f"RSS at quarters: {marks} MB")
        print(f"RESULT | peak RSS {name} at {a.rate} Hz | {peak:.1f} MB | < {PEAK_TARGET_MB:.0f} MB | "
              f"{'met' if peak < PEAK_TARGET_MB else 'NOT met'}")
    if "1d" in peaks and "7d" in peaks:
        grow = peaks["7d"] / peaks["1d"] - 1
        print(f"RESULT | peak RSS 7d vs 1d at {a.rate} Hz | {grow * 100:+.1f} % | within "
              f"{FLAT_TARGET * 100:.0f} % | {'met' if abs(grow) <= FLAT_TARGET else 'NOT met'}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
