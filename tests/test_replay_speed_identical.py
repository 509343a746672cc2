"""Analysis is a pure function of the time-stamped stream: replaying one recording as fast as
possible, at real time through the threaded Session, and through the report path gives identical
JSON (the promise in DEVELOPERS.md: every time the analysis uses comes from the recorded stamps)."""

from __future__ import annotations

import json
from pathlib import Path

from livefix.pipeline import run_items
from livefix.record.reader import RecordingReader
from livefix.record.writer import Recorder
from livefix.session import Session
from livefix.sources.base import Chunk
from livefix.sources.file import FileSource

DEMO = Path(__file__).resolve().parents[1] / "recordings" / "rooftop-5min.lfr"


def _slice(tmp_path: Path, start_s: float, length_s: float) -> Path:
    """Cut a few seconds (after the first fix) out of the demo recording into a new recording."""
    out = tmp_path / "slice.lfr"
    reader = RecordingReader(str(DEMO))
    rec = Recorder(str(out), source="slice of " + DEMO.name, notes="replay-speed test")
    t0 = None
    for it in reader.items():
        if type(it) is not Chunk:
            continue
        t0 = it.mono if t0 is None else t0
        if start_s <= it.mono - t0 < start_s + length_s:
            rec.write(it)
    rec.close()
    return out


def _session_json(path: Path, speed: float | None) -> str:
    s = Session(FileSource(str(path), speed=speed), publish_hz=5.0).start()
    assert s.wait(60), "finite replay did not finish"
    s.stop()
    snap = s.latest
    assert snap is not None and snap.finished
    return json.dumps(snap.analysis, sort_keys=True)


def test_replay_max_speed_and_real_time_give_identical_json(tmp_path: Path) -> None:
    path = _slice(tmp_path, start_s=60.0, length_s=6.0)
    fast = _session_json(path, None)
    real = _session_json(path, 1.0)  # about 6 s of wall time, paced by the recorded stamps
    pipe = run_items(RecordingReader(str(path)).items(), source=str(path))
    direct = json.dumps(pipe.analyzer.snapshot(pipe.counters()), sort_keys=True)
    assert json.loads(fast)["stream"]["epochs"] >= 50
    assert fast == real
    # the report path (no threads, no file source's own end event) sees the same epochs and fixes
    d, f = json.loads(direct), json.loads(fast)
    assert d["position"] == f["position"]
    assert d["fix"]["availability"] == f["fix"]["availability"]
