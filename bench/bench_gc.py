"""Does sparse garbage collection make a batch report faster? The same report with CPython's default
collector thresholds and with the sparse ones of livefix.batchgc (`batch_gc`, BATCH_GC_THRESHOLD), same
file, same run, interleaved; with --jobs 2, the CPU of the decoding process of a two-process run
(its analysis process always collects sparsely).

Measured 2026-12-04 (shared 2-core host, 60 min at 10 Hz, 687,320 lines, best of 4-5 runs):
default / sparse CPU 0.936x in two sessions (6.89 / 7.37 s and 8.02 / 8.56 s: the host's noise is
larger than any gain). The collector itself took 0.16-0.30 s of 8-10.6 s CPU with the defaults
(2-3 %), next to nothing sparse. So the most the tuning could save is about 3 %, below the 5 % that
would justify it, and livefix stopped tuning the collector.

Measured 2026-12-05, after the C cores took most of the rest of the work: the collector took 4 % of a
one-process report and 11-14 % of the decoding process of a two-process one, so batch runs collect
sparsely again (livefix.batchgc; tests/test_batchgc.py keeps the pipeline free of cycles while it runs).

Usage: python bench/bench_gc.py [--minutes 60] [--rate 10] [--repeat 3] [--jobs 1|2] [--keep DIR]
Builds a simulated recording (scenario rooftop, GSV every epoch, via bench_replay.write_recording),
then runs the report's work (read, frame, decode, state, every statistic, final snapshot) in a fresh
child process per run, alternating default / batch_gc, and takes the best CPU time of each. CPU time
of the child is less disturbed by other processes on a shared machine than wall time. Prints the
ratio default / batch_gc, and the CPU time spent inside the collector (gc.callbacks), which bounds
what sparse collection can save whatever the noise of the host. The target is the 5 % gain that
would justify the tuning.
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
TARGET = 1.05  # default time / batch_gc time: keep batch_gc only at a gain of 5 % or more
CHILD = """
import gc, json, sys, threading, time
from livefix.batchgc import BATCH_GC_THRESHOLD as SPARSE
from livefix.parallel import analyzer_for
from livefix.pipeline import Pipeline
from livefix.sources.file import FileSource
mode, path, split = sys.argv[1], sys.argv[2], sys.argv[3] == "2"
in_gc = [0.0, 0.0]  # CPU seconds inside the collector, start of the current collection
def on_gc(phase, info):
    if phase == "start":
        in_gc[1] = time.process_time()
    else:
        in_gc[0] += time.process_time() - in_gc[1]
gc.callbacks.append(on_gc)
def run():
    src = FileSource(path, speed=None)
    with analyzer_for(None, split) as analyzer:  # split: this process decodes, a second one analyses
        p = Pipeline(None, src.name, analyzer=analyzer)
        for item in src.items(threading.Event()):
            p.feed(item)
        src.close()
        p.finish()
        return json.dumps(p.snapshot().analysis, sort_keys=True, default=str)
t0 = time.process_time()
if mode == "batch":
    gc.set_threshold(*SPARSE)
out = run()
cpu = time.process_time() - t0
print(json.dumps({"cpu": cpu, "gc_cpu": in_gc[0], "collections": sum(s["collections"] for s in gc.get_stats()), "len": len(out),
                  "hash": hash(out)}))
"""


def child(mode: str, path: Path, jobs: str) -> dict:
    # run beside the recording, so the tree comes from the install or PYTHONPATH, not the current folder
    proc = subprocess.run([sys.executable, "-c", CHILD, mode, str(path), jobs], capture_output=True, text=True,
                          check=True, env={**os.environ, "PYTHONHASHSEED": "0"}, cwd=path.parent)
    return json.loads(proc.stdout.strip().splitlines()[-1])


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--minutes", type=float, default=60.0)
    ap.add_argument("--rate", type=int, default=10)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--jobs", choices=("1", "2"), default="1", help="2: the decoding process of a split run")
    ap.add_argument("--keep", type=Path, help="directory to keep (and reuse) the recording in")
    a = ap.parse_args(argv)
    sys.path.insert(0, str(HERE))
    from bench_replay import write_recording  # noqa: PLC0415  (bench helper beside this script)

    tmp = None
    folder = a.keep
    if folder is None:
        tmp = tempfile.TemporaryDirectory()
        folder = Path(tmp.name)
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / f"gc-{a.minutes:g}min-{a.rate}hz.lfr"
    if not path.exists():
        lines, nbytes = write_recording(path, rate=a.rate, seconds=a.minutes * 60.0)
        print(f"built {path.name}: {lines} lines, {nbytes / 1e6:.1f} MB", flush=True)
    best: dict[str, float] = {}
    in_gc: dict[str, float] = {}  # CPU inside the collector (gc.callbacks): what sparse collection can save
    seen: dict[str, tuple[int, int]] = {}
    for i in range(a.repeat):
        for mode in ("default", "batch") if i % 2 == 0 else ("batch", "default"):
            r = child(mode, path, a.jobs)
            print(f"run {i + 1} {mode:7s}: {r['cpu']:.2f} s CPU, {r['collections']} collections taking "
                  f"{r['gc_cpu']:.3f} s", flush=True)
            best[mode] = min(best.get(mode, float("inf")), r["cpu"])
            in_gc[mode] = min(in_gc.get(mode, float("inf")), r["gc_cpu"])
            seen.setdefault(mode, (r["len"], r["hash"]))
    same = seen["default"] == seen["batch"]
    ratio = best["default"] / best["batch"]
    print(f"best CPU: default {best['default']:.2f} s, batch_gc {best['batch']:.2f} s; "
          f"identical snapshot: {same}")
    print(f"inside the collector: default {in_gc['default']:.3f} s ({in_gc['default'] / best['default']:.1%}), "
          f"batch_gc {in_gc['batch']:.3f} s: the most sparse collection could save")
    print(f"RESULT | gc: default / batch_gc CPU, {a.minutes:g} min at {a.rate} Hz, --jobs {a.jobs} | {ratio:.3f}x | "
          f">= {TARGET:.2f}x | {'met' if ratio >= TARGET else 'NOT met'}")
    if tmp is not None:
        tmp.cleanup()
    return 0 if same else 1


if __name__ == "__main__":
    raise SystemExit(main())
