"""Pure sky-plot drawing: satellites by azimuth/elevation onto a grid of character cells.

Polar projection with the zenith at the centre and the horizon on the outer ring; radius is
linear in zenith angle, (90 - el) / 90. Terminal cells are about twice as tall as wide, so the
horizontal radius is twice the vertical one. North is up, east to the right (looking down from
above the antenna, as on a map).

Satellite state is shown by shape and case, never by colour alone:
  glyph     by C/N0 grade (in view only / weak / fair / good / strong)
  label     upper case = used in the solution ("G05"), lower case = not used ("g05")
Each cell carries a role name; the widget maps roles to theme styles.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any

from livefix.ui.fmt import cn0_grade

Cell = tuple[str, str]  # (character, role)

GLYPHS_UNICODE: dict[int, str] = {0: "◌", 1: "○", 2: "◐", 3: "●", 4: "◉"}
GLYPHS_ASCII: dict[int, str] = {0: "-", 1: "o", 2: "O", 3: "@", 4: "#"}
RING_UNICODE, RING_ASCII = "·", "."
BLOCK_UNICODE, BLOCK_ASCII = "░", ":"
RINGS_DEG = (0, 30, 60)  # horizon and two elevation rings


@dataclass(frozen=True, slots=True)
class SkySat:
    """What the drawing needs about one satellite."""

    system: str
    prn: int
    elev: float | None
    azim: float | None
    cn0: float | None
    used: bool


@dataclass(frozen=True, slots=True)
class Geometry:
    rows: int
    cols: int
    cy: int
    cx: int
    ry: float  # vertical radius of the horizon, rows
    rx: float  # horizontal radius of the horizon, columns


def geometry(rows: int, cols: int) -> Geometry:
    """Largest plot that fits, keeping a row above/below and two columns each side for N/S/E/W."""
    ry = max(1.0, min((rows - 3) / 2.0, (cols - 5) / 4.0))
    return Geometry(rows, cols, rows // 2, cols // 2, ry, ry * 2.0)


def project(g: Geometry, az: float, el: float) -> tuple[int, int]:
    """(row, col) of a direction; elevations below 0 are drawn on the horizon."""
    r = (90.0 - max(0.0, min(90.0, el))) / 90.0
    a = math.radians(az)
    return (g.cy - round(r * g.ry * math.cos(a)), g.cx + round(r * g.rx * math.sin(a)))


def unproject(g: Geometry, row: int, col: int) -> tuple[float, float] | None:
    """(az, el) of a cell centre, None outside the horizon."""
    dy, dx = (g.cy - row) / g.ry, (col - g.cx) / g.rx
    r = math.hypot(dx, dy)
    if r > 1.0:
        return None
    return (math.degrees(math.atan2(dx, dy)) % 360.0, 90.0 - r * 90.0)


def blocked_cells(grid: Mapping[str, Any] | None, min_obs: int = 3) -> dict[tuple[int, int], float]:
    """Obstruction grid -> {(az_col, el_row): untracked share} for cells mostly untracked.

    grid = analysis["sky"]["grid"]: az_step, el_step and tracked/untracked epoch counts indexed
    [el_row][az_col], row 0 = lowest band, column 0 = first sector east of north.
    """
    out: dict[tuple[int, int], float] = {}
    if not isinstance(grid, Mapping):
        return out
    tracked, untracked = grid.get("tracked") or [], grid.get("untracked") or []
    for j, (trow, urow) in enumerate(zip(tracked, untracked, strict=False)):
        for i, (t, u) in enumerate(zip(trow or [], urow or [], strict=False)):
            n = (t or 0) + (u or 0)
            if n >= min_obs and (u or 0) / n > 0.5:
                out[(i, j)] = (u or 0) / n
    return out


def draw(sats: Iterable[SkySat], rows: int, cols: int, *, ascii_only: bool = False,
         grid: Mapping[str, Any] | None = None) -> list[list[Cell]]:
    """Return rows × cols cells; roles: bg ring horizon cardinal scale blocked grade-N label-used
    label-free."""
    cells: list[list[Cell]] = [[(" ", "bg")] * cols for _ in range(rows)]
    if rows < 5 or cols < 11:
        return cells
    g = geometry(rows, cols)

    def put(r: int, c: int, ch: str, role: str) -> None:
        if 0 <= r < rows and 0 <= c < cols:
            cells[r][c] = (ch, role)

    # obstruction overlay first, so rings and satellites draw over it
    blocked = blocked_cells(grid)
    if blocked:
        az_step = float(grid.get("az_step") or 10) if grid else 10.0
        el_step = float(grid.get("el_step") or 10) if grid else 10.0
        shade = BLOCK_ASCII if ascii_only else BLOCK_UNICODE
        for r in range(rows):
            for c in range(cols):
                ae = unproject(g, r, c)
                if ae and (int(ae[0] // az_step), int(min(ae[1], 89.99) // el_step)) in blocked:
                    put(r, c, shade, "blocked")
    ring = RING_ASCII if ascii_only else RING_UNICODE
    steps = max(24, int(math.pi * g.rx * 1.2))  # sparse dots: a ring, not a wall
    for el in RINGS_DEG:
        for k in range(steps):
            r, c = project(g, k * 360.0 / steps, el)
            put(r, c, ring, "horizon" if el == 0 else "ring")
    put(g.cy, g.cx, "+", "ring")
    for text, az in (("N", 0), ("E", 90), ("S", 180), ("W", 270)):
        r, c = project(g, az, 0)
        r += {0: -1, 180: 1}.get(az, 0)
        c += {90: 2, 270: -2}.get(az, 0)
        put(r, c, text, "cardinal")
    _place_sats(cells, g, sats, ascii_only)
    for el in RINGS_DEG[1:]:  # elevation scale along the north axis, only where nothing is drawn
        r, c = project(g, 0, el)
        span = range(c + 1, c + 1 + len(str(el)))
        if all(0 <= x < cols and cells[r][x][1] in ("bg", "ring", "horizon", "blocked") for x in span):
            for x, ch in zip(span, str(el), strict=True):
                put(r, x, ch, "scale")
    return cells


def _place_sats(cells: list[list[Cell]], g: Geometry, sats: Iterable[SkySat], ascii_only: bool) -> None:
    """Glyphs first, then labels with a collision check: a label never covers a glyph or another
    label or N/E/S/W, and touches no glyph but its own, no other label and no N/E/S/W; one that
    fits nowhere is left out (the satellite table lists every satellite)."""
    glyphs = GLYPHS_ASCII if ascii_only else GLYPHS_UNICODE
    marks: set[tuple[int, int]] = set()  # glyph cells
    words: set[tuple[int, int]] = set()  # label cells
    # strongest used first, so a crowded spot keeps the most useful glyph and label
    order = sorted((s for s in sats if s.elev is not None and s.azim is not None),
                   key=lambda s: (not s.used, -(s.cn0 or 0), s.system, s.prn))
    fixed = {(r, c) for r, row in enumerate(cells) for c, (_, role) in enumerate(row) if role == "cardinal"}
    placed: list[tuple[SkySat, int, int]] = []
    for s in order:
        r, c = project(g, float(s.azim), float(s.elev))  # type: ignore[arg-type]
        if not (0 <= r < g.rows and 0 <= c < g.cols) or (r, c) in marks:
            continue
        grade = 0 if s.cn0 is None else cn0_grade(s.cn0)
        cells[r][c] = (glyphs[grade], f"grade-{grade}")
        marks.add((r, c))
        placed.append((s, r, c))
    for s, r, c in placed:
        label = f"{s.system}{s.prn:02d}"
        label = label.upper() if s.used else label.lower()
        role = "label-used" if s.used else "label-free"
        n = len(label)
        for row, start in ((r, c + 1), (r, c - n), (r - 1, c + 1), (r + 1, c + 1), (r - 1, c - n),
                           (r + 1, c - n)):
            span = [(row, x) for x in range(start, start + n)]
            if not (0 <= row < g.rows and 0 <= start and start + n <= g.cols):
                continue
            if any(p in marks or p in words or p in fixed for p in span):
                continue
            ends = {(row, start - 1), (row, start + n)} - {(r, c)}
            if ends & words or ends & marks or ends & fixed:
                continue  # a label touching another label or glyph reads as belonging to it
            for (_, x), ch in zip(span, label, strict=True):
                cells[row][x] = (ch, role)
            words.update(span)
            break


def labels(cells: list[list[Cell]]) -> list[tuple[int, int, str]]:
    """(row, first column, text) of every label run in drawn cells: what tests check overlaps on."""
    out: list[tuple[int, int, str]] = []
    for r, row in enumerate(cells):
        run, at = "", 0
        for c, (ch, role) in enumerate([*row, (" ", "bg")]):
            if role.startswith("label"):
                if not run:
                    at = c
                run += ch
            elif run:
                out.append((r, at, run))
                run = ""
    return out


def to_lines(cells: list[list[Cell]]) -> list[str]:
    return ["".join(ch for ch, _ in row) for row in cells]


def from_obs(sky: Iterable[Any]) -> list[SkySat]:
    """SatObs (one per signal) -> one SkySat per satellite: best C/N0, used if any signal is."""
    best: dict[tuple[str, int], SkySat] = {}
    for o in sky:
        k = (o.system, o.prn)
        prev = best.get(k)
        cn0 = o.cn0 if prev is None else max((x for x in (prev.cn0, o.cn0) if x is not None), default=None)
        best[k] = SkySat(o.system, o.prn, o.elev if o.elev is not None else (prev.elev if prev else None),
                         o.azim if o.azim is not None else (prev.azim if prev else None), cn0,
                         o.used or bool(prev and prev.used))
    return list(best.values())
