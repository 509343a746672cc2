"""TTFF cycles: restart the receiver N times and time each new first fix.

A small state machine stepped by the check loop with each new snapshot (no thread of its own),
written as a table of (state, event) -> (next state, action) so every cycle takes the same path:
wait for a fix, hold it for the settle time, send the restart (bytes to the source, or the user's
shell command), wait for the receiver to lose the fix or report a restart, then for the next fix,
which starts the next cycle's settle time. The time is the analysis' TTFF of the new start when the
analysis saw the restart (basis "receiver restart"), else the analysis' re-acquisition time from the
loss of fix the restart caused (receiver time, so a simulated speed-up measures right), else
command to first fixed epoch on the host clock. A cycle that times out waits for a fix again.
"""

from __future__ import annotations

import math
import statistics
import subprocess
from collections.abc import Callable
from typing import Any

from livefix.check.profile import TTFFCycles


def _starts(snap: Any) -> tuple[int, dict[str, Any] | None]:
    fix = (snap.analysis or {}).get("fix") or {}
    starts = fix.get("starts") or []
    return int(fix.get("starts_total") or len(starts)), (starts[-1] if starts else None)


def percentile(values: list[float], q: float) -> float:
    """Linear interpolation between order statistics (numpy's default method)."""
    xs = sorted(values)
    pos = (len(xs) - 1) * q / 100.0
    lo = math.floor(pos)
    hi = min(lo + 1, len(xs) - 1)
    return xs[lo] + (xs[hi] - xs[lo]) * (pos - lo)


# (state, event) -> (next state, action). Events are looked for in the order the state lists them.
TABLE: dict[str, tuple[tuple[str, str, str], ...]] = {
    "wait_fix": (("fix", "settle", ""), ("timeout", "done", "no_fix")),
    "settle": (("no_fix", "wait_fix", ""), ("settled", "await_restart", "send")),
    "await_restart": (("restarted", "await_fix", ""), ("timeout", "wait_fix", "restart_timeout")),
    "await_fix": (("measured", "settle", "record"), ("timeout", "wait_fix", "fix_timeout")),
    "done": (),
}


