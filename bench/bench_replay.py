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
Then, on a longer file (--split-minutes, default 30), the wall time of the whole command
`livefix report FILE --json` as a new process with `--jobs 1` and `--jobs 2` (analysis in a second
process), interleaved, best of N, with the front's pickling cost and the extrapolated 24 h time.
Wall time is what the user waits for; on a shared machine another busy process makes it noisy.
"""

from __future__ import annotations

import argparse
import dataclasses
import io
import os
import resource
import subprocess
import sys
import tempfile
import time
from collections.abc import Iterator
from contextlib import redirect_stdout
from pathlib import Path

TARGET = 25.0
SPLIT_TARGET = 1.2  # 2 processes vs 1, wall time of the whole command
DAY_TARGET_S = 120.0  # a 24 h 10 Hz recording reported within two minutes
ROOT = Path(__file__).resolve().parents[1]
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
    from livefix.commands.report import add_arguments, run

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


def time_command(path: Path, jobs: str) -> tuple[float, float, bytes]:
    """(wall s, CPU s of it and its children, stdout) of `livefix report FILE --json --jobs N`."""
    r0 = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    out = subprocess.run([sys.executable, "-m", "livefix", "report", str(path), "--json", "--jobs", jobs],
                         cwd=ROOT, capture_output=True, check=True, timeout=1800).stdout
    wall = time.perf_counter() - t0
    r1 = resource.getrusage(resource.RUSAGE_CHILDREN)
    return wall, (r1.ru_utime + r1.ru_stime) - (r0.ru_utime + r0.ru_stime), out


def pickling_cost(path: Path) -> tuple[float, float, int]:
    """(front CPU s encoding + pickling, front CPU s in all, bytes sent) of a 2-process run here. With
    the packed wire's sink the packing happens in the calls themselves: only the batches' take and
    pickling are counted then."""
    import threading

    from livefix.parallel import AnalysisProcess
    from livefix.pipeline import Pipeline
    from livefix.sources import open_source

    src = open_source(str(path), speed=None)
    t0 = time.thread_time()
    with AnalysisProcess() as proxy:
        p = Pipeline(source=src.name, analyzer=proxy)
        for it in src.items(threading.Event()):
            p.feed(it)
        p.finish()
        p.snapshot()
    return proxy.pickle_s, time.thread_time() - t0, proxy.sent_bytes


def split_figures(minutes: float, rate: int, repeat: int) -> None:
    """1 vs 2 processes, whole command, wall time; prints the figures and RESULT lines."""
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / f"bench-split-{rate}hz-{minutes:g}min.lfr"
        nlines, nbytes = write_recording(path, rate=rate, seconds=minutes * 60)
        print(f"split file: {nlines} lines, {nbytes} bytes, {minutes:g} min at {rate} Hz, GSV every epoch")
        tiny = Path(tmp) / "bench-split-startup.lfr"
        write_recording(tiny, rate=rate, seconds=2.0)
        best = {"1": (float("inf"), 0.0), "2": (float("inf"), 0.0)}
        start = float("inf")
        outs: set[bytes] = set()
        for _ in range(repeat):
            start = min(start, time_command(tiny, "1")[0])
            for jobs in ("1", "2"):
                wall, cpu, out = time_command(path, jobs)
                outs.add(out)
                best[jobs] = min(best[jobs], (wall, cpu))
        pick, front, sent = pickling_cost(path)
    day = 86400 / (minutes * 60)  # 24 h = this many files of this length
    print(f"command start-up (2 s file, 1 process): {start:.2f} s wall, counted once in the 24 h figures")
    for jobs, label in (("1", "1 process  "), ("2", "2 processes")):
        wall, cpu = best[jobs]
        print(f"report --json, {label}: {wall:6.2f} s wall, {cpu:6.2f} s CPU, {(wall - start) * 1e6 / nlines:5.2f} "
              f"us/line wall; 24 h at {rate} Hz ({nlines * day:,.0f} lines) about {start + (wall - start) * day:.0f} s")
    print(f"front pickling (encode or take + dumps): {pick:.2f} s of {front:.2f} s front CPU = "
          f"{pick * 1e6 / nlines:.2f} us/line; {sent / 1e6:.1f} MB sent ({sent / nlines:.0f} B/line)")
    print(f"identical JSON 1 vs 2 processes: {'yes' if len(outs) == 1 else 'NO'}")
    ratio = best["1"][0] / best["2"][0]
    day_s = start + (best["2"][0] - start) * day
    print(f"RESULT | report --json wall, 2 processes vs 1 ({minutes:g} min, {rate} Hz) | {ratio:.2f}x | "
          f">= {SPLIT_TARGET:g}x | {'met' if ratio >= SPLIT_TARGET and len(outs) == 1 else 'NOT met'}")
    print(f"RESULT | report --json 24 h at {rate} Hz, 2 processes (extrapolated wall) | {day_s:.0f} s | "
          f"<= {DAY_TARGET_S:.0f} s | {'met' if day_s <= DAY_TARGET_S else 'NOT met'}")


def as_installed() -> str:
    """Compile livefix's bytecode, as `pip install` does for an installed package, and say so.

    Why: the timed commands include start-up, and an editable checkout run with
    PYTHONDONTWRITEBYTECODE=1 (as on some hosts) recompiles every module at every start (about 0.15 s),
    which an installed copy never does. Python checks each cached file against its source, so a
    stale one is never used."""
    import compileall

    ok = compileall.compile_dir(str(ROOT / "livefix"), quiet=1)
    return "start-up as installed: livefix bytecode compiled" + ("" if ok else " (some files failed)")


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
    ap.add_argument("--split-minutes", type=float, default=30.0,
                    help="length of the file for the 1 vs 2 processes wall-time figure (default 30; 0 = skip)")
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
    if a.split_minutes > 0:
        split_figures(a.split_minutes, a.rate, a.repeat)
    return 0


if __name__ == "__main__":
    sys.exit(main())
