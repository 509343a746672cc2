"""The reflection section of the reports: JSON carries analysis.reflection, Markdown shows it.

The stream is the hand-built NMEA of tests/analysis/test_reflection_arcs.py: two arcs off a plane
2.0 m below the antenna (two-ray model; H = f·λ/2, the GNSS-IR software paper, GPS Solutions 22:80 (2018)).
"""

from __future__ import annotations

import json

import pytest

from livefix.report.document import ReceiverRun, build_report, to_json
from livefix.report.markdown import render_markdown
from livefix.report.reflection_md import reflection_section
from tests.analysis.test_reflection_arcs import run, stream


@pytest.fixture(scope="module")
def report() -> dict:
    refl, analyzer = run(stream(2300))
    assert analyzer.internal_errors == 0
    analysis = {"reflection": refl}
    return json.loads(to_json(build_report([ReceiverRun("rx1", "fixture.nmea", analysis)])))


def test_json_has_the_reflection_object(report: dict) -> None:
    refl = report["receivers"][0]["analysis"]["reflection"]
    assert refl["height_m"] == pytest.approx(2.0, abs=0.03)  # the fixture's H
    assert refl["arcs"] == 2
    assert {(s["az_from"], s["az_to"]) for s in refl["sectors"]} == {(90.0, 120.0), (180.0, 210.0)}


def test_markdown_shows_height_sectors_fresnel_and_thresholds(report: dict) -> None:
    md = render_markdown(report)
    assert "### Reflections (GNSS-IR)" in md
    assert "2 m below the antenna" in md or "2.0 m below the antenna" in md
    assert "| 90-120 deg | 1 (tentative) |" in md
    assert "| 5 deg |" in md and "| 15 deg |" in md  # Fresnel zone rows
    assert "collecting" not in md or "tentative" in md


def test_section_escapes_text_and_is_empty_without_data() -> None:
    assert reflection_section(None) == []
    lines = reflection_section({"advice": "<b>x</b> *y*", "arcs": 0, "sectors": [], "fresnel": []})
    assert "<b>" not in "\n".join(lines)


def test_section_says_none_found_with_the_detection_floor() -> None:
    # no accepted arc among enough evaluated ones: multipath 0 and the floor 20·log10(1.025/0.975)
    # = 0.43 dB for the default min_amplitude 0.025 (hand arithmetic)
    from livefix.analysis.reflection import ReflectionConfig, mp_db

    assert round(mp_db(ReflectionConfig().min_amplitude), 2) == 0.43
    md = "\n".join(reflection_section({"status": "none found", "advice": "no reflecting surface found", "mp_db": 0.0,
                                       "mp_floor_db": 0.43, "arcs_evaluated": 7, "arcs": 0, "sectors": [],
                                       "fresnel": []}))
    assert "no arc of 7 showed an oscillation above the detection floor of 0.43 dB" in md
    assert "Reflector height" not in md