class TTFFCycler:
    def __init__(self, cfg: TTFFCycles, write: Callable[[bytes], None], *, first_fix_timeout_s: float = 600.0,
                 mark: Callable[[str], object] | None = None) -> None:
        self.cfg = cfg
        self._write = write
        self._mark = mark  # records a "receiver restart" marker so analysis and replay see the restart
        self.state = "wait_fix"
        self.cycles: list[dict[str, Any]] = []
        self.restarts_sent: list[float] = []  # stream times the restarts went out (settle is checkable)
        self._t: float | None = None  # stream time the current state began
        self._sent_mono = 0.0
        self._starts_before = 0
        self._lost_mono: float | None = None
        self._losses_before = 0
        self._restart_seen = False
        self._measured: tuple[float, str] | None = None
        self._first_timeout = first_fix_timeout_s
        self.error = ""

    @property
    def done(self) -> bool:
        return self.state == "done"

    def step(self, snap: Any) -> None:
        """Advance with the latest snapshot (stream times come from it): at most one transition."""
        if snap is None or self.done:
            return
        now = float(snap.mono)
        if not self._t:  # None, or 0.0 from a snapshot taken before any item arrived
            self._t = now
        for event, nxt, action in TABLE[self.state]:
            if self._happened(event, snap, now):
                self.state, self._t = nxt, now
                if action:
                    _ACTIONS[action](self, snap, now)
                return

    # -- events ------------------------------------------------------------------------------
    def _happened(self, event: str, snap: Any, now: float) -> bool:
        ep = snap.epoch
        fixed = ep is not None and ep.has_fix
        assert self._t is not None
        if event == "fix":
            return fixed
        if event == "no_fix":
            return not fixed
        if event == "settled":
            return now - self._t >= self.cfg.settle_s
        if event == "restarted":
            self._observe(snap)
            return self._restart_seen or self._lost_mono is not None or self._losses(snap) > self._losses_before
        if event == "measured":
            self._observe(snap)
            self._measured = self._measure(snap)
            return self._measured is not None
        if event == "timeout":
            limit = self._first_timeout if self.state == "wait_fix" else self.cfg.timeout_s
            since = self._sent_mono if self.state == "await_fix" else self._t
            return now - since > limit
        raise ValueError(event)

    def _measure(self, snap: Any) -> tuple[float, str] | None:
        ep = snap.epoch
        fix = (snap.analysis or {}).get("fix") or {}
        _, last = _starts(snap)
        reacq = fix.get("reacquisition_s") or []
        if self._restart_seen and last is not None and last.get("from") == "restart" and \
                isinstance(last.get("ttff_s"), int | float):
            return float(last["ttff_s"]), "receiver restart"
        if self._losses(snap) > self._losses_before and fix.get("current") not in (None, "none") and reacq:
            return float(reacq[-1]), "loss of fix to fix, receiver time"
        if not self._restart_seen and ep is not None and ep.has_fix and self._lost_mono is not None and \
                ep.mono > self._lost_mono:
            return ep.mono - self._sent_mono, "from command, host time"
        return None

    # -- actions -----------------------------------------------------------------------------
    def _do_no_fix(self, snap: Any, now: float) -> None:
        self.error = ("no first fix before the first restart" if not self.cycles else
                      f"no fix before cycle {len(self.cycles) + 1}")

    def _do_send(self, snap: Any, now: float) -> None:
        self._send(snap, now)

    def _do_record(self, snap: Any, now: float) -> None:
        assert self._measured is not None
        self._finish(*self._measured)

    def _do_restart_timeout(self, snap: Any, now: float) -> None:
        self._finish(None, "timeout: the receiver did not restart")

    def _do_fix_timeout(self, snap: Any, now: float) -> None:
        self._finish(None, f"timeout: no fix within {self.cfg.timeout_s:.0f} s")

    def _observe(self, snap: Any) -> None:
        total, _ = _starts(snap)
        if total > self._starts_before:
            self._restart_seen = True
        ep = snap.epoch
        if ep is not None and ep.mono > self._sent_mono and not ep.has_fix and self._lost_mono is None:
            self._lost_mono = ep.mono

    @staticmethod
    def _losses(snap: Any) -> int:
        return int(((snap.analysis or {}).get("fix") or {}).get("fix_losses") or 0)

    def _send(self, snap: Any, now: float) -> None:
        self._starts_before, _ = _starts(snap)
        self._restart_seen = False
        self._lost_mono = None
        self._losses_before = self._losses(snap)
        self._sent_mono = now
        try:
            if self.cfg.command:
                subprocess.run(self.cfg.command, shell=True, check=True, timeout=60,
                               stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
            else:
                self._write(self.cfg.send or b"")
        except (OSError, ValueError, subprocess.SubprocessError) as exc:
            self.error = f"cannot restart the receiver: {exc}"
            self.state = "done"
            return
        self.restarts_sent.append(now)
        if self._mark is not None:
            from livefix.state.model import RESTART_NOTE

            self._mark(f"{RESTART_NOTE}: {self.cfg.kind} (TTFF cycle {len(self.cycles) + 1})")

    def _finish(self, ttff: float | None, basis: str) -> None:
        self.cycles.append({"cycle": len(self.cycles) + 1, "ttff_s": None if ttff is None else round(ttff, 3),
                            "basis": basis})
        if len(self.cycles) >= self.cfg.n:
            self.state = "done"

    def summary(self) -> dict[str, Any]:
        got = [c["ttff_s"] for c in self.cycles if c["ttff_s"] is not None]
        complete = len(got) == self.cfg.n
        note = self.error or ("all cycles timed" if complete else
                              f"{len(got)} of {self.cfg.n} cycles timed")
        return {"kind": self.cfg.kind, "n": self.cfg.n, "cycles": list(self.cycles),
                "min_s": min(got) if got else None,
                "median_s": statistics.median(got) if got else None,
                "p95_s": round(percentile(got, 95), 3) if got else None,
                "passed": complete and not self.error, "note": note,
                "settle_s": self.cfg.settle_s, "timeout_s": self.cfg.timeout_s,
                "method": "restart sent as " + ("shell command" if self.cfg.command else "bytes to the receiver")}


# action name in TABLE -> the method that carries it out
_ACTIONS = {name[4:]: fn for name, fn in vars(TTFFCycler).items() if name.startswith("_do_")}
assert {a for rows in TABLE.values() for _, _, a in rows if a} <= set(_ACTIONS), "TABLE names an unknown action"
