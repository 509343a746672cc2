"""A profile limit on multipath amplitude (reflection.mp_db), end to end: the simulator writes a
session from a rooftop scenario file, `livefix check` judges it.

Truth: the rooftop scenario's roof plane (livefix/sim/scenarios/rooftop.toml) with its amplitude
raised to a = 0.3 gives 20·log10((1+a)/(1−a)) = 5.4 dB peak to peak at the horizon (two-ray model,
the GNSS-IR software paper, GPS Solutions 22:80 (2018); hand arithmetic), tapered by the antenna
model's (1 − sin e), so 3.0–4.9 dB over a 5–25° arc: over a 2 dB limit. Without the reflector
no arc shows an oscillation, the figure is 0 and the same limit passes.
"""

from __future__ import annotations

import json
import math
import re
from pathlib import Path
from types import SimpleNamespace

import pytest
from check_helpers import ROOT

from livefix.cli import main

SCENARIO = ROOT / "livefix" / "sim" / "scenarios" / "rooftop.toml"
LIMIT_DB = 2.0
PROFILE = f"""
[profile]
name = "multipath"
title = "Multipath below the antenna"

[[threshold]]
name = "multipath_amplitude"
metric = "reflection.mp_db"
op = "<="
limit = {LIMIT_DB}
unit = "dB"
description = "Median peak-to-peak C/N0 swing of the reflections found"
source = "common practice"
"""
HEIGHT = """
[[threshold]]
name = "reflector_height"
metric = "reflection.height_m"
op = ">="
limit = 0
unit = "m"
description = "Reflector height (informational: any height found passes)"
source = "common practice"
"""


@pytest.fixture
def livefix(capsys):  # noqa: ANN001, ANN201
    """The real command line, in this process (the console script's code path)."""
    def run(*args: str) -> SimpleNamespace:
        code = main(list(args))
        out = capsys.readouterr()
        return SimpleNamespace(returncode=code, stdout=out.out, stderr=out.err)
    return run


def session(tmp: Path, livefix, amplitude: float | None) -> Path:  # noqa: ANN001
    """One simulated hour at 1 Hz of the rooftop scenario (GPS, Galileo, BeiDou: GLONASS carries no
    known carrier in NMEA), with the roof plane's amplitude set, or without the roof plane."""
    text = SCENARIO.read_text().replace('systems = ["G", "R", "E", "C"]', 'systems = ["G", "E", "C"]')
    if amplitude is None:
        text = text.split("[[reflector]]")[0]
    else:
        text = re.sub(r"(?m)^amplitude = [0-9.]+", f"amplitude = {amplitude}", text)
    scen = tmp / "site.toml"
    scen.write_text(text)
    out = tmp / "session.nmea"
    r = livefix("simulate", str(scen), "--duration", "1h", "--rate", "1", "-o", str(out))
    assert r.returncode == 0, r.stdout + r.stderr
    return out


def check(tmp: Path, livefix, nmea: Path, height: bool) -> tuple[int, dict, dict]:  # noqa: ANN001
    prof = tmp / "multipath.toml"
    prof.write_text(PROFILE + (HEIGHT if height else ""))
    rep = tmp / "report"
    r = livefix("check", str(nmea), "--profile", str(prof), "--report", str(rep))
    doc = json.loads((rep / "report.json").read_text())
    rx = doc["receivers"][0]
    assert rx["analysis"]["internal_errors"] == 0
    return r.returncode, {x["name"]: x for x in rx["results"]}, rx["analysis"]["reflection"]


def test_multipath_limit_fails_with_a_strong_reflector(tmp_path: Path, livefix) -> None:  # noqa: ANN001
    rc, res, refl = check(tmp_path, livefix, session(tmp_path, livefix, amplitude=0.3), height=True)
    mp = res["multipath_amplitude"]
    assert rc == 1 and not mp["passed"]
    # a = 0.3 at the horizon, times (1 − sin e) for e = 5..25° (the simulator's antenna taper):
    # 20·log10((1+a)/(1−a)) between 3.0 dB (25°) and 4.9 dB (5°) (hand arithmetic)
    lo, hi = (20 * math.log10((1 + a) / (1 - a)) for a in (0.3 * (1 - math.sin(math.radians(e))) for e in (25, 5)))
    assert lo - 0.3 < mp["measured"] < hi + 0.3 and mp["measured"] == refl["mp_db"]
    height = res["reflector_height"]
    assert height["passed"] and height["measured"] == pytest.approx(1.8, abs=0.05)  # rooftop.toml's roof plane


def test_multipath_limit_passes_without_a_reflector(tmp_path: Path, livefix) -> None:  # noqa: ANN001
    nmea = session(tmp_path, livefix, amplitude=None)
    rc, res, refl = check(tmp_path, livefix, nmea, height=False)
    mp = res["multipath_amplitude"]
    assert refl["status"] == "none found" and refl["arcs"] == 0 and refl["arcs_evaluated"] >= 3
    assert mp["passed"] and mp["measured"] == 0.0 and rc == 0  # arcs looked, none showed a reflection
    # a limit on the height, where nothing reflects, is not measured: a check that could not look fails
    rc, res, _ = check(tmp_path, livefix, nmea, height=True)
    assert rc == 1 and not res["reflector_height"]["passed"] and "not measured" in res["reflector_height"]["note"]
