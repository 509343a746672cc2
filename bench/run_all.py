"""Run every benchmark and print one line per target: figure, target, met or not.

Each bench script prints lines of the form `RESULT | name | figure | target | met|NOT met`;
this runner collects them. Benchmarks are never run as tests.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
SCRIPTS = ["bench_decode.py", "bench_replay.py", "bench_native.py", "bench_day.py", "bench_memory.py", "bench_startup.py",
           "bench_scaling.py", "bench_ui.py", "bench_load.py", "bench_gc.py"]


def main() -> int:
    rows: list[str] = []
    for name in SCRIPTS:
        path = HERE / name
        if not path.exists():
            rows.append(f"{name}: missing")
            continue
        print(f"== {name}", flush=True)
        proc = subprocess.run([sys.executable, str(path)], capture_output=True, text=True, timeout=1800)
        sys.stdout.write(proc.stdout)
        if proc.returncode:
            sys.stdout.write(proc.stderr[-2000:])
        rows += [ln.split("|", 1)[1].strip() for ln in proc.stdout.splitlines() if ln.startswith("RESULT")]
    print("\n== summary (figure | target | met)")
    for r in rows:
        print(r)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
