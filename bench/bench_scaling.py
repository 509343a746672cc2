"""Scaling of the replay analysis: epoch rate, constellation count and session length.

Usage: python bench/bench_scaling.py [--minutes N] [--long-minutes N]
Streams come from the simulator (scenario rooftop, GSV every epoch) as in-memory items and are
pushed through one Pipeline each (framing, decoding, state, every statistic, final snapshot), timed
with this thread's CPU clock. Figures:
  * lines/s at 1, 10 and 20 Hz (four constellations) and with 1, 2 and 4 constellations (10 Hz);
  * cost per satellite-epoch with 4 constellations versus 1 (linear in satellites means <= 1x);
  * cost per line in the last quarter of a long run versus the first (flat means about 1x).
Speed is measured here, never asserted in tests.
"""

from __future__ import annotations

import argparse
import sys
import time

from bench_replay import machine, sim_items

from livefix.pipeline import Pipeline

SAT_TARGET = 1.2  # 4-constellation cost per satellite-epoch / 1-constellation, at most
LENGTH_TARGET = 1.2  # last-quarter cost per line / first quarter, at most
SYSTEMS = {1: ("G",), 2: ("G", "E"), 4: ("G", "R", "E", "C")}


def run(items: list, parts: int = 1) -> tuple[Pipeline, list[tuple[float, int]], int]:
    """Feed items; -> pipeline, [(cpu seconds, lines)] per part, satellite-epochs seen."""
    p = Pipeline(source="bench")
    n = len(items)
    bounds = [n * k // parts for k in range(parts + 1)]
    out: list[tuple[float, int]] = []
    sat_epochs = 0
    orig = p.analyzer.on_epoch

    def count(ep) -> None:  # noqa: ANN001
        nonlocal sat_epochs
        sat_epochs += len(ep.sats)
        orig(ep)

    p.analyzer.on_epoch = count
    for k in range(parts):
        lines0 = p.framer.counters.lines
        t0 = time.thread_time()
        feed = p.feed
        for it in items[bounds[k]:bounds[k + 1]]:
            feed(it)
        if k == parts - 1:
            p.finish()
            p.snapshot()
        out.append((time.thread_time() - t0, p.framer.counters.lines - lines0))
    return p, out, sat_epochs


def rate_of(items: list, repeat: int) -> tuple[float, float, int]:
    """Best of `repeat`: (lines/s, cpu s per satellite-epoch, epochs)."""
    best = None
    for _ in range(repeat):
        p, parts, sat_epochs = run(items)
        cpu, lines = parts[0]
        if best is None or cpu < best[0]:
            best = (cpu, lines, sat_epochs, p.state.epochs)
    cpu, lines, sat_epochs, epochs = best
    return lines / cpu, cpu / max(1, sat_epochs), epochs


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--minutes", type=float, default=3.0, help="stream length per case (default 3)")
    ap.add_argument("--long-minutes", type=float, default=40.0, help="the long run (default 40)")
    ap.add_argument("--repeat", type=int, default=3, help="best of N (default 3)")
    a = ap.parse_args(argv)
    print(f"machine: {machine()}")
    secs = a.minutes * 60
    for hz in (1, 10, 20):
        items = list(sim_items(rate=hz, seconds=secs * (10 if hz == 1 else 1)))
        lps, _, ep = rate_of(items, a.repeat)
        print(f"{hz:2d} Hz, 4 constellations: {lps:10,.0f} lines/s ({ep} epochs)")
        print(f"RESULT | replay lines/s at {hz} Hz, 4 constellations | {lps:,.0f} lines/s | report only | met")
    per_sat: dict[int, float] = {}
    for n, systems in SYSTEMS.items():
        items = list(sim_items(rate=10, seconds=secs, systems=systems))
        lps, sat_cost, ep = rate_of(items, a.repeat)
        per_sat[n] = sat_cost
        print(f"10 Hz, {n} constellation(s) {''.join(systems)}: {lps:10,.0f} lines/s, "
              f"{sat_cost * 1e6:.2f} us per satellite-epoch")
    sat_ratio = per_sat[4] / per_sat[1]
    print(f"RESULT | cost per satellite-epoch, 4 vs 1 constellations | {sat_ratio:.2f}x | <= {SAT_TARGET}x | "
          f"{'met' if sat_ratio <= SAT_TARGET else 'NOT met'}")
    items = list(sim_items(rate=10, seconds=a.long_minutes * 60))
    _, parts, _ = run(items, parts=4)
    first, last = (c / max(1, n) for c, n in (parts[0], parts[-1]))
    # the first quarter holds the time to first fix (fewer sentences per epoch): compare per line
    q = ", ".join(f"{c / max(1, n) * 1e6:.2f}" for c, n in parts)
    print(f"long run {a.long_minutes:g} min at 10 Hz: us per line by quarter: {q}")
    ratio = last / first
    print(f"RESULT | cost per line, last vs first quarter of {a.long_minutes:g} min | {ratio:.2f}x | "
          f"<= {LENGTH_TARGET}x | {'met' if ratio <= LENGTH_TARGET else 'NOT met'}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
