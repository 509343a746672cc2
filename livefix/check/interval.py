"""Checks on figures that carry a 95 % interval, and on figures of a static receiver.

Why: a drift of 11.4 mm/h against a 10 mm/h limit, with a standard error of 11-18 mm/h, is not a
failure; it is a run too short to tell. A figure with an interval passes when all of the interval
meets the limit, fails when none of it does, and otherwise is "inconclusive: run longer" with
about how long (issue 13 item 13). Static figures of a receiver that only moved are "not
measured (receiver moving)" (item 10).
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from livefix.analysis.drift import run_needed_s

# Figures with a 95 % interval: judged on the interval, not on the point value.
INTERVALS: dict[str, str] = {"derived.drift_h_mm_per_h": "position.drift_h_ci95_mm_per_h",
                             **{f"position.drift_mm_per_h.{k}": f"position.drift_ci95_mm_per_h.{k}" for k in "enu"}}
# Figures of the static receiver: not measured when the receiver only moved.
STATIC_PREFIXES = ("position.", "derived.drift_h_mm_per_h")


def judge(op: Callable[[Any, Any], bool], limit: float, measured: float, ci: tuple[float, float] | None,
          span_s: float | None) -> tuple[bool, bool, str]:
    """(passed, inconclusive, note). With a 95 % interval: pass when all of it meets the limit, fail
    when none of it does, otherwise inconclusive with about how long a run would settle it."""
    if ci is None:
        return op(measured, limit), False, ""
    lo, hi = ci
    if op(hi, limit) and op(lo, limit):
        return True, False, f"95 % interval {lo:g} .. {hi:g}"
    if not op(hi, limit) and not op(lo, limit):
        return False, False, f"95 % interval {lo:g} .. {hi:g}"
    half = (hi - measured) if measured < limit else (measured - lo)
    need = run_needed_s(span_s or 0.0, measured, half, limit)
    when = f"about {need / 3600.0:.1f} h needed" if need is not None else "the value sits on the limit"
    return False, True, f"inconclusive: run longer ({when}); 95 % interval {lo:g} .. {hi:g}"
