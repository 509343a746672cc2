"""Whole replay analysis (`livefix report FILE --json`) versus pynmeagps parse alone, same file, same run.

Usage: python bench/bench_replay.py [--minutes N] [--rate HZ] [--repeat N] [--keep DIR]
Builds a livefix recording from the simulator (scenario rooftop, four constellations) with the
satellite sentences repeated every epoch (the simulator writes GSV once a second), then times:
  * reference: pynmeagps NMEAReader.parse on every framed line of that file;
  * ours: the `livefix report FILE --json` work in this process (read, frame, decode, state,
    every statistic, final snapshot to JSON).
Both are rates in CPU time of this thread (the report work is single-threaded; CPU time is
less disturbed by other processes on a shared machine than wall time), interleaved, best of N. Speed is measured here, never asserted in tests.
The helpers `sim_items` / `write_recording` are shared with the other bench scripts.
"""

from __future__ import annotations

import argparse
import dataclasses
import io
import os
import sys
import tempfile
import time
from collections.abc import Iterator
from contextlib import redirect_stdout
from pathlib import Path

TARGET = 25.0
_GSV = b"GSV,"


def _split_gsv(data: bytes) -> tuple[list[bytes], list[bytes]]:
    """(other sentences, GSV sentences) of one epoch's bytes, terminators kept."""
    other: list[bytes] = []
    gsv: list[bytes] = []
    for ln in data.splitlines(keepends=True):
        (gsv if ln[3:7] == _GSV else other).append(ln)
    return other, gsv


def sim_epochs(scenario: str = "rooftop", rate: int = 10, seconds: float = 300.0,
               systems: tuple[str, ...] | None = None, gsv_every_epoch: bool = True,
               seed: int = 1) -> Iterator[tuple[float, bytes]]:
    """(t, epoch bytes) from the simulator; with gsv_every_epoch the latest GSV set is repeated in
    every epoch (before ZDA/GST order does not matter to the state model: same time of fix)."""
    from livefix.sim.receiver import SimReceiver
    from livefix.sim.scenario import Scenario

    sc = Scenario.load(scenario)
    if systems is not None:
        sc = dataclasses.replace(sc, systems=tuple(systems))
    rx = SimReceiver(sc, rate_hz=rate, seed=seed)
    last_gsv: list[bytes] = []
    for t, data in rx.epochs(seconds):
        if gsv_every_epoch:
            other, gsv = _split_gsv(data)
            if gsv:
                last_gsv = gsv
            else:
                data = b"".join(other + last_gsv)
        yield t, data


def sim_items(start_wall: float = 1_778_574_600.0, **kw) -> Iterator:  # noqa: ANN003
    """Pipeline items (Chunk per epoch, STREAMING first) for sim_epochs(**kw)."""
    from livefix.sources.base import Chunk, Link, LinkEvent

    yield LinkEvent(0.0, start_wall, Link.STREAMING, "simulated receiver")
    for t, data in sim_epochs(**kw):
        yield Chunk(t, start_wall + t, data)


def write_recording(path: Path, **kw) -> tuple[int, int]:  # noqa: ANN003
    """Write a livefix recording of sim_epochs(**kw); returns (lines, bytes)."""
    from livefix.record.writer import Recorder
    from livefix.sources.base import Chunk, Link, LinkEvent

    start = 1_778_574_600.0
    rec = Recorder(path, source="sim:bench", notes="bench: GSV every epoch", start_wall=start)
    lines = nbytes = 0
    t = 0.0
    try:
        rec.write(LinkEvent(0.0, start, Link.STREAMING, "simulated receiver"))
        for t, data in sim_epochs(**kw):
            rec.write(Chunk(t, start + t, data))
            lines += data.count(b"\n")
            nbytes += len(data)
        rec.write(LinkEvent(t + 0.1, start + t + 0.1, Link.ENDED, "end of simulated run"))
    finally:
        rec.close()
    return lines, nbytes


