"""A plain NMEA log of a recording says what the recording says (issue 13, "Done when").

A livefix recording carries host times; its plain-log export is the very same bytes without them,
so livefix must read the receiver's own clock out of the sentences. For every built-in scenario,
`livefix report` of the demo recording and of its plain export must give the same epochs,
duration, TTFF, outages and scatter. The recording is the reference, and it is itself checked
against the scenario script (its TTFF and outage times), so the comparison is not circular.
"""

from __future__ import annotations

import threading
from pathlib import Path
from typing import Any

import pytest

from livefix.analysis.config import AnalysisConfig
from livefix.commands.make_recordings import DEFAULT_DIR, RECORDINGS
from livefix.commands.simulate import write_file
from livefix.pipeline import Pipeline
from livefix.record.reader import RecordingReader
from livefix.sim import Scenario, SimReceiver, list_scenarios
from livefix.sources import Chunk, open_source


def _recording_of(scenario: str, tmp_path: Path) -> tuple[Path, float, int]:
    """(path, seconds, rate): the demo recording of this scenario, else one made like them."""
    for name, (scen, secs, rate, _seed) in RECORDINGS.items():
        if scen == scenario and (DEFAULT_DIR / name).is_file():
            return DEFAULT_DIR / name, secs, rate
    path = tmp_path / f"{scenario}.lfr"
    write_file(SimReceiver(Scenario.load(scenario), rate_hz=10, seed=1), path, 300.0)
    return path, 300.0, 10


def _export(rec: Path, out: Path) -> Path:
    """Plain-log export: the received bytes in order, nothing else."""
    with open(out, "wb") as f:
        for item in RecordingReader(rec).items():
            if isinstance(item, Chunk):
                f.write(item.data)
    return out


def _report(path: Path) -> dict[str, Any]:
    """What `livefix report PATH --json` prints (single process)."""
    src = open_source(str(path), speed=None)
    p = Pipeline(AnalysisConfig(), src.name)
    for item in src.items(threading.Event()):
        p.feed(item)
    p.finish()
    a = p.snapshot().analysis
    assert a["internal_errors"] == 0, a.get("last_error")
    return a


def _figures(a: dict[str, Any]) -> dict[str, Any]:
    fx, pos = a["fix"], a["position"]
    return {
        "epochs": a["stream"]["epochs"],
        "duration_s": a["stream"]["duration_s"],
        "ttff_s": fx["ttff_s"],
        "starts": [(s.get("start"), s.get("ttff_s")) for s in fx.get("starts", [])],
        "outages": [(o["start"], o["duration_s"]) for o in fx["outages"]],
        "scatter": {k: (v.get("n"), v.get("cep50_m"), v.get("cep95_m"), v.get("v95_m"))
                    for k, v in (pos.get("by_fix") or {}).items()},
    }


@pytest.mark.parametrize("scenario", list_scenarios())
def test_plain_export_reports_like_the_recording(scenario: str, tmp_path: Path) -> None:
    rec, secs, rate = _recording_of(scenario, tmp_path)
    ref = _figures(_report(rec))
    got = _figures(_report(_export(rec, tmp_path / f"{scenario}.nmea")))
    sc = Scenario.load(scenario)
    # the reference against the script: first fix at ttff_s after the start (scenario TOML)
    assert ref["starts"][0][1] == pytest.approx(sc.ttff_s, abs=1.0 / rate)
    # one epoch per 1/rate s outside stalls; the scripted checksum burst may take every timed
    # sentence of a few epochs (soak: 30 % of lines for 10 s), hence 1 %
    expected = (secs - sum(f.duration for f in sc.faults if f.kind == "stall")) * rate
    assert ref["epochs"] == pytest.approx(expected, rel=0.01)
    assert got["epochs"] == ref["epochs"]
    assert got["duration_s"] == pytest.approx(ref["duration_s"], abs=1.0 / rate)
    assert got["ttff_s"] == pytest.approx(ref["ttff_s"], abs=1e-6)
    assert got["starts"] == ref["starts"]
    assert got["outages"] == ref["outages"]
    assert got["scatter"] == ref["scatter"]
