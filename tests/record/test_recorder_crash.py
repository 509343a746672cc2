"""Crash safety: a recorder killed with SIGKILL leaves everything flushed up to about a second
before; a file-size limit (EFBIG) stops the recording cleanly and keeps what was written."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time

import pytest

from livefix.record.reader import RecordingReader
from livefix.sources.base import Chunk

CHILD = r"""
import sys, time
from livefix.record.writer import Recorder
from livefix.sources.base import Chunk
rec = Recorder(sys.argv[1], source="crash-test", compress=sys.argv[2] or None)
for i in range(200):
    rec.write(Chunk(float(i), 1.7e9 + i, b"$GPTXT,%03d*00\r\n" % i))
print("written", flush=True)
time.sleep(60)   # never closes: killed with SIGKILL while idle
"""


@pytest.mark.parametrize("compress", ["", "gzip"])
def test_sigkill_loses_nothing_older_than_a_flush(tmp_path, compress: str) -> None:
    path = tmp_path / ("k.lfr.gz" if compress else "k.lfr")
    child = subprocess.Popen([sys.executable, "-c", CHILD, str(path), compress], stdout=subprocess.PIPE,
                             text=True, cwd=os.getcwd())
    try:
        assert child.stdout.readline().strip() == "written"
        # wait for the flusher (every 0.5 s) to push the tail: poll the file, bounded
        for _ in range(100):
            if sum(1 for _ in RecordingReader(path).items()) == 200:
                break
            time.sleep(0.05)
    finally:
        child.send_signal(signal.SIGKILL)
        child.wait(10)
    r = RecordingReader(path)
    got = list(r.items())
    assert got == [Chunk(float(i), 1.7e9 + i, b"$GPTXT,%03d*00\r\n" % i) for i in range(200)]
    assert r.damage is None and not r.clean  # no end record: the recorder did not close


EFBIG_CHILD = r"""
import resource, signal, sys
from livefix.record.writer import Recorder
from livefix.sources.base import Chunk
signal.signal(signal.SIGXFSZ, signal.SIG_IGN)   # get EFBIG from write() instead of a signal
resource.setrlimit(resource.RLIMIT_FSIZE, (20000, 20000))
rec = Recorder(sys.argv[1])
for i in range(1000):
    rec.write(Chunk(float(i), 1.7e9 + i, b"x" * 90 + b"\r\n"))
    if i % 50 == 0:
        rec.flush()
rec.close()
print(rec.error)
"""


def test_file_too_large_stops_recording_and_keeps_the_rest(tmp_path) -> None:
    path = tmp_path / "big.lfr"
    out = subprocess.run([sys.executable, "-c", EFBIG_CHILD, str(path)], capture_output=True, text=True,
                         timeout=30, cwd=os.getcwd())
    assert out.returncode == 0, out.stderr
    assert out.stdout.startswith("recording stopped:") and "too large" in out.stdout
    assert path.stat().st_size <= 20000
    r = RecordingReader(path)
    got = list(r.items())
    assert 100 < len(got) < 1000
    assert got == [Chunk(float(i), 1.7e9 + i, b"x" * 90 + b"\r\n") for i in range(len(got))]
