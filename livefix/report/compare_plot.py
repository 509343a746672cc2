"""The overlaid sky/obstruction plot of a spot comparison, as inline SVG (matplotlib, Agg).

One polar plot (north up, azimuth clockwise, zenith at the centre, horizon at the rim) with each
session's obstruction drawn in its own colour and hatch, so the spots can be laid over one another
and told apart in print and without colour; weak-signal sectors are dashed outlines. Drawn from the
comparison document alone; missing data gives a one-line note instead of an exception.
"""

from __future__ import annotations

import math
from typing import Any

from livefix.report.plot_style import BLUE, GREEN, ORANGE, PURPLE, SKY, VERMILION, plt, render

# one colour (the report plots' colour-blind-safe palette) and one hatch per session, so no
# session is told apart by colour alone
COLOURS = (BLUE, VERMILION, GREEN, PURPLE, ORANGE, SKY)
HATCHES = ("//", "\\\\", "..", "xx", "--", "++")


def sky_overlay_svg(doc: dict[str, Any]) -> str:
    """SVG text of the overlaid obstruction plot; raises ValueError when no session has a sky grid."""
    sessions = doc.get("sessions") or []
    if not any(any(c is not None for c in s.get("blocked_below_deg") or []) for s in sessions):
        raise ValueError("no sky map in any session")
    from matplotlib.patches import Patch

    fig = plt().figure(figsize=(6, 6))
    ax = fig.add_subplot(projection="polar")
    ax.set_theta_zero_location("N")
    ax.set_theta_direction(-1)
    obst = next((f for f in doc.get("figures") or [] if f.get("key") == "obstructed_share"), {})
    weak = next((f for f in doc.get("figures") or [] if f.get("key") == "weak_sectors"), {})
    handles = []
    for i, s in enumerate(sessions):
        colour, hatch = COLOURS[i % len(COLOURS)], HATCHES[i % len(HATCHES)]
        cols = s.get("blocked_below_deg") or []
        step = 360 / len(cols) if cols else 10.0
        for j, top in enumerate(cols):
            if top:
                theta, width = math.radians((j + 0.5) * step), math.radians(step)
                ax.bar(theta, top, width=width, bottom=90 - top, color=colour, alpha=0.2, lw=0)
                ax.bar(theta, top, width=width, bottom=90 - top, fill=False, hatch=hatch, edgecolor=colour, lw=0.5)
        for w in ((weak.get("detail") or [])[i] if i < len(weak.get("detail") or []) else []):
            a0, a1, e0, e1 = (w.get(k) for k in ("az_from", "az_to", "el_from", "el_to"))
            if all(isinstance(v, int | float) for v in (a0, a1, e0, e1)):
                span = (a1 - a0) % 360 or 360
                ax.bar(math.radians(a0 + span / 2), e1 - e0, width=math.radians(span), bottom=90 - e1,
                       fill=False, edgecolor=colour, ls="--", lw=1.2)
        vals = obst.get("values") or []
        share = vals[i] if i < len(vals) and vals[i] is not None else None
        label = s.get("name", f"session {i + 1}") + (f": {share * 100:.0f} % of the common sky obstructed"
                                                      if share is not None else ": no sky map")
        handles.append(Patch(facecolor=colour + "55", hatch=hatch, edgecolor=colour, label=label))
    handles.append(Patch(fill=False, edgecolor="#333333", ls="--", label="weak-signal sector (dashed)"))
    ax.set_rlim(0, 90)
    ax.set_rticks([90 - e for e in (0, 30, 60, 90)], labels=["0°", "30°", "60°", "90°"])
    ax.set_rlabel_position(22.5)
    ax.set_thetagrids(range(0, 360, 45), labels=["N", "45°", "E", "135°", "S", "225°", "W", "315°"])
    ax.set_title("Obstruction by spot (elevation: horizon at the rim, zenith at the centre)", pad=18)
    fig.legend(handles=handles, loc="lower center", ncol=1, fontsize=8, frameon=False)
    fig.subplots_adjust(bottom=0.12 + 0.035 * len(handles))
    return str(render(fig))
