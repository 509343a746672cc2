"""Drift keys of the position snapshot, and the empty figures of a segment with nothing to show.

Horizontal drift: the rate hypot(dE/dt, dN/dt). Its 95 % interval is read from a box made of the
two per-axis intervals, each widened to the sqrt(0.95) level (Sidak: two independent axes then
hold the true rates together with 95 % probability; conservative when they are correlated):
the nearest and farthest points of that box from zero bound the horizontal rate.
"""

from __future__ import annotations

import math
from typing import Any

from livefix.analysis.streaming import num

Z975 = 1.959963985  # standard normal 97.5 % quantile
Z_SIDAK = 2.236477  # standard normal quantile at (1 + sqrt(0.95)) / 2 (from memory; a test checks)

DRIFT_KEYS = ("drift_mm_per_h", "drift_se_mm_per_h", "drift_ci95_mm_per_h", "drift_window_mm_per_h",
              "drift_window_se_mm_per_h", "drift_h_mm_per_h", "drift_h_ci95_mm_per_h", "drift_span_s",
              "drift_rho", "drift_n_eff")


def interval(value: float | None, half: float | None) -> list[float | None] | None:
    if value is None or half is None:
        return None
    return [num(value - half, 2), num(value + half, 2)]


def horizontal(e: float | None, n: float | None, ce: float | None,
               cn: float | None) -> tuple[float | None, list[float | None] | None]:
    """Horizontal drift rate and its 95 % interval from the per-axis rates and 95 % half-widths."""
    if e is None or n is None:
        return None, None
    rate = math.hypot(e, n)
    if ce is None or cn is None:
        return num(rate, 2), None
    k = Z_SIDAK / Z975
    he, hn = k * ce, k * cn
    lo = math.hypot(max(0.0, abs(e) - he), max(0.0, abs(n) - hn))
    hi = math.hypot(abs(e) + he, abs(n) + hn)
    return num(rate, 2), [num(lo, 2), num(hi, 2)]


def drift_figures(d: dict[str, Any]) -> dict[str, Any]:
    """Snapshot keys from Track.drift(); every rate in mm/h."""
    ses, ci = d["session"], d["ci95"]
    h, h_ci = horizontal(ses.get("e"), ses.get("n"), ci.get("e"), ci.get("n"))
    return {"drift_mm_per_h": ses, "drift_se_mm_per_h": d["se"],
            "drift_ci95_mm_per_h": {k: interval(ses.get(k), ci.get(k)) for k in ("e", "n", "u")},
            "drift_window_mm_per_h": d["window"], "drift_window_se_mm_per_h": d["window_se"],
            "drift_h_mm_per_h": h, "drift_h_ci95_mm_per_h": h_ci, "drift_span_s": d["span_s"],
            "drift_rho": d["rho"], "drift_n_eff": d["n_eff"]}


def empty_figures() -> dict[str, Any]:
    """The static figures, none measured."""
    return {"cep50_m": None, "cep95_m": None, "r95_m": None, "r95_gauss_m": None, "drms2_m": None, "v95_m": None,
            "ellipse": None, "window": {}, "allan": None, "honesty": None, "samples": None, "mean": None,
            "offset_m": None, "convergence_s": None, "convergence_v_s": None} | {k: None for k in DRIFT_KEYS}
