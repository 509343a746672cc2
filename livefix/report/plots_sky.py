"""The polar sky plot: satellite paths by constellation over the obstruction map.

North up, azimuth clockwise (as a compass reads), the zenith in the centre and the horizon on the
rim, so the plot reads like looking up from the antenna with north at the top. A cell is shaded
by the same rule the analysis uses to call it blocked (livefix.analysis.sky: enough samples and
mostly listed-but-untracked), and the named obstructed sectors are outlined, so the plot and the
words in the report say the same thing.
"""

from __future__ import annotations

import math
from typing import Any

from livefix.analysis.sky import BLOCKED_SHARE, MIN_N
from livefix.report.plot_style import GREY, num, plt, system_style

RINGS_EL = (0, 15, 30, 45, 60, 75)  # elevation rings, degrees (common practice: 15° steps)


def blocked_cells(grid: dict[str, Any]) -> list[tuple[float, float, float, float]]:
    """(az_from, az_to, el_from, el_to) of the cells the analysis would call blocked."""
    tr, un = grid.get("tracked") or [], grid.get("untracked") or []
    az_step, el_step = grid.get("az_step"), grid.get("el_step")
    if not (num(az_step) and num(el_step)) or az_step <= 0 or el_step <= 0:
        return []
    out = []
    for j, (trow, urow) in enumerate(zip(tr, un, strict=False)):  # rows: elevation bands from the horizon
        for i, (t, u) in enumerate(zip(trow, urow, strict=False)):
            t, u = (t if num(t) else 0), (u if num(u) else 0)
            if t + u >= MIN_N and u / (t + u) >= BLOCKED_SHARE:
                out.append((i * az_step, (i + 1) * az_step, j * el_step, (j + 1) * el_step))
    return out


def _polar_axes(fig: Any, pos: Any = 111) -> Any:
    ax = fig.add_subplot(pos, projection="polar")
    ax.set_theta_zero_location("N")
    ax.set_theta_direction(-1)  # clockwise, as a compass
    ax.set_rlim(0, 90)
    ax.set_rticks([90 - e for e in RINGS_EL], labels=[f"{e}°" for e in RINGS_EL])
    ax.set_rlabel_position(202.5)  # elevation labels along south-south-west, clear of N and of the legend
    ax.set_thetagrids(range(0, 360, 30), labels=["N", "30°", "60°", "E", "120°", "150°", "S", "210°", "240°",
                                                 "W", "300°", "330°"])
    # the zenith: written in the centre, on a white box so paths crossing it cannot hide it
    ax.text(0, 0, "90°", ha="center", va="center", fontsize=8, zorder=5,
            bbox={"boxstyle": "round,pad=0.15", "fc": "white", "ec": "none", "alpha": 0.8})
    ax.tick_params(axis="y", labelsize=8)
    ax.grid(True, alpha=0.4)
    return ax


def draw_tracks(ax: Any, tracks: dict[str, Any], alpha: float = 1.0, suffix: str = "") -> list[str]:
    """Scatter every satellite's path in its constellation's colour and marker; filled where
    tracked, hollow where listed but untracked. Returns the constellation letters drawn."""
    by_sys: dict[str, tuple[list[float], list[float], list[float], list[float]]] = {}
    for sat in tracks.get("sats") or []:
        az, el, cn0 = sat.get("az") or [], sat.get("el") or [], sat.get("cn0") or []
        bucket = by_sys.setdefault(str(sat.get("system") or "?"), ([], [], [], []))
        for k, (a, e) in enumerate(zip(az, el, strict=False)):
            if not (num(a) and num(e)):
                continue
            on = k < len(cn0) and num(cn0[k])
            bucket[0 if on else 2].append(math.radians(a))
            bucket[1 if on else 3].append(90 - e)
    drawn = []
    for letter in sorted(by_sys, key=lambda s: (s not in "GRECJIS", "GRECJIS".find(s), s)):
        th, r, th_u, r_u = by_sys[letter]
        st = system_style(letter)
        if th:
            ax.scatter(th, r, s=7, marker=st.marker, color=st.colour, alpha=alpha, lw=0,
                       label=st.label + suffix, zorder=3)
        if th_u:
            ax.scatter(th_u, r_u, s=9, marker=st.marker, facecolors="none", edgecolors=st.colour, lw=0.6,
                       alpha=alpha, zorder=3, label=None if th else st.label + suffix)
        if th or th_u:
            drawn.append(letter)
    return drawn


def draw_obstruction(ax: Any, sky: dict[str, Any]) -> bool:
    cells = blocked_cells(sky.get("grid") or {})
    for az0, az1, el0, el1 in cells:
        ax.bar(math.radians((az0 + az1) / 2), el1 - el0, width=math.radians(az1 - az0), bottom=90 - el1,
               color=GREY, alpha=0.35, lw=0, zorder=1)
    for sec in sky.get("obstructed") or []:
        f, t, below = sec.get("az_from"), sec.get("az_to"), sec.get("below_el")
        if num(f) and num(t) and num(below):
            span = (t - f) % 360 or 360
            ax.bar(math.radians(f + span / 2), below, width=math.radians(span), bottom=90 - below,
                   fill=False, edgecolor="black", hatch="//", lw=0.8, zorder=2)
    return bool(cells or sky.get("obstructed"))


def sky_plot(a: dict[str, Any]) -> Any:
    sky = a.get("sky") or {}
    tracks = (a.get("trend") or {}).get("sky_tracks") or {}
    grid = sky.get("grid") or {}
    if not tracks.get("sats") and not grid.get("tracked"):
        raise ValueError("no satellite positions")
    pyplot = plt()
    fig = pyplot.figure(figsize=(6.2, 5.4))
    ax = _polar_axes(fig)
    shaded = draw_obstruction(ax, sky)
    draw_tracks(ax, tracks)
    handles, labels = ax.get_legend_handles_labels()
    from matplotlib.patches import Patch

    handles.append(pyplot.Line2D([], [], ls="", marker="o", mfc="none", mec="black", ms=4))
    labels.append("hollow: listed, not tracked")
    if shaded:
        handles += [Patch(color=GREY, alpha=0.35), Patch(fill=False, hatch="//", ec="black")]
        labels += ["blocked cell", "obstructed sector"]
    ax.legend(handles, labels, loc="upper left", bbox_to_anchor=(1.08, 1.0), fontsize=7, frameon=False)
    ax.set_title("Sky: satellite paths and obstructions (north up, clockwise)", pad=18)
    return fig
