"""The C core against the pure path and against pynmeagps, in one run, on one 10 Hz multi-GNSS file.

Usage: python bench/bench_native.py [--minutes N] [--rate HZ] [--repeat N]
Prints, as ratios measured in this run (the machine is shared; CPU time, best of N, interleaved):
  * pynmeagps NMEAReader.parse alone over the file's lines (the reference of issue 6 / issue 17);
  * the whole command `livefix report FILE --json` (start-up included, one process) with the C core
    and with LIVEFIX_PURE=1, as CPU time of the child process; both outputs must be byte-identical;
  * a per-stage profile (read, framing, decoding, state, analysis) of the same work in this process,
    with the C core and without, so what is left for the next step is visible.
Speed is measured here, never asserted in tests.
"""

from __future__ import annotations

import argparse
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from bench_replay import ROOT, as_installed, file_lines, machine, time_reference, write_recording  # noqa: E402

TARGET = 25.0  # issue 17: whole replay >= 25x pynmeagps parse alone (aim 80x)
DAY_TARGET_S = 15.0  # issue 17: 24 h at 10 Hz in under 15 s with --jobs 2


def command_cpu(path: Path, pure: bool, jobs: str = "1") -> tuple[float, float, bytes]:
    """(CPU s of the child, wall s, stdout) of `livefix report FILE --json`."""
    env = dict(os.environ, LIVEFIX_PURE="1" if pure else "0")
    r0 = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    out = subprocess.run([sys.executable, "-m", "livefix", "report", str(path), "--json", "--jobs", jobs],
                         cwd=ROOT, env=env, capture_output=True, check=True, timeout=3600).stdout
    wall = time.perf_counter() - t0
    r1 = resource.getrusage(resource.RUSAGE_CHILDREN)
    return (r1.ru_utime + r1.ru_stime) - (r0.ru_utime + r0.ru_stime), wall, out


class _NoAnalysis:
    """Stands in for the analyzer so the pipeline's time without analysis can be taken."""

    def __getattr__(self, name: str) -> Any:
        return lambda *a, **k: None


def stages(path: Path, native: bool) -> dict[str, float]:
    """CPU seconds per stage of the report work in this process (read, framing, decoding, state,
    analysis). Framing and decoding are timed alone; state and analysis by difference of whole runs."""
    import livefix.pipeline as pl
    from livefix.decode.decoder import Decoder
    from livefix.framing import Framer
    from livefix.items import Chunk
    from livefix.record.reader import RecordingReader

    clock = time.thread_time
    t0 = clock()
    items = list(RecordingReader(path, native=native).items())
    read = clock() - t0
    chunks = [it.data for it in items if type(it) is Chunk]
    fr, dec = Framer(native=native), Decoder(native=native)
    t0 = clock()
    lines = [fr.feed(c) for c in chunks]
    frame = clock() - t0
    t0 = clock()
    for group in lines:
        for ln in group:
            dec.decode(ln)
    decode = clock() - t0

    def run(analyzer: Any) -> float:
        p = pl.Pipeline(source="bench", analyzer=analyzer)
        p.framer, p.decoder = Framer(native=native), Decoder(native=native)
        t = clock()
        for it in items:
            p.feed(it)
        p.finish()
        return clock() - t

    bare = run(_NoAnalysis())
    full = run(None)
    return {"read": read, "framing": frame, "decoding": decode, "state": max(0.0, bare - frame - decode),
            "analysis": max(0.0, full - bare)}


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--minutes", type=float, default=5.0, help="simulated length (default 5)")
    ap.add_argument("--rate", type=int, default=10, help="epochs per second (default 10)")
    ap.add_argument("--repeat", type=int, default=2, help="best of N (default 2)")
    ap.add_argument("--ref-lines", type=int, default=60000, help="lines timed with pynmeagps (0 = all)")
    a = ap.parse_args(argv)
    try:
        from livefix import _native  # noqa: F401
    except ImportError:
        print("RESULT | C core | not built | built | NOT met")
        return 0
    print(f"machine: {machine()}")
    print(as_installed())
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / f"bench-native-{a.rate}hz-{a.minutes:g}min.lfr"
        nlines, nbytes = write_recording(path, rate=a.rate, seconds=a.minutes * 60)
        lines = file_lines(path)
        ref_lines = lines[: a.ref_lines] if a.ref_lines else lines
        print(f"file: {nlines} lines, {nbytes} bytes, {a.minutes:g} min at {a.rate} Hz, four systems, GSV every epoch")
        ref = cmd_n = cmd_p = float("inf")
        wall_n = wall_p = float("inf")
        outs: set[bytes] = set()
        for _ in range(a.repeat):
            ref = min(ref, time_reference(ref_lines) / len(ref_lines) * len(lines))
            for pure in (False, True):
                cpu, wall, out = command_cpu(path, pure)
                outs.add(out)
                if pure:
                    cmd_p, wall_p = min(cmd_p, cpu), min(wall_p, wall)
                else:
                    cmd_n, wall_n = min(cmd_n, cpu), min(wall_n, wall)
        prof = {flag: stages(path, flag) for flag in (True, False)}
        day = 86400 / (a.minutes * 60)
    print(f"pynmeagps parse alone        : {ref:7.2f} s CPU for {len(lines)} lines ({ref * 1e6 / len(lines):.2f} us/line)")
    for label, cpu, wall in (("report --json, C core", cmd_n, wall_n), ("report --json, pure  ", cmd_p, wall_p)):
        print(f"{label}        : {cpu:7.2f} s CPU ({wall:.2f} s wall), {ref / cpu:5.1f}x pynmeagps; "
              f"24 h at {a.rate} Hz about {cpu * day:.0f} s CPU in one process")
    print(f"C core vs pure, whole command: {cmd_p / cmd_n:.2f}x; JSON identical: {'yes' if len(outs) == 1 else 'NO'}")
    print("per stage, us/line (C core | pure):")
    for k in prof[True]:
        n, p = prof[True][k] * 1e6 / len(lines), prof[False][k] * 1e6 / len(lines)
        print(f"  {k:9s} {n:6.2f} | {p:6.2f}")
    tot_n, tot_p = (sum(v.values()) * 1e6 / len(lines) for v in (prof[True], prof[False]))
    print(f"  {'total':9s} {tot_n:6.2f} | {tot_p:6.2f}")
    ratio = ref / cmd_n
    print(f"RESULT | report --json (C core) vs pynmeagps parse alone | {ratio:.1f}x | >= {TARGET:.0f}x | "
          f"{'met' if ratio >= TARGET and len(outs) == 1 else 'NOT met'}")
    print(f"RESULT | report --json (pure) vs pynmeagps parse alone | {ref / cmd_p:.1f}x | info | met")
    print(f"RESULT | report --json C core vs pure, identical JSON | {cmd_p / cmd_n:.2f}x, "
          f"{'identical' if len(outs) == 1 else 'DIFFERENT'} | identical | {'met' if len(outs) == 1 else 'NOT met'}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
