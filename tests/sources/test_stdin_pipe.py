"""stdin source through a real pipe to a subprocess: raw bytes untouched, ENDED at EOF."""

from __future__ import annotations

import json
import os
import subprocess
import sys

CHILD = r"""
import json, sys, threading
from livefix.sources import open_source
from livefix.sources.base import Chunk
src = open_source("-")
data, states = b"", []
for it in src.items(threading.Event()):
    if type(it) is Chunk:
        data += it.data
    else:
        states.append([it.state, it.detail])
print(json.dumps({"hex": data.hex(), "states": states}))
"""


def test_stdin_pipe_keeps_every_byte_and_ends() -> None:
    payload = bytes(range(256)) + b"$GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,*47\r\n"
    out = subprocess.run([sys.executable, "-c", CHILD], input=payload * 50, capture_output=True,
                         timeout=30, cwd=os.getcwd())
    assert out.returncode == 0, out.stderr
    res = json.loads(out.stdout)
    assert bytes.fromhex(res["hex"]) == payload * 50
    assert res["states"][0][0] == "streaming"
    assert res["states"][-1][0] == "ended" and str(len(payload) * 50) in res["states"][-1][1]


def test_stdin_write_refused() -> None:
    import pytest

    from livefix.sources import SourceError
    from livefix.sources.stdin import StdinSource

    with pytest.raises(SourceError):
        StdinSource().write(b"x")
