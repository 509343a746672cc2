"""The spot comparison (livefix/report/compare.py): the residual and obstruction arithmetic on tiny
hand-made snapshots, the decisions with their tolerances, and the built-in scenarios (clear rooftop
against a post beside a wall) compared in both argument orders."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import pytest

from livefix.analysis.sky import N_AZ, N_EL
from livefix.commands.compare import load
from livefix.report.compare import CompareRules, Session, band_residuals, compare, decide, expected_cn0

ROOT = Path(__file__).resolve().parents[2]
ROOFTOP = ROOT / "recordings" / "rooftop-5min.lfr"
BUILDING = ROOT / "recordings" / "building-5min.lfr"
FLAT = CompareRules(cn0_5deg_dbhz=40.0, cn0_zenith_dbhz=40.0)  # a flat curve: residual = C/N0 - 40 by hand


def snapshot(cells: dict[tuple[int, int], tuple[int, int, float | None]], duration_s: float = 600.0) -> dict[str, Any]:
    """A minimal analysis snapshot: sky grid cells (elevation row of 5°, azimuth column of 10°) ->
    (tracked samples, untracked samples, mean C/N0), as analysis/sky.py writes them."""
    tr = [[0] * N_AZ for _ in range(N_EL)]
    un = [[0] * N_AZ for _ in range(N_EL)]
    cn: list[list[float | None]] = [[None] * N_AZ for _ in range(N_EL)]
    for (r, j), (t, u, c) in cells.items():
        tr[r][j], un[r][j], cn[r][j] = t, u, c
    return {"stream": {"duration_s": duration_s, "epochs": 600, "rate_hz": 1.0},
            "sky": {"grid": {"az_step": 10, "el_step": 5, "tracked": tr, "untracked": un, "cn0": cn},
                    "obstructed": [], "visible_share": None},
            "signal": {"weak_sectors": []}, "fix": {"fix_share_after_first_fix": 1.0},
            "position": {"by_fix": {"rtk_fixed": {"n": 500, "cep95_m": 0.02}}}, "reflection": {"mp_db": None},
            "internal_errors": 0}


def test_expectation_curve_by_hand() -> None:
    rules = CompareRules()
    # the curve's ends are its stated values (RULE_SOURCES["expectation"], common practice)
    assert expected_cn0(5.0, rules) == pytest.approx(32.0, abs=1e-9)
    assert expected_cn0(90.0, rules) == pytest.approx(48.0, abs=1e-9)
    # 30°, hand arithmetic: sin 30° = 0.5, sin 5° = 0.0871557; 32 + 16 * (0.5 - 0.0871557) / 0.9128443 = 39.2362
    assert expected_cn0(30.0, rules) == pytest.approx(39.2362, abs=1e-3)


def test_residual_is_an_equal_weight_mean_over_common_bands() -> None:
    # session A: band 10-20° has two cells (44 and 42 dB-Hz) and one cell with too few samples
    # (2 < MIN_N = 3 of analysis/sky.py, so left out); band 40-50° one cell at 38; band 60-70° only A.
    a = snapshot({(2, 0): (5, 0, 44.0), (3, 1): (5, 0, 42.0), (2, 5): (2, 0, 60.0),
                  (8, 3): (9, 0, 38.0), (12, 0): (50, 0, 41.0)})
    # session B: band 10-20° one cell at 39, band 40-50° one at 41, band 80-90° only B (at 45).
    b = snapshot({(2, 7): (4, 0, 39.0), (9, 9): (4, 0, 41.0), (16, 4): (30, 0, 45.0)})
    bands_a, basis = band_residuals(a, FLAT)
    assert basis == "sky cells"
    # hand arithmetic, flat curve at 40 dB-Hz: band 10 = ((44-40) + (42-40)) / 2 = 3; band 40 = 38-40 = -2
    assert bands_a[10]["residual_db"] == pytest.approx(3.0)
    assert bands_a[40]["residual_db"] == pytest.approx(-2.0)
    assert bands_a[60]["residual_db"] == pytest.approx(1.0)
    # sample standard deviation of the band-10 cell residuals 4 and 2: sqrt(((4-3)^2 + (2-3)^2) / 1)
    assert bands_a[10]["spread_db"] == pytest.approx(math.sqrt(2.0), abs=0.01)
    doc = compare([Session("A", "a", "snapshot JSON", a), Session("B", "b", "snapshot JSON", b)], FLAT)
    res = next(f for f in doc["figures"] if f["key"] == "cn0_residual_db")
    # only the bands both observed (10 and 40), each weighted equally, whatever the sample counts:
    # A = (3 + -2) / 2 = 0.5; B = ((39-40) + (41-40)) / 2 = 0.0
    assert res["values"] == [pytest.approx(0.5), pytest.approx(0.0)]
    assert res["outcome"] == "equal"  # 0.5 dB apart, tolerance 1 dB
    common = [b["from"] for b in res["detail"][0]["bands"] if b["common"]]
    assert common == [10, 40]
    assert doc["recommendation"]["spot"] is None
    assert doc["recommendation"]["text"].startswith("No clear winner")


def test_obstruction_counts_only_cells_every_session_saw() -> None:
    # four cells above the 5° mask seen by both; B has two of them mostly untracked (blocked at
    # >= 50 % untracked, analysis/sky.py BLOCKED_SHARE). A also saw a blocked cell B never saw,
    # and both saw a cell below the 5° mask (row 0: 0-5°; blocked for B) that never counts.
    common = {(4, 0): (10, 0, 40.0), (4, 9): (10, 0, 40.0), (10, 27): (10, 0, 40.0), (10, 30): (10, 0, 40.0)}
    a = snapshot({**common, (6, 20): (0, 10, None), (0, 3): (10, 0, 40.0)})
    b = snapshot({**common, (10, 27): (2, 8, 30.0), (10, 30): (5, 5, 30.0), (0, 3): (0, 10, None)})
    doc = compare([Session("A", "a", "snapshot JSON", a), Session("B", "b", "snapshot JSON", b)])
    f = doc["figures"][0]
    assert f["key"] == "obstructed_share"
    assert f["detail"][0]["common_cells"] == 4
    assert f["values"] == [0.0, 0.5]  # hand count: A 0 of 4, B 2 of 4
    assert f["outcome"] == "better" and f["best"] == [0]
    west = next(s for s in f["detail"][1]["sectors"] if s["az_from"] == 270)  # columns 27 and 30: 270-315°
    assert (west["cells"], west["obstructed_share"]) == (2, 1.0)


def test_decide_tolerances() -> None:
    assert decide([1.0, 1.9], "lower", 1.0) == ("equal", [0, 1])
    assert decide([1.0, 2.1], "lower", 1.0) == ("better", [0])
    assert decide([-0.5, -1.6], "higher", 1.0) == ("better", [0])
    assert decide([0.010, 0.0124], "lower", 0.25, relative=True)[0] == "equal"  # 24 % of the smaller
    assert decide([0.010, 0.0126], "lower", 0.25, relative=True)[0] == "better"
    assert decide([1.0, None], "lower", 1.0) == ("not compared", [])
    assert decide([3.0, 1.0, 1.4], "lower", 0.5) == ("better", [1, 2])  # three spots: two share the best


def test_cep95_only_between_equal_fix_types() -> None:
    a, b = snapshot({}), snapshot({})
    b["position"] = {"by_fix": {"rtk_float": {"n": 500, "cep95_m": 0.3}, "rtk_fixed": {"n": 20, "cep95_m": 0.02}}}
    doc = compare([Session("A", "a", "snapshot JSON", a), Session("B", "b", "snapshot JSON", b)])
    f = next(f for f in doc["figures"] if f["key"] == "cep95_m")
    assert f["outcome"] == "not compared" and "RTK fixed vs RTK float" in f["why_not_compared"]


@pytest.fixture(scope="module")
def scenarios() -> dict[str, dict[str, Any]]:
    return {name: load(str(path))[1] for name, path in (("rooftop", ROOFTOP), ("building", BUILDING))}


def _doc(scenarios: dict[str, dict[str, Any]], order: tuple[str, ...]) -> dict[str, Any]:
    return compare([Session(n, n, "recording", scenarios[n]) for n in order])


def test_rooftop_beats_building_for_the_right_reasons(scenarios: dict[str, dict[str, Any]]) -> None:
    for a in scenarios.values():
        assert a["internal_errors"] == 0
    doc = _doc(scenarios, ("rooftop", "building"))
    rec = doc["recommendation"]
    assert rec["spot"] == "rooftop"
    figs = {f["key"]: f for f in doc["figures"]}
    # the building scenario's wall blocks azimuth 250-330° below 60° (livefix/sim/scenarios/building.toml)
    assert figs["obstructed_share"]["best"] == [0] and figs["obstructed_share"]["values"][1] > 0.15
    west = figs["obstructed_share"]["detail"][1]["sectors"][6]  # 270-315°, inside the wall
    assert west["az_from"] == 270 and west["obstructed_share"] > 0.5
    # its multipath sectors attenuate C/N0 by 4-7 dB (building.toml): a lower residual than the roof
    assert figs["cn0_residual_db"]["outcome"] == "better" and figs["cn0_residual_db"]["best"] == [0]
    assert rec["reasons"][0].startswith("Share of the common sky obstructed")
    assert rec["reasons"][1].startswith("C/N0 residual")
    # five minutes each: stated, and called weak evidence (under 1 h)
    assert "rooftop 5 min" in rec["evidence"] and "Weak evidence" in rec["evidence"]
    assert all(s["weak_evidence"] for s in doc["sessions"])


def test_argument_order_does_not_change_the_answer(scenarios: dict[str, dict[str, Any]]) -> None:
    ab = _doc(scenarios, ("rooftop", "building"))
    ba = _doc(scenarios, ("building", "rooftop"))
    assert ab["recommendation"]["spot"] == ba["recommendation"]["spot"] == "rooftop"
    names_ab, names_ba = ["rooftop", "building"], ["building", "rooftop"]
    for fa, fb in zip(ab["figures"], ba["figures"], strict=True):
        assert fa["outcome"] == fb["outcome"], fa["key"]
        assert {names_ab[i] for i in fa["best"]} == {names_ba[i] for i in fb["best"]}, fa["key"]
        assert fa["values"] == fb["values"][::-1], fa["key"]


def test_overlay_plot_and_pages_without_a_sky_map() -> None:
    from livefix.report.compare_doc import render_html, render_markdown, render_terminal
    from livefix.report.compare_plot import sky_overlay_svg

    wall = {(r, j): (0, 10, None) for r in range(2, 8) for j in (27, 28)}  # 270-290° blocked below 40°
    a, b = snapshot({(4, 0): (10, 0, 40.0), **{k: (10, 0, 40.0) for k in wall}}), snapshot({(4, 0): (10, 0, 40.0), **wall})
    doc = compare([Session("open <roof>", "a", "snapshot JSON", a), Session("wall", "b", "snapshot JSON", b)])
    assert doc["sessions"][1]["blocked_below_deg"][27] == 40  # the sky map's column rule: top of the wall
    svg = sky_overlay_svg(doc)
    assert svg.startswith("<svg") and "wall: " in svg and "open &lt;roof&gt;: " in svg  # legend, escaped
    assert "<pattern" in svg  # hatching: the spots differ by more than colour
    bare = {"stream": {"duration_s": 30.0}, "internal_errors": 0}
    doc = compare([Session("x", "x", "snapshot JSON", bare), Session("y", "y", "snapshot JSON", bare)])
    with pytest.raises(ValueError):
        sky_overlay_svg(doc)
    assert "No sky plot: no sky map in any session" in render_html(doc)
    # 30 s sessions: under the 1 min floor (CompareRules.min_session_s), so no spot is named
    assert "No recommendation: x and y ran for less than 60 s" in render_markdown(doc)
    assert "30 s" in render_terminal(doc) and doc["recommendation"]["spot"] is None
    assert all(f["outcome"] == "not compared" for f in doc["figures"])
