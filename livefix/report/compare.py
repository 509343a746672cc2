"""Side-by-side comparison of candidate antenna spots from their analysis snapshots.

Why normalise: two sessions at two spots are recorded at different times, so they see different
satellites at different elevations. Raw means (mean C/N0, share of sky tracked) then reward the
session that happened to have more high satellites. Every figure here is therefore taken against
the sky geometry: C/N0 as a residual against one stated C/N0-vs-elevation curve, averaged with
equal weight over the 10° elevation bands every session observed (and, inside a band, with equal
weight per sky cell, so each direction counts once however many passes crossed it); obstruction
only over the sky cells every session had a chance to see; scatter only between equal fix types.

The thresholds (tolerances within which two figures count as equal) live in `CompareRules`, with
their sources in `RULE_SOURCES`; both are written into the comparison document.
"""

from __future__ import annotations

import math
import statistics
import time
from dataclasses import asdict, dataclass
from typing import Any

from livefix import __version__
from livefix.analysis import paths
from livefix.analysis.config import AnalysisConfig
from livefix.analysis.sky import BLOCKED_SHARE, MIN_N, N_AZ, N_EL, SkyMap
from livefix.report.compare_words import recommendation, why
from livefix.report.document import CAUTIONS
from livefix.report.plot_style import fix_style
from livefix.timefmt import iso

FORMAT = "livefix-compare/1"


@dataclass(frozen=True, slots=True)
class CompareRules:
    """The expectation curve and the tolerances of each figure (see RULE_SOURCES)."""

    cn0_5deg_dbhz: float = 32.0  # expected C/N0 at 5° elevation ...
    cn0_zenith_dbhz: float = 48.0  # ... and at zenith, linear in sin(elevation) between
    band_deg: int = 10  # elevation band of the C/N0 residual
    cn0_residual_db: float = 1.0  # equal within this (dB)
    cn0_spread_db: float = 0.5  # C/N0 scatter across azimuth within a band: equal within (dB)
    obstructed_share: float = 0.05  # share of the common sky obstructed: equal within 5 points
    sector_deg: int = 45  # azimuth sectors of the obstruction table
    weak_sectors: int = 0  # number of weak-signal sectors: equal only when the counts are equal
    mp_db: float = 1.0  # GNSS-IR multipath amplitude: equal within (dB)
    availability: float = 0.01  # fix share after the first fix: equal within 1 point
    cep95_rel: float = 0.25  # CEP95 of the same fix type: equal within 25 % of the smaller
    weak_evidence_s: float = 3600.0  # sessions shorter than this are weak evidence
    min_session_s: float = 60.0  # no recommendation when a session is shorter than this


# source of each tolerance, keyed by figure; "expectation" is the C/N0 curve
RULE_SOURCES: dict[str, str] = {
    "expectation": "C/N0 = c5 + (c90 - c5)(sin el - sin 5°)/(1 - sin 5°) with c5 32 dB-Hz and c90 "
                   "48 dB-Hz: common practice for a survey antenna and a current receiver; brackets the "
                   "typical 37-45 dB-Hz of GPS L1 C/A (Inside GNSS, Nov/Dec 2010)",
    "cn0_residual_db": "common practice: sky cells of an open site scatter 1-2 dB about the C/N0 curve, "
                       "so band means of two sessions differ by up to about 1 dB without cause",
    "cn0_spread_db": "common practice: C/N0 of an open site varies by 1-2 dB with azimuth at one "
                     "elevation; reflections and thin obstructions raise it by several dB",
    "obstructed_share": "common practice: a 5-point difference is about two 10° x 5° cells in every "
                        "45° sector, below what a few passes resolve",
    "weak_sectors": "sky sectors the signal analysis flags as weak: cells whose mean C/N0 is the weak-sector "
                    "threshold of the analysis settings (5 dB by default, common practice) below the "
                    "session's own C/N0 curve",
    "mp_db": "common practice: GNSS-IR amplitudes of one site vary by about 1 dB from arc to arc",
    "availability": "common practice: one percentage point of the session",
    "cep95_m": "common practice: the 95th percentile of minutes of correlated position error rarely "
                 "repeats closer than about 25 %",
    "min_session_s": "common practice: the first minute of a session is mostly acquisition, so a shorter "
                     "one says nothing settled about the spot",
    "weak_evidence_s": "common practice: an hour sees satellites rise and set across most of the sky; "
                       "a shorter session samples only part of it",
}