def file_lines(path: Path) -> list[bytes]:
    """Every framed sentence of a recording, as the pipeline's framer sees them."""
    from livefix.framing import Framer
    from livefix.record.reader import RecordingReader
    from livefix.sources.base import Chunk

    fr = Framer()
    out: list[bytes] = []
    for it in RecordingReader(path).items():
        if type(it) is Chunk:
            out += fr.feed(it.data)
    return out + fr.finish()


def time_reference(lines: list[bytes]) -> float:
    """Seconds for pynmeagps NMEAReader.parse over all lines (errors count as parsed)."""
    from pynmeagps import NMEAReader

    parse = NMEAReader.parse
    t0 = time.thread_time()
    for ln in lines:
        try:
            parse(ln)
        except Exception:  # noqa: S112 - same work either way
            continue
    return time.thread_time() - t0


def report_json(path: Path) -> str:
    """Exactly `livefix report FILE --json`, in this process; returns the JSON text."""
    from livefix.report.command import add_arguments, run

    ap = argparse.ArgumentParser()
    add_arguments(ap)
    buf = io.StringIO()
    with redirect_stdout(buf):
        rc = run(ap.parse_args([str(path), "--json"]))
    if rc:
        raise RuntimeError(f"report exited {rc}")
    return buf.getvalue()


def time_report(path: Path) -> tuple[float, str]:
    t0 = time.thread_time()
    out = report_json(path)
    return time.thread_time() - t0, out


def machine() -> str:
    cpu = "?"
    try:
        for ln in Path("/proc/cpuinfo").read_text().splitlines():
            if ln.startswith("model name"):
                cpu = ln.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    return f"{os.cpu_count()} cpus, {os.uname().machine}, Python {sys.version.split()[0]}, {cpu}"


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--minutes", type=float, default=5.0, help="simulated length (default 5)")
    ap.add_argument("--rate", type=int, default=10, help="epochs per second (default 10)")
    ap.add_argument("--repeat", type=int, default=3, help="best of N (default 3)")
    ap.add_argument("--ref-lines", type=int, default=60000,
                    help="time pynmeagps on the first N lines of the file (default 60000; 0 = all)")
    ap.add_argument("--keep", metavar="DIR", help="write the recording here and keep it")
    a = ap.parse_args(argv)
    print(f"machine: {machine()}")
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(a.keep or tmp) / f"bench-replay-{a.rate}hz-{a.minutes:g}min.lfr"
        if path.exists():
            path.unlink()
        nlines, nbytes = write_recording(path, rate=a.rate, seconds=a.minutes * 60)
        lines = file_lines(path)
        ref_lines = lines[: a.ref_lines] if a.ref_lines else lines
        print(f"file: {nlines} lines, {nbytes} bytes, {a.minutes:g} min at {a.rate} Hz, GSV every epoch")
        best_ref = best_ours = float("inf")
        outs = set()
        for _ in range(a.repeat):
            best_ref = min(best_ref, time_reference(ref_lines) / len(ref_lines))
            dt, out = time_report(path)
            outs.add(out)
            best_ours = min(best_ours, dt / len(lines))
        ref, ours = 1 / best_ref, 1 / best_ours
    ratio = ours / ref
    print(f"pynmeagps parse            : {ref:12,.0f} lines/s ({len(ref_lines)} lines)")
    print(f"livefix report --json work : {ours:12,.0f} lines/s ({len(lines)} lines)")
    print(f"ratio                      : {ratio:8.1f}x")
    print(f"24 h at {a.rate} Hz ({a.rate * 86400 * len(lines) / max(1, a.rate * 60 * a.minutes):,.0f} "
          f"lines) would take about {a.rate * 86400 * len(lines) / max(1, a.rate * 60 * a.minutes) / ours:.0f} s")
    print(f"identical JSON over {a.repeat} runs: {'yes' if len(outs) == 1 else 'NO'}")
    print(f"RESULT | replay analysis vs pynmeagps parse | {ratio:.1f}x | >= {TARGET:.0f}x | "
          f"{'met' if ratio >= TARGET else 'NOT met'}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
