"""The Markdown section on reflections (analysis key `reflection`, livefix.analysis.reflectors).

Why a section of its own: the reflector height and the multipath amplitude by azimuth answer the
installer's question "what near this antenna reflects signals into it?", which no sky or C/N0 figure
answers. Every number comes from the snapshot; only the layout is here.
"""

from __future__ import annotations

from typing import Any

from livefix.report.document import fmt_value
from livefix.report.escape import md_text


def _row(cells: list[str]) -> str:
    return "| " + " | ".join(cells) + " |"


def reflection_section(refl: dict[str, Any] | None) -> list[str]:
    """Lines of the '### Reflections' section; empty when the snapshot has no reflection key."""
    if not refl:
        return []
    cfg = refl.get("config") or {}
    out = ["### Reflections (GNSS-IR)", "", md_text(refl.get("advice", "")), ""]
    if refl.get("status") == "none found":  # multipath 0: the figure a profile limit reads
        out += [f"Multipath {md_text(fmt_value(refl.get('mp_db'), 1, 'dB'))}: no arc of {refl.get('arcs_evaluated', 0)} "
                f"showed an oscillation above the detection floor of "
                f"{md_text(fmt_value(refl.get('mp_floor_db'), 2, 'dB'))} peak to peak.", ""]
    else:
        out += [f"Reflector height {md_text(fmt_value(refl.get('height_m'), 3, 'm'))} (median of {refl.get('arcs', 0)} "
                f"accepted arc{'' if refl.get('arcs') == 1 else 's'}, spread "
                f"{md_text(fmt_value(refl.get('spread_m'), 3, 'm'))}); multipath "
                f"{md_text(fmt_value(refl.get('mp_db'), 1, 'dB'))} peak to peak; {refl.get('arcs_evaluated', 0)} arcs "
                f"evaluated between {cfg.get('el_min_deg', '?')} and {cfg.get('el_max_deg', '?')} deg elevation, "
                f"{refl.get('arcs_in_progress', 0)} in progress.", ""]
    sectors = refl.get("sectors") or []
    if sectors:
        out += [_row(["Azimuth", "Arcs", "Height", "Spread", "Multipath"]), _row(["---"] * 5)]
        for s in sectors:
            note = " (tentative)" if s.get("tentative") else ""
            out.append(_row([f"{s['az_from']:g}-{s['az_to']:g} deg", f"{s['arcs']}{note}",
                             md_text(fmt_value(s.get("height_m"), 3, "m")),
                             md_text(fmt_value(s.get("spread_m"), 3, "m")),
                             md_text(fmt_value(s.get("mp_db"), 1, "dB"))]))
        out.append("")
    fresnel = refl.get("fresnel") or []
    if fresnel:
        out += ["First Fresnel zone of the median height (where on the ground the reflection happens):", "",
                _row(["Elevation", "Distance from the antenna", "Length", "Width"]), _row(["---"] * 4)]
        out += [_row([f"{f['el_deg']:g} deg", md_text(fmt_value(f.get("distance_m"), 1, "m")),
                      md_text(fmt_value(f.get("length_m"), 1, "m")), md_text(fmt_value(f.get("width_m"), 1, "m"))])
                for f in fresnel]
        out.append("")
    refused = refl.get("refused") or {}
    if refused:
        out += ["Arcs refused: " + md_text(", ".join(f"{k} {v}" for k, v in refused.items())) +
                f" (thresholds: amplitude >= {cfg.get('min_amplitude', '?')}, peak/noise >= "
                f"{cfg.get('min_peak_noise', '?')}, arc >= {cfg.get('min_span_deg', '?')} deg).", ""]
    return out
