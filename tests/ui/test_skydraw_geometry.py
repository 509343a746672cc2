"""Sky-plot drawing is a pure function: check where satellites land and how states look.

Convention checked (NMEA 0183 GSV: azimuth in degrees true, 000-359, elevation 00-90 above the
horizon; sky plots put the zenith at the centre, north up, azimuth clockwise: common practice).
"""

from __future__ import annotations

import math

import pytest

from livefix.ui import skydraw
from livefix.ui.fmt import bar, cn0_grade, sparkline
from livefix.ui.skydraw import SkySat, draw, geometry, project, to_lines, unproject

ROWS, COLS = 25, 53


def glyph_cells(cells: list[list[tuple[str, str]]]) -> list[tuple[int, int, str]]:
    return [(r, c, ch) for r, row in enumerate(cells) for c, (ch, role) in enumerate(row)
            if role.startswith("grade-")]


@pytest.mark.parametrize("az, el, where", [
    (90, 0, "east"), (0, 0, "north"), (180, 0, "south"), (270, 0, "west"), (123, 90, "zenith"),
])
def test_cardinal_directions_land_on_the_horizon_or_centre(az: float, el: float, where: str) -> None:
    g = geometry(ROWS, COLS)
    cells = draw([SkySat("G", 5, el, az, 45, True)], ROWS, COLS)
    [(r, c, _)] = glyph_cells(cells)
    expected = {"east": (g.cy, g.cx + round(g.rx)), "west": (g.cy, g.cx - round(g.rx)),
                "north": (g.cy - round(g.ry), g.cx), "south": (g.cy + round(g.ry), g.cx),
                "zenith": (g.cy, g.cx)}[where]
    assert (r, c) == expected


def test_cardinal_letters_sit_outside_the_horizon() -> None:
    g = geometry(ROWS, COLS)
    lines = to_lines(draw([], ROWS, COLS))
    assert lines[g.cy - round(g.ry) - 1][g.cx] == "N"
    assert lines[g.cy + round(g.ry) + 1][g.cx] == "S"
    assert lines[g.cy][g.cx + round(g.rx) + 2] == "E"
    assert lines[g.cy][g.cx - round(g.rx) - 2] == "W"


def test_elevation_rings_are_linear_in_zenith_angle() -> None:
    # 30° elevation is 60° from the zenith: two thirds of the horizon radius (linear polar plot).
    g = geometry(41, 85)
    r, c = project(g, 0, 30)
    assert g.cy - r == round(g.ry * 2 / 3)
    r, c = project(g, 90, 60)
    assert c - g.cx == round(g.rx / 3)


def test_quadrants_follow_clockwise_azimuth() -> None:
    g = geometry(ROWS, COLS)
    r, c = project(g, 45, 20)  # north-east: up and right
    assert r < g.cy and c > g.cx
    r, c = project(g, 225, 20)  # south-west: down and left
    assert r > g.cy and c < g.cx


@pytest.mark.parametrize("az", range(0, 360, 15))
@pytest.mark.parametrize("el", (5, 25, 45, 70))
def test_unproject_inverts_project_within_a_cell(az: int, el: int) -> None:
    g = geometry(61, 125)
    back = unproject(g, *project(g, az, el))
    assert back is not None
    got_az, got_el = back
    assert abs(got_el - el) < 4.0
    # azimuth resolution shrinks towards the zenith: one cell spans atan(1 / radius)
    tol = math.degrees(math.atan2(1.5, (90 - el) / 90 * g.ry)) + 1
    assert min(abs(got_az - az), 360 - abs(got_az - az)) < tol


def test_used_tracked_and_in_view_differ_without_colour() -> None:
    sats = [SkySat("G", 5, 40, 60, 44, True), SkySat("E", 12, 40, 200, 44, False),
            SkySat("R", 3, 40, 300, None, False)]
    for ascii_only in (False, True):
        cells = draw(sats, ROWS, COLS, ascii_only=ascii_only)
        text = "\n".join(to_lines(cells))
        assert "G05" in text  # used: upper case
        assert "e12" in text and "E12" not in text  # tracked, not used: lower case
        assert "r03" in text
        glyphs = {ch for _, _, ch in glyph_cells(cells)}
        assert len(glyphs) == 2  # same C/N0 for G05 and e12, a different shape for "in view only"
        untracked = (skydraw.GLYPHS_ASCII if ascii_only else skydraw.GLYPHS_UNICODE)[0]
        assert untracked in glyphs


def test_cn0_grades_change_the_glyph() -> None:
    sats = [SkySat("G", i, 50, i * 60, cn0, True) for i, cn0 in enumerate((20, 33, 40, 48), start=1)]
    cells = draw(sats, ROWS, COLS)
    assert len({ch for _, _, ch in glyph_cells(cells)}) == 4


