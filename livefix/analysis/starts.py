"""TTFF starts: one record per start of the receiver as the session saw it, and when TTFF counts.

Why a rule for "observed": a session that begins while the receiver already has its fix never saw
it acquire, so its time to first fix is unknown: null ("not observed"), never 0 and never a pass.
A start is the first epoch of the session (or after a statistics reset), or the first epoch after
a restart (livefix commanded it, or the receiver restarted by itself). Each TTFF key is observed
after a restart, or when the start's first epoch with a position sentence lacked that fix.
"""

from __future__ import annotations

from typing import Any

from livefix.analysis.streaming import num
from livefix.timefmt import iso

# TTFF key -> GGA quality it waits for (None: any fix).
TTFF_KEYS: tuple[tuple[str, int | None], ...] = (("ttff_s", None), ("ttff_dgnss_s", 2), ("ttff_rtk_fixed_s", 4))
NOT_OBSERVED = {"stream": "not observed: the session began with a fix",
                "reset": "not observed: statistics were reset"}
OBSERVABLE = frozenset({"stream"})  # starts whose TTFF counts when they begin without that fix


def new_start(t: float, abs_t: float | None, cause: str, commanded: bool = False) -> dict[str, Any]:
    """A start record; keys beginning with '_' and "t" are internal (left out of snapshots)."""
    s: dict[str, Any] = {"start": iso(abs_t), "from": cause, "t": t, "ttff_s": None, "ttff_dgnss_s": None,
                         "ttff_rtk_fixed_s": None, "observed": cause == "restart", "_q0": None,
                         "_wait": TTFF_KEYS}
    if cause == "restart":
        s["commanded"] = commanded
    return s


def first_epoch(s: dict[str, Any], quality: int, fixed: bool) -> None:
    """The start's first epoch with a position sentence: did the session see it without a fix?"""
    if s["_q0"] is None:
        s["_q0"] = quality if fixed else 0
        s["observed"] = s["observed"] or (s["from"] in OBSERVABLE and not fixed)


def on_fix(s: dict[str, Any], t: float, q: int) -> None:
    """A fixed epoch of quality q at session time t: set the TTFF keys it is the first of."""
    wait = s["_wait"]
    if not wait:
        return  # every fix type of this start already came (the usual case after the first fix)
    for item in wait:
        key, want = item
        if want is None or q == want:
            s["_wait"] = wait = tuple(w for w in wait if w is not item)
            q0 = s["_q0"]
            if s["observed"] or (s["from"] in OBSERVABLE and (q0 == 0 if want is None else q0 != want)):
                s[key] = num(t - s["t"], 3)


def ttff_note(s: dict[str, Any]) -> str | None:
    """Why ttff_s is null, for people (None when it is set)."""
    if not s or s.get("ttff_s") is not None:
        return None
    if any(key == "ttff_s" for key, _ in s["_wait"]):
        return "no fix yet"
    return NOT_OBSERVED.get(s["from"], "not observed")


def public(s: dict[str, Any]) -> dict[str, Any]:
    return {k: v for k, v in s.items() if k != "t" and k[0] != "_"}
