"""A write error while recording (file-size limit via RLIMIT_FSIZE, SIGXFSZ ignored, in a real
subprocess): the session says so clearly, logs an event, keeps monitoring to the end of the
stream, and what was already written reads back intact."""

from __future__ import annotations

import json
import subprocess
from pathlib import Path

from relkit import ENV, PY, ROOT

from livefix.record.reader import RecordingReader
from livefix.sources.base import Chunk
from livefix.sources.sim import SimSource

LIMIT = 40_000
CHILD = r"""
import json, resource, signal, sys
from livefix.session import Session
from livefix.sources.sim import SimSource
signal.signal(signal.SIGXFSZ, signal.SIG_IGN)          # EFBIG from write() instead of a kill
resource.setrlimit(resource.RLIMIT_FSIZE, (int(sys.argv[2]), int(sys.argv[2])))
src = SimSource("rooftop", rate_hz=20, speed=None, seed=4, duration=60)   # as fast as possible
s = Session(src, record_path=sys.argv[1], publish_hz=50).start()
ok = s.wait(60)
s.stop()
snap = s.latest
print(json.dumps({"done": ok, "recording_error": snap.recording_error, "error": snap.error,
                  "bytes": snap.counters.bytes, "decoded": snap.counters.decoded,
                  "events": [e for e in snap.analysis["events"] if e["kind"] == "recording"]}))
"""


def test_file_size_limit_stops_recording_not_monitoring(tmp_path: Path) -> None:
    path = tmp_path / "full.lfr"
    out = subprocess.run([PY, "-c", CHILD, str(path), str(LIMIT)], capture_output=True, text=True,
                         timeout=90, cwd=str(ROOT), env=ENV)
    assert out.returncode == 0, out.stderr
    res = json.loads(out.stdout.strip().splitlines()[-1])
    # the whole stream, computed here without any recording, for comparison
    full = [it for it in SimSource("rooftop", rate_hz=20, speed=None, seed=4, duration=60).items(__import__(
        "threading").Event()) if type(it) is Chunk]
    total = sum(len(c.data) for c in full)
    assert res["done"] and res["error"] is None
    assert res["bytes"] == total  # monitoring went on to the end: every byte analysed
    assert res["recording_error"] and "too large" in res["recording_error"]
    assert any("recording stopped" in e["text"] or "fail" in e["text"].lower() for e in res["events"]), res
    assert path.stat().st_size <= LIMIT
    r = RecordingReader(path)
    got = [it for it in r.items() if type(it) is Chunk]
    assert 0 < len(got) < len(full)
    assert got == full[: len(got)]  # what was written is intact, in order