def test_ascii_mode_draws_only_ascii() -> None:
    sats = [SkySat("G", 5, 10, 90, 44, True), SkySat("E", 12, 45, 200, None, False)]
    grid = {"az_step": 10, "el_step": 5, "tracked": [[0] * 36 for _ in range(18)],
            "untracked": [[9] * 36 for _ in range(18)]}
    for line in to_lines(draw(sats, ROWS, COLS, ascii_only=True, grid=grid)):
        assert all(ord(ch) < 128 for ch in line)


def test_obstruction_overlay_shades_only_the_blocked_sector() -> None:
    # untracked below 60° between azimuth 250° and 330° (a wall to the west-north-west)
    tracked = [[10] * 36 for _ in range(18)]
    untracked = [[0] * 36 for _ in range(18)]
    for el_row in range(12):
        for az_col in range(25, 33):
            tracked[el_row][az_col], untracked[el_row][az_col] = 0, 10
    grid = {"az_step": 10, "el_step": 5, "tracked": tracked, "untracked": untracked}
    g = geometry(ROWS, COLS)
    cells = draw([], ROWS, COLS, grid=grid)
    shaded = [(r, c) for r, row in enumerate(cells) for c, (_, role) in enumerate(row) if role == "blocked"]
    assert len(shaded) > 10
    for r, c in shaded:
        az, el = unproject(g, r, c)  # type: ignore[misc]
        assert 250 <= az < 330 and el < 60


def test_small_area_never_crashes() -> None:
    for rows, cols in ((0, 0), (3, 8), (5, 11), (6, 200), (200, 6)):
        cells = draw([SkySat("G", 1, 10, 10, 40, True)], rows, cols)
        assert len(cells) == rows and all(len(r) == cols for r in cells)


def test_one_entry_per_satellite_from_several_signals() -> None:
    from livefix.state.epoch import SatObs

    obs = [SatObs("E", 7, "1", 30, 100, 38, False), SatObs("E", 7, "7", 30, 100, 44, True)]
    [s] = skydraw.from_obs(obs)
    assert s.cn0 == 44 and s.used


def test_cn0_grade_follows_rinex_signal_strength_order() -> None:
    # RINEX 3.04 §5.7 Table 12: signal-strength index min(max(int(dBHz/6), 1), 9); our grade must
    # never fall while that index rises, and 30 dB-Hz must not count as weak (30-35 dB-Hz is the
    # RINEX "threshold for good tracking"; under ~30 weak is common practice).
    prev_ssi, prev_grade = 0, 0
    for db in range(0, 60):
        ssi = min(max(db // 6, 1), 9)
        grade = cn0_grade(db)
        if ssi > prev_ssi:
            assert grade >= prev_grade
        prev_ssi, prev_grade = ssi, grade
    assert cn0_grade(29) == 1 and cn0_grade(30) >= 2 and cn0_grade(None) == 0


def test_sparkline_and_bar_shapes() -> None:
    assert sparkline([0, 1, 2, 3, 4, 5, 6, 7], 8) == "▁▂▃▄▅▆▇█"
    assert sparkline([1, None, 1], 3) == "▁ ▁"
    assert sparkline([], 10) == ""
    assert sparkline(list(range(100)), 10, ascii_only=True).isascii()
    assert bar(55, 55, 8) == "█" * 8
    assert bar(None, 55, 5) == " " * 5
    assert bar(27.5, 55, 8, ascii_only=True) == "====    "


def test_labels_never_overlap_or_touch_in_a_crowded_sky() -> None:
    # issue 15: sky labels collided at every size. 60 satellites, many within a few degrees
    import random

    from livefix.ui.skydraw import labels

    rng = random.Random(5)
    sats = [SkySat("GREC"[k % 4], k + 1, rng.randint(0, 90), rng.randint(0, 359), rng.choice([None, 25, 35, 42, 48]),
                   k % 3 == 0) for k in range(60)]
    sats += [SkySat("G", 90 + k, 45, 100 + k, 40, True) for k in range(6)]  # a tight cluster
    for rows, cols in ((11, 28), (17, 47), (21, 66), (33, 80)):
        cells = draw(sats, rows, cols)
        found = labels(cells)
        names = {f"{s.system}{s.prn:02d}" for s in sats}
        glyph = {(r, c) for r, row in enumerate(cells) for c, (_, role) in enumerate(row) if role.startswith("grade")}
        card = {(r, c) for r, row in enumerate(cells) for c, (_, role) in enumerate(row) if role == "cardinal"}
        for r, c, text in found:
            assert text.upper() in names, (rows, cols, text)  # whole labels only: none cut or merged
            own = [(r, c - 1) in glyph, (r, c + len(text)) in glyph,  # beside its glyph, or diagonal
                   any((rr, cc) in glyph for rr in (r - 1, r + 1) for cc in (c - 1, c + len(text)))]
            assert any(own), (rows, cols, text)
            assert (r, c - 1) not in card and (r, c + len(text)) not in card
        assert len({t.upper() for _, _, t in found}) == len(found)  # each satellite labelled at most once
