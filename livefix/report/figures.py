"""The site record of one receiver as numbers: the `record` object of the report JSON.

Why apart from the analysis snapshot: the snapshot is the analysis' working view (keys of every
stage, current values, grids); the record is the short list of facts a site acceptance record is
made of, every key naming its unit, so a program reading reports months later needs no knowledge
of the analysis. The text renderers (livefix.report.facts) format this very object, so the JSON
and the documents cannot disagree. Schema: docs/report.schema.json.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

from livefix.geodesy import LocalFrame

HASH_BLOCK = 1 << 20  # bytes read at a time while hashing the input
# Headline fix order when the position statistics name none (best first): common practice
FIX_ORDER = ("rtk_fixed", "rtk_float", "dgnss", "single", "pps", "estimated", "manual", "simulator")
DOP_KEYS = ("pdop", "hdop", "vdop")


def file_sha256(path: str | None) -> tuple[str | None, int | None]:
    """SHA-256 and size of a regular file as given (streamed); (None, None) for anything else."""
    if not path:
        return None, None
    p = Path(path)
    try:
        if not p.is_file():
            return None, None
        import hashlib  # here: `report --json` never hashes, and start-up is timed

        h, size = hashlib.sha256(), 0
        with p.open("rb") as f:
            while block := f.read(HASH_BLOCK):
                h.update(block)
                size += len(block)
        return h.hexdigest(), size
    except OSError:
        return None, None


def _g(d: Any, *keys: str) -> Any:
    for k in keys:
        if not isinstance(d, dict):
            return None
        d = d.get(k)
    return d


def headline_fix(analysis: dict[str, Any]) -> str | None:
    """The fix type the record's position is the median of: the position statistics' headline
    fix (best type with enough epochs), else the best type that has a median at all."""
    by_fix = _g(analysis, "session", "median", "by_fix") or {}
    fix = _g(analysis, "position", "fix")
    if fix in by_fix:
        return fix
    return next((f for f in FIX_ORDER if f in by_fix), next(iter(by_fix), None))


def measurement(analysis: dict[str, Any]) -> dict[str, Any]:
    s = analysis.get("session") or {}
    return {"start_utc": s.get("start_utc"), "end_utc": s.get("end_utc"), "duration_s": s.get("duration_s"),
            "date_known": s.get("date_known"), "start_host": s.get("start_host"), "end_host": s.get("end_host"),
            "duration_host_s": s.get("duration_host_s"),
            "host_minus_utc_start_s": _g(s, "host_minus_utc_s", "start"),
            "host_minus_utc_end_s": _g(s, "host_minus_utc_s", "end"), "epochs": s.get("epochs")}


def position(analysis: dict[str, Any]) -> dict[str, Any]:
    fix = headline_fix(analysis)
    m = _g(analysis, "session", "median", "by_fix", fix) if fix else None
    datum = _g(analysis, "session", "datum")
    m = m or {}
    return {"fix": fix, "epochs": m.get("n", 0), "lat_deg": m.get("lat"), "lon_deg": m.get("lon"),
            "h_ellipsoidal_m": m.get("h"), "geoid_separation_m": m.get("sep"), "h_msl_m": m.get("alt_msl"),
            "datum_local": None if not datum else datum.get("local"),
            "datum_reference": None if not datum else datum.get("reference"),
            "resolution_m": m.get("resolution_m"), "estimator": _g(analysis, "session", "median", "estimator")}


def reference(pos: dict[str, Any], ref: dict[str, Any] | None) -> dict[str, Any] | None:
    """The median position's offset from the user's reference point in east/north/up about it."""
    if not ref or ref.get("lat") is None:
        return None
    out: dict[str, Any] = {"source": ref.get("source") or "--ref", "lat_deg": ref["lat"], "lon_deg": ref["lon"],
                           "h_ellipsoidal_m": ref.get("h"), "offset_e_m": None, "offset_n_m": None,
                           "offset_u_m": None, "offset_horizontal_m": None}
    if pos.get("lat_deg") is None:
        return out
    h_ref = float(ref.get("h") or 0.0)
    h = pos.get("h_ellipsoidal_m")
    e, n, u = LocalFrame(ref["lat"], ref["lon"], h_ref).enu(pos["lat_deg"], pos["lon_deg"],
                                                            h if h is not None else h_ref)
    out.update(offset_e_m=round(e, 4), offset_n_m=round(n, 4), offset_u_m=None if h is None else round(u, 4),
               offset_horizontal_m=round(math.hypot(e, n), 4))
    return out


def scatter(analysis: dict[str, Any]) -> dict[str, Any]:
    by_fix = _g(analysis, "position", "by_fix") or {}
    return {fix: {"share": f.get("share"), "epochs": f.get("n"), "cep50_m": f.get("cep50_m"),
                  "cep95_m": f.get("cep95_m"), "v95_m": f.get("v95_m")} for fix, f in by_fix.items()}


def dop(analysis: dict[str, Any]) -> dict[str, Any]:
    d = analysis.get("dop") or {}
    return {kind: {k: {"median": _g(d, kind, k), "p95": _g(d, "p95", kind, k)} for k in DOP_KEYS}
            for kind in ("reported", "computed")}


def availability(analysis: dict[str, Any]) -> dict[str, Any]:
    f, st = analysis.get("fix") or {}, analysis.get("stream") or {}
    shares = f.get("availability") or {}
    fixed = sum(v for k, v in shares.items() if k != "none" and v is not None) if shares else None
    return {"fix_share": None if fixed is None else round(fixed, 5), "by_fix_share": shares,
            "outages": f.get("outages_total"), "longest_outage_s": f.get("longest_outage_s"),
            "jumps": f.get("jumps_total"), "position_jumps": _g(analysis, "position", "jumps", "count"),
            "stalls": st.get("stall_count"), "data_gaps": _g(st, "data_gaps", "count"),
            "data_gap_s": _g(st, "data_gaps", "total_s")}


def timing(analysis: dict[str, Any]) -> dict[str, Any]:
    f, p = analysis.get("fix") or {}, analysis.get("position") or {}
    drift, ci = p.get("drift_mm_per_h"), p.get("drift_ci95_mm_per_h") or {}
    half = {}
    for k in ("e", "n", "u"):
        iv = ci.get(k) if isinstance(ci, dict) else None
        half[k] = round((iv[1] - iv[0]) / 2, 1) if isinstance(iv, list) and None not in iv else None
    hi = p.get("drift_h_ci95_mm_per_h")
    return {"ttff_s": f.get("ttff_s"), "ttff_observed": f.get("ttff_observed"),
            "ttff_rtk_fixed_s": f.get("ttff_rtk_fixed_s"),
            "convergence_h_s": p.get("convergence_s"), "convergence_v_s": p.get("convergence_v_s"),
            "drift_mm_per_h": drift if isinstance(drift, dict) else None,
            "drift_ci95_half_mm_per_h": half if isinstance(drift, dict) else None,
            "drift_h_mm_per_h": p.get("drift_h_mm_per_h"),
            "drift_h_ci95_mm_per_h": hi if isinstance(hi, list) else None}


def sky(analysis: dict[str, Any]) -> dict[str, Any]:
    s, sig = analysis.get("sky") or {}, analysis.get("signal") or {}
    return {"clear_above_deg": s.get("clear_above_deg"), "visible_share": s.get("visible_share"),
            "obstructed": [{"az_from_deg": x.get("az_from"), "az_to_deg": x.get("az_to"),
                            "below_el_deg": x.get("below_el")} for x in s.get("obstructed") or []],
            "weak_sectors": [{"az_from_deg": x.get("az_from"), "az_to_deg": x.get("az_to"),
                              "el_from_deg": x.get("el_from"), "el_to_deg": x.get("el_to"),
                              "below_curve_db": x.get("below_curve_db")} for x in sig.get("weak_sectors") or []],
            "weak_sector_db": sig.get("weak_sector_db")}


def record(analysis: dict[str, Any], meta: dict[str, Any], *, source: str | None = None,
           results: list[dict[str, Any]] | None = None, sha256: str | None = None,
           size: int | None = None) -> dict[str, Any]:
    """The record of one receiver from its analysis snapshot and the report's meta."""
    pos = position(analysis)
    sats = analysis.get("satellites") or {}
    sig = analysis.get("signal") or {}
    return {
        "measurement": measurement(analysis),
        "position": pos,
        "reference": reference(pos, meta.get("ref")),
        "scatter": scatter(analysis),
        "dop": dop(analysis),
        "satellites": {"epochs": sats.get("epochs"), "by_system": sats.get("by_system") or {}},
        "cn0_by_elevation": [{"from_deg": b.get("from"), "to_deg": b.get("to"), "mean_dbhz": b.get("mean"),
                              "samples": b.get("n")} for b in sig.get("by_elevation") or []],
        "sky": sky(analysis),
        "availability": availability(analysis),
        "timing": timing(analysis),
        "provenance": {"input": source, "input_sha256": sha256, "input_bytes": size,
                       "livefix_version": meta.get("livefix_version"),
                       "thresholds": None if results is None else [
                           {"name": r.get("name"), "description": r.get("description"), "metric": r.get("metric"),
                            "op": r.get("op"),
                            "limit": r.get("limit"), "unit": r.get("unit"), "source": r.get("source")}
                           for r in results]},
    }
