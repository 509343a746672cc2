"""Reflections on the obstruction page: arcs collected and the reflector height per azimuth sector.

Why on that page: the installer who asks "what blocks the sky here?" also asks "what reflects into
the antenna?" (analysis key `reflection`, livefix.analysis.reflectors). A one-line conclusion sits
above the map with the page's other conclusions; the per-sector lines follow the map's key. A
sector with fewer accepted arcs than the analysis' `min_arcs_sector` reads "collecting" beside its
count and provisional height, never as a finding. Pure functions of the snapshot dict (testable
without a terminal); words, not colour alone, carry every state.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from rich.style import Style
from rich.text import Text

from livefix.pipeline import Snapshot
from livefix.ui.fmt import DASH, dig, num
from livefix.ui.views import compass, obstruction_text

StyleOf = Callable[[str], Style]


def _plural(n: int, word: str) -> str:
    return f"{n} {word}{'' if n == 1 else 's'}"


def summary(refl: Any) -> tuple[str, str]:
    """(text, palette role) of the one-line conclusion."""
    if not isinstance(refl, dict) or not refl:
        return DASH, "dim"
    n, seen = int(refl.get("arcs") or 0), int(refl.get("arcs_evaluated") or 0)
    going = int(refl.get("arcs_in_progress") or 0)
    status = refl.get("status")
    if status == "none found":
        return f"none found in {_plural(seen, 'arc')} (multipath {num(refl.get('mp_db'), '.1f', ' dB')})", "value"
    if n == 0:
        return f"collecting: 0 arcs accepted of {seen} evaluated, {going} in progress", "dim"
    where = " ".join(dict.fromkeys(compass((s["az_from"] + s["az_to"]) / 2) for s in refl.get("sectors") or []
                                   if isinstance(s, dict) and not s.get("tentative")))
    h, mp = num(refl.get("height_m"), ".2f", " m"), num(refl.get("mp_db"), ".1f", " dB")
    if status == "collecting":  # short enough for one line at 80 columns
        return f"collecting ({_plural(n, 'arc')}): {h} below the antenna so far, multipath {mp}", "dim"
    return f"{h} below the antenna, {_plural(n, 'arc')}, multipath {mp}" + (f" ({where})" if where else ""), "warn"


def sector_rows(refl: Any) -> list[tuple[str, str]]:
    """(text, role) per azimuth sector with accepted arcs."""
    rows = []
    for s in (refl or {}).get("sectors") or [] if isinstance(refl, dict) else []:
        if not isinstance(s, dict):
            continue
        a0, a1 = s.get("az_from"), s.get("az_to")
        if not isinstance(a0, (int, float)) or not isinstance(a1, (int, float)):
            continue
        head = f"  {f'{a0:.0f}–{a1:.0f}°':>9} {compass((a0 + a1) / 2):<2} {int(s.get('arcs') or 0):>4}  "
        h = num(s.get("height_m"), ".2f", " m")
        if s.get("tentative"):
            rows.append((head + f"collecting ({h} so far)", "dim"))
        else:
            rows.append((head + f"{h:>7}  {num(s.get('spread_m'), '.2f', ' m'):>7}  "
                         f"{num(s.get('mp_db'), '.1f', ' dB'):>7}", "value"))
    return rows


def reflection_text(refl: Any, st: StyleOf) -> Text:
    """The per-sector block shown after the map."""
    t = Text(no_wrap=True)
    cfg = (refl or {}).get("config") or {} if isinstance(refl, dict) else {}
    t.append(f"\nReflections (GNSS-IR) — satellite arcs at {num(cfg.get('el_min_deg'), '.0f')}–"
             f"{num(cfg.get('el_max_deg'), '.0f', '°')} elevation\n", st("head"))
    if not isinstance(refl, dict) or not refl:
        t.append("  no reflection analysis in this snapshot\n", st("dim"))
        return t
    t.append(f"  {int(refl.get('arcs') or 0)} accepted of {int(refl.get('arcs_evaluated') or 0)} evaluated, "
             f"{int(refl.get('arcs_in_progress') or 0)} in progress; a sector needs "
             f"{num(cfg.get('min_arcs_sector'), '.0f')} arcs\n", st("dim"))
    rows = sector_rows(refl)
    if not rows:
        t.append("  no sector has an accepted arc yet\n", st("dim"))
        return t
    t.append("     sector    arcs   height   spread  multipath (peak to peak)\n", st("dim"))
    for text, role in rows:
        t.append(text + "\n", st(role))
    return t


def obstruction_page(snap: Snapshot | None, app: Any) -> Text:
    """The obstruction page with reflections: their conclusion under the blocked and weak sectors
    (above the fold at 80x24), the sector lines under the map."""
    st = app.palette.style
    refl = dig(snap.analysis if snap else None, "reflection")
    t = obstruction_text(snap, app)
    page = Text(no_wrap=True)
    cut = t.plain.find("\n\n")  # the conclusions end at the first blank line, then the map
    cut = len(t.plain) if cut < 0 else cut
    page.append_text(t[:cut])
    text, role = summary(refl)
    page.append("\nreflections: ", st("dim"))
    page.append(text, st(role))
    page.append_text(t[cut:])
    page.append_text(reflection_text(refl, st))
    return page