@dataclass(frozen=True, slots=True)
class Session:
    """One candidate spot: a name for people, where it came from and its analysis snapshot."""

    name: str
    source: str
    kind: str  # "recording", "NMEA log", "report JSON" or "snapshot JSON"
    analysis: dict[str, Any]


def expected_cn0(el_deg: float, rules: CompareRules) -> float:
    """The stated expectation curve (RULE_SOURCES["expectation"]), dB-Hz."""
    s5 = math.sin(math.radians(5.0))
    k = (math.sin(math.radians(el_deg)) - s5) / (1.0 - s5)
    return rules.cn0_5deg_dbhz + (rules.cn0_zenith_dbhz - rules.cn0_5deg_dbhz) * k


def _num(v: Any) -> bool:
    return isinstance(v, int | float) and not isinstance(v, bool) and math.isfinite(v)


def _grid(a: dict[str, Any]) -> dict[str, Any] | None:
    """The sky grid (rows by elevation, columns by azimuth) when it has the shape sky.py writes."""
    g = (a.get("sky") or {}).get("grid") or {}
    tr, un = g.get("tracked"), g.get("untracked")
    ok = (isinstance(tr, list) and isinstance(un, list) and len(tr) == N_EL == len(un)
          and all(isinstance(r, list) and len(r) == N_AZ for r in tr + un))
    return g if ok and g.get("el_step") == 90 // N_EL and g.get("az_step") == 360 // N_AZ else None


