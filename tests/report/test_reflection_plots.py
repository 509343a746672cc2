"""Figures of the reflection section (livefix.report.reflection_plots): the periodogram and the arc map.

The stream is the hand-built NMEA of tests/analysis/test_reflection_arcs.py: satellite 5 rising at
azimuth ~100-108° and satellite 12 setting at ~200-194°, both with C/N0 off a plane 2.0 m below the
antenna (two-ray model; H = f·λ/2, the GNSS-IR software paper, GPS Solutions 22:80 (2018)).
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET

import numpy as np
import pytest

from livefix.report.reflection_plots import arc_map_svg, periodogram_svg
from tests.analysis.test_reflection_arcs import run, stream

SVG = "{http://www.w3.org/2000/svg}"


@pytest.fixture(scope="module")
def refl() -> dict:
    r, analyzer = run(stream(2300))
    assert analyzer.internal_errors == 0
    return r


def texts(svg: str) -> str:
    root = ET.fromstring(svg)  # well-formed XML, or this raises
    assert root.tag == SVG + "svg"
    return " ".join("".join(t.itertext()) for t in root.iter(SVG + "text"))


def test_snapshot_keeps_a_bounded_periodogram_whose_peak_is_the_fixture_height(refl: dict) -> None:
    pg = refl["periodogram"]
    assert pg["arcs"] == 2 and len(pg["curves"]) == 2  # the fixture's two arcs
    hs = pg["h_from"] + pg["h_step"] * np.arange(len(pg["mean"]))
    assert hs[-1] == pytest.approx(refl["config"]["h_max_m"], abs=pg["h_step"])  # the searched range
    assert hs[int(np.argmax(pg["mean"]))] == pytest.approx(2.0, abs=pg["h_step"])  # fixture's H, one grid step
    # the fixture's amplitude ratio a = 0.2 (tests/analysis/test_reflection_arcs.py); the peak of a
    # detrended sinusoid on a coarse grid lies somewhat under it and well over the acceptance threshold
    assert pg["min_amplitude"] < max(pg["mean"]) <= 0.25


def test_periodogram_figure_marks_the_peak_and_has_a_legend(refl: dict) -> None:
    svg = periodogram_svg(refl)
    words = texts(svg)
    m = re.search(r"H = (\d+\.\d+) m", words)
    assert m and float(m.group(1)) == pytest.approx(2.0, abs=0.03)  # the fixture's H
    assert "mean of 2 accepted arcs" in words and "acceptance threshold" in words
    assert "reflector height" in words and "amplitude" in words  # axis labels
    assert "G05" in words and "G12" in words  # the arcs' own curves in the legend


def test_arc_map_is_polar_with_sectors_labelled(refl: dict) -> None:
    words = texts(arc_map_svg(refl))
    for c in ("N", "E", "S", "W"):  # compass labels of the polar axis
        assert re.search(rf"(^| ){c}( |$)", words), c
    assert words.count("1 arc?") == 2  # two sectors of one arc each, tentative (< min_arcs_sector)
    assert "reflector height H (m)" in words  # colour bar
    assert "2.0" in words or "1.9" in words  # sector median heights near the fixture's 2.0 m


@pytest.mark.parametrize("refl", [None, {}, {"periodogram": {"mean": []}, "recent": []},
                                  {"periodogram": {"mean": [0.1], "h_from": "x"}, "recent": [{"accepted": False}]}])
def test_no_data_gives_a_one_line_note(refl: dict | None) -> None:
    for fn in (periodogram_svg, arc_map_svg):
        out = fn(refl)
        assert isinstance(out, str) and not out.startswith("<svg") and "\n" not in out and out
