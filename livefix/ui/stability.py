"""Stability readout: where the antenna is, how still, how honest the receiver is about it."""

from __future__ import annotations

from typing import Any

from rich.text import Text

from livefix.analysis import catalogue as cat
from livefix.ui.fmt import DASH, dig, duration, num
from livefix.ui.panel import TextPanel

M = ".3f"
# Labels and units of catalogue figures (livefix/analysis/catalogue.py), so the screen names a figure
# as the reports and profiles do. A pair shares its prefix once: "CEP50/95".
_C50, _C95 = cat.short("position.cep50_m"), cat.short("position.cep95_m")
SCATTER_LABEL = f"{_C50}/{_C95.removeprefix(_C50.rstrip('0123456789'))}"
SCATTER_UNIT = " " + cat.unit("position.cep95_m")
DRIFT_LABEL = f"{cat.short('derived.drift_h_mm_per_h')} {cat.unit('derived.drift_h_mm_per_h')}"


def _enu(d: Any, fmt: str = M, unit: str = "") -> str:
    if not isinstance(d, dict):
        return DASH
    return "  ".join(f"{k} {num(d.get(k), fmt, unit)}" for k in ("e", "n", "u"))


def _ttff(fix: dict[str, Any]) -> str:
    """A session that began with a fix never saw the receiver acquire: "not observed", never 0."""
    note = fix.get("ttff_note")
    if fix.get("ttff_s") is None and isinstance(note, str) and note.startswith("not observed"):
        return "not observed"
    return duration(fix.get("ttff_s"))


def drift_text(p: dict[str, Any], pm: str = "±") -> str:
    """Drift per axis as value ± half its 95 % interval: a slope without its uncertainty misleads."""
    d, ci = p.get("drift_mm_per_h"), p.get("drift_ci95_mm_per_h") or {}
    if not isinstance(d, dict):
        return DASH
    out = []
    for k in ("e", "n", "u"):
        iv = ci.get(k)
        half = f"{pm}{(iv[1] - iv[0]) / 2:.1f}" if isinstance(iv, list) and None not in iv else ""
        out.append(f"{k} {num(d.get(k), '.1f')}{half}")
    return "  ".join(out)


def scatter_text(a: dict[str, Any], short: bool = False) -> str:
    """CEP50/95 (and 2DRMS unless short); a moving receiver has no scatter to speak of."""
    m, p = a.get("motion") or {}, a.get("position") or {}
    if m.get("state") == "moving":
        return "not measured (receiver moving)"
    text = f"{num(p.get('cep50_m'), M)}/{num(p.get('cep95_m'), M)}{SCATTER_UNIT}" if short else (
        f"{num(p.get('cep50_m'), M)} / {num(p.get('cep95_m'), M)}{SCATTER_UNIT}"
        f"  {cat.short('position.drms2_m')} {num(p.get('drms2_m'), M)}")
    if m.get("state") == "mixed" and isinstance(m.get("moving_share"), (int, float)):
        text += f"  static part ({m['moving_share'] * 100:.0f} % moved)"
    return text


def lines(a: dict[str, Any], pm: str = "±") -> list[tuple[str, str]]:
    """(label, value) rows from the analysis dict; every missing key is a dash."""
    p = a.get("position") or {}
    mean, ref = p.get("mean") or {}, p.get("ref") or {}
    fix = a.get("fix") or {}
    avail = fix.get("availability") or {}
    has = sum(v for k, v in avail.items() if k != "none" and isinstance(v, (int, float)))
    conv, conv_v = p.get("convergence_s"), p.get("convergence_v_s")
    hon = p.get("honesty") or {}
    dop_r, dop_c = dig(a, "dop", "current", "reported") or {}, dig(a, "dop", "current", "computed") or {}
    rtk = fix.get("ttff_rtk_fixed_s")
    return [
        ("mean", f"{num(mean.get('lat'), '.7f')} {num(mean.get('lon'), '.7f')} {num(mean.get('h'), '.2f', ' m')}"),
        ("reference", f"{num(ref.get('lat'), '.7f')} {num(ref.get('lon'), '.7f')} {num(ref.get('h'), '.2f')}"
                      + (f" {ref.get('source')}" if ref.get("source") else "")),
        ("offset m", _enu(p.get("offset_m"))),
        (SCATTER_LABEL, scatter_text(a)),
        (cat.short("position.v95_m"), f"{num(p.get('v95_m'), M, ' ' + cat.unit('position.v95_m'))}  converged "
                     + ("not yet" if conv is None else f"after {duration(conv)}")
                     + ("" if conv_v is None else f" (v {duration(conv_v)})")),
        (DRIFT_LABEL, drift_text(p, pm)),
        (cat.short("fix.ttff_s"), _ttff(fix) + (f" {cat.short('fix.ttff_rtk_fixed_s')} {duration(rtk)}"
                                                if rtk is not None else "")
         + "  avail " + (f"{has * 100:.1f} %" if avail else DASH)
         + (f" lost {fix.get('fix_losses')}" if fix.get("fix_losses") is not None else "")),
        ("DOP rep/cmp", " ".join(f"{k[0].upper()} {num(dop_r.get(k), '.1f')}/{num(dop_c.get(k), '.1f')}"
                                 for k in ("pdop", "hdop", "vdop"))),
        ("sigma obs/rep", " ".join(f"{k} {num(hon.get(k + '_ratio'), '.2f')}" for k in ("lat", "lon", "h"))),
    ]


class Stability(TextPanel):
    DEFAULT_CSS = "Stability { height: 1fr; text-wrap: nowrap; text-overflow: ellipsis; }"

    def __init__(self, **kw) -> None:  # noqa: ANN003
        super().__init__(**kw)
        self.analysis: dict[str, Any] = {}

    def show(self, analysis: dict[str, Any]) -> None:
        if analysis is not self.analysis:
            self.analysis = analysis
            self.refresh()

    def _text(self) -> Text:
        st = self.app.palette.style  # type: ignore[attr-defined]
        t = Text(no_wrap=True, overflow="ellipsis")
        pm = "+-" if getattr(self.app, "ascii_only", False) else "±"
        for i, (label, value) in enumerate(lines(self.analysis, pm)):
            if i:
                t.append("\n")
            t.append(f"{label:<13} ", st("dim"))
            t.append(value, st("value"))
        return t
