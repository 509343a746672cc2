"""Running the real `livefix` command line and the real simulator in subprocesses for check tests."""

from __future__ import annotations

import os
import re
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
RECORDINGS = ROOT / "recordings"


def livefix(*args: str, timeout: float = 90, **kw) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "livefix", *args], capture_output=True, text=True, cwd=ROOT,
                          timeout=timeout, env={**os.environ, "PYTHONUNBUFFERED": "1"}, **kw)


def popen(*args: str) -> subprocess.Popen:
    return subprocess.Popen([sys.executable, "-m", "livefix", *args], stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, cwd=ROOT,
                            env={**os.environ, "PYTHONUNBUFFERED": "1"})


def start_sim(scenario: str, *extra: str) -> tuple[subprocess.Popen, str]:
    """`livefix simulate SCENARIO --serve 127.0.0.1:0` (or --pty); returns the process and its address."""
    mode = list(extra) or ["--serve", "127.0.0.1:0"]
    proc = popen("simulate", scenario, *mode)
    line = proc.stdout.readline()
    m = re.search(r"(tcp://127\.0\.0\.1:\d+|/dev/\S+)", line)
    if not m:
        proc.kill()
        raise RuntimeError(f"simulator did not start: {line!r} {proc.stderr.read()[-500:]}")
    return proc, m.group(1)


def stop(proc: subprocess.Popen) -> None:
    if proc.poll() is None:
        proc.terminate()
        try:
            proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            proc.kill()
            proc.wait(timeout=10)