def band_residuals(a: dict[str, Any], rules: CompareRules) -> tuple[dict[int, dict[str, Any]], str]:
    """Per elevation band (keyed by its lower edge): mean C/N0 residual against the curve and the
    scatter of the cell residuals across azimuth. From the sky cells when the snapshot has them
    (equal weight per cell with MIN_N tracked samples, each cell against the curve at its centre);
    otherwise from signal.by_elevation (band mean against the curve at the band centre)."""
    g = _grid(a)
    out: dict[int, dict[str, Any]] = {}
    if g is not None and isinstance(g.get("cn0"), list) and len(g["cn0"]) == N_EL:
        step = g["el_step"]
        per: dict[int, list[float]] = {}
        for r, row in enumerate(g["cn0"]):
            for j, c in enumerate(row if isinstance(row, list) else []):
                if _num(c) and j < N_AZ and (g["tracked"][r][j] or 0) >= MIN_N:
                    band = int(r * step // rules.band_deg * rules.band_deg)
                    per.setdefault(band, []).append(c - expected_cn0(r * step + step / 2, rules))
        for band, res in sorted(per.items()):
            out[band] = {"residual_db": round(statistics.fmean(res), 2), "cells": len(res),
                         "spread_db": round(statistics.stdev(res), 2) if len(res) > 1 else None}
        if out:
            return out, "sky cells"
    for b in (a.get("signal") or {}).get("by_elevation") or []:
        lo, hi, m = b.get("from"), b.get("to"), b.get("mean")
        if _num(lo) and _num(hi) and _num(m) and (b.get("n") or 0) > 0:
            out[int(lo)] = {"residual_db": round(m - expected_cn0((lo + hi) / 2, rules), 2), "cells": None,
                            "spread_db": None}
    return out, "elevation bands"


def _seen_cells(a: dict[str, Any], mask_deg: float) -> dict[tuple[int, int], bool]:
    """(elevation row, azimuth column) -> obstructed, for cells above the mask with MIN_N samples."""
    g = _grid(a)
    if g is None:
        return {}
    r0 = math.ceil(mask_deg / g["el_step"] - 1e-9)
    out = {}
    for r in range(r0, N_EL):
        for j in range(N_AZ):
            t, u = g["tracked"][r][j] or 0, g["untracked"][r][j] or 0
            if t + u >= MIN_N:
                out[(r, j)] = u / (t + u) >= BLOCKED_SHARE  # the sky map's own rule (analysis/sky.py)
    return out


def blocked_columns(a: dict[str, Any]) -> list[int | None]:
    """Per 10° azimuth column: blocked below this elevation (0 clear, None no data), by the sky
    map's own rule (SkyMap.column_blocked) applied to the snapshot's grid."""
    g = _grid(a)
    if g is None:
        return [None] * N_AZ
    m = SkyMap(AnalysisConfig())
    m.tracked = [int(v or 0) for row in g["tracked"] for v in row]
    m.untracked = [int(v or 0) for row in g["untracked"] for v in row]
    return m.column_blocked()


def decide(values: list[float | None], better: str, tol: float, relative: bool = False) -> tuple[str, list[int]]:
    """("better" | "equal" | "not compared", indices of the best sessions). A session is among the
    best when its value is within the tolerance of the best value."""
    if len(values) < 2 or any(v is None for v in values):
        return "not compared", []
    vals = [float(v) for v in values if v is not None]
    top = min(vals) if better == "lower" else max(vals)
    within = [abs(v - top) <= (tol * max(min(abs(v), abs(top)), 1e-12) if relative else tol) + 1e-9
              for v in vals]
    if all(within):
        return "equal", list(range(len(vals)))
    return "better", [i for i, w in enumerate(within) if w]


def _figure(key: str, label: str, unit: str, better: str, tol: float, tol_text: str,
            values: list[float | None], detail: list[Any], why_missing: str = "",
            relative: bool = False) -> dict[str, Any]:
    outcome, best = decide(values, better, tol, relative)
    return {"key": key, "label": label, "unit": unit, "better": better, "tolerance": tol,
            "tolerance_text": tol_text, "values": values, "detail": detail, "outcome": outcome,
            "best": best, "why_not_compared": why_missing if outcome == "not compared" else ""}


def cn0_figures(sessions: list[Session], rules: CompareRules) -> list[dict[str, Any]]:
    per = [band_residuals(s.analysis, rules) for s in sessions]
    common = sorted(set.intersection(*(set(b) for b, _ in per))) if per else []
    res: list[float | None] = []
    spread: list[float | None] = []
    detail = []
    # the scatter needs two cells in a band: over the common bands where every session has two
    spread_bands = [b for b in common if all(bands[b]["spread_db"] is not None for bands, _ in per)]
    for bands, basis in per:
        res.append(round(statistics.fmean(bands[b]["residual_db"] for b in common), 2) if common else None)
        sp = [bands[b]["spread_db"] for b in spread_bands]
        spread.append(round(statistics.fmean(sp), 2) if sp else None)
        detail.append({"basis": basis, "bands": [{"from": b, "to": b + rules.band_deg, **bands[b],
                                                  "common": b in common} for b in sorted(bands)]})
    missing = "no elevation band observed by every session" if not common else ""
    return [
        _figure("cn0_residual_db", "C/N0 residual against the expected curve", "dB", "higher",
                rules.cn0_residual_db, f"equal within {rules.cn0_residual_db:g} dB", res, detail,
                missing or "no C/N0 by elevation"),
        _figure("cn0_spread_db", "C/N0 scatter across azimuth within a band", "dB", "lower",
                rules.cn0_spread_db, f"equal within {rules.cn0_spread_db:g} dB", spread,
                [{"bands": len(spread_bands)}] * len(sessions), missing or "needs two sky cells in every band"),
    ]


def obstruction_figure(sessions: list[Session], rules: CompareRules) -> dict[str, Any]:
    mask = AnalysisConfig().elev_mask_deg
    cells = [_seen_cells(s.analysis, mask) for s in sessions]
    common = set.intersection(*(set(c) for c in cells)) if cells else set()
    n_sec = 360 // rules.sector_deg
    values: list[float | None] = []
    detail = []
    for c in cells:
        secs = []
        for k in range(n_sec):
            ks = [key for key in common if key[1] * (360 // N_AZ) // rules.sector_deg == k]
            blocked = sum(c[key] for key in ks)
            secs.append({"az_from": k * rules.sector_deg, "az_to": (k + 1) * rules.sector_deg, "cells": len(ks),
                         "obstructed_share": round(blocked / len(ks), 3) if ks else None})
        values.append(round(sum(c[k] for k in common) / len(common), 3) if common else None)
        detail.append({"common_cells": len(common), "own_cells": len(c), "sectors": secs})
    return _figure("obstructed_share", "Share of the common sky obstructed", "ratio", "lower",
                   rules.obstructed_share, f"equal within {rules.obstructed_share * 100:g} percentage points", values,
                   detail, "no sky cell seen by every session")


def other_figures(sessions: list[Session], rules: CompareRules) -> list[dict[str, Any]]:
    a = [s.analysis for s in sessions]
    weak = [(x.get("signal") or {}).get("weak_sectors") for x in a]
    weak_n: list[float | None] = [float(len(w)) if isinstance(w, list) else None for w in weak]
    mp = [paths.figure(x, "reflection.mp_db")[0] for x in a]
    avail = [paths.figure(x, "fix.fix_share_after_first_fix")[0] for x in a]
    avail = [None if v is None else round(min(v, 1.0), 4) for v in avail]
    fixes = [dominant_fix(x) for x in a]
    same = len({f for f, _ in fixes}) == 1 and fixes[0][0] is not None
    cep: list[float | None] = [c if same else None for _, c in fixes]
    return [
        _figure("weak_sectors", "Weak-signal sky sectors", "count", "lower", rules.weak_sectors,
                "equal only when the counts are equal", weak_n, [w or [] for w in weak], "not measured"),
        _figure("mp_db", "Multipath amplitude (GNSS-IR)", "dB", "lower", rules.mp_db,
                f"equal within {rules.mp_db:g} dB", mp, [(x.get("reflection") or {}).get("status") for x in a],
                "not estimated in every session (needs satellites crossing the low elevation window)"),
        _figure("availability", "Fix availability after the first fix", "ratio", "higher", rules.availability,
                f"equal within {rules.availability * 100:g} percentage point", avail, [None] * len(a), "not measured"),
        _figure("cep95_m", "CEP95 of the dominant fix type", "m", "lower", rules.cep95_rel,
                f"equal within {rules.cep95_rel * 100:g} %", cep, [{"fix": f, "label": fix_label(f), "cep95_m": c} for f, c in fixes],
                "dominant fix types differ (" + " vs ".join(fix_label(f) for f, _ in fixes) + "): scatter is "
                "compared only between equal fix types" if not same else "not measured", relative=True),
    ]


def fix_label(name: str | None) -> str:
    """A fix type for people (the report plots' label: "RTK fixed", "DGNSS")."""
    return "not measured" if name is None else fix_style(name).label


def dominant_fix(a: dict[str, Any]) -> tuple[str | None, float | None]:
    """The fix type with the largest share of scatter epochs, and its CEP95 (m)."""
    by_fix = (a.get("position") or {}).get("by_fix") or {}
    best = max(((v.get("n") or 0, k) for k, v in by_fix.items() if isinstance(v, dict)), default=(0, None))
    if not best[0]:
        return None, None
    c = by_fix[best[1]].get("cep95_m")
    return best[1], float(c) if _num(c) else None


def session_facts(s: Session, rules: CompareRules) -> dict[str, Any]:
    a = s.analysis
    st, fix = a.get("stream") or {}, a.get("fix") or {}
    starts = fix.get("starts") or [{}]
    dur = st.get("duration_s")
    return {"name": s.name, "source": s.source, "kind": s.kind, "start": (starts[0] or {}).get("start"),
            "duration_s": dur, "epochs": st.get("epochs"), "rate_hz": st.get("rate_hz"),
            "weak_evidence": not _num(dur) or dur < rules.weak_evidence_s,
            "mean_cn0_dbhz": (a.get("signal") or {}).get("cn0_mean_dbhz"),
            "visible_share": (a.get("sky") or {}).get("visible_share"),
            "obstructed": [x.get("text") for x in (a.get("sky") or {}).get("obstructed") or []],
            "blocked_below_deg": blocked_columns(a), "internal_errors": a.get("internal_errors", 0)}


def compare(sessions: list[Session], rules: CompareRules | None = None) -> dict[str, Any]:
    """The comparison document (JSON-able); renderers read only this."""
    rules = rules or CompareRules()
    figures = [obstruction_figure(sessions, rules), *cn0_figures(sessions, rules),
               *other_figures(sessions, rules)]
    names = [s.name for s in sessions]
    for f in figures:
        f["why"] = why(f, names)
    facts = [session_facts(s, rules) for s in sessions]
    return {"format": FORMAT, "livefix_version": __version__, "generated": iso(time.time()),
            "sessions": facts, "rules": asdict(rules), "rule_sources": RULE_SOURCES, "figures": figures,
            "recommendation": recommendation(figures, facts, rules), "cautions": list(CAUTIONS)}
