"""TTFF cycles: restart the receiver N times and time each new first fix.

A small state machine stepped by the check loop with each new snapshot (no thread of its own):
wait for a fix, settle, send the restart (bytes to the source, or the user's shell command),
wait for the receiver to lose the fix or report a restart, then for the next fix. The time is the
analysis' TTFF of the new start when the analysis saw the restart (basis "receiver restart"), else
the analysis' re-acquisition time from the loss of fix the restart caused (receiver time, so a
simulated speed-up measures right), else command to first fixed epoch on the host clock.
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


class TTFFCycler:
    def __init__(self, cfg: TTFFCycles, write: Callable[[bytes], None], *, first_fix_timeout_s: float = 600.0,
                 mark: Callable[[str], object] | None = None) -> None:
        self.cfg = cfg
        self._write = write
        self._mark = mark  # records a "receiver restart" marker so analysis and replay see the restart
        self.state = "first_fix"
        self.cycles: list[dict[str, Any]] = []
        self._t = 0.0  # stream time the current state began
        self._sent_mono = 0.0
        self._starts_before = 0
        self._lost_mono: float | None = None
        self._losses_before = 0
        self._restart_seen = False
        self._first_timeout = first_fix_timeout_s
        self.error = ""

    @property
    def done(self) -> bool:
        return self.state == "done"

    def _set(self, state: str, now: float) -> None:
        self.state, self._t = state, now

    def step(self, snap: Any) -> None:
        """Advance with the latest snapshot (stream times come from it)."""
        if snap is None or self.done:
            return
        now = float(snap.mono)
        ep = snap.epoch
        fixed = ep is not None and ep.has_fix
        if self.state == "first_fix":
            if self._t == 0.0:
                self._t = now
            if fixed:
                self._set("settle", now)
            elif now - self._t > self._first_timeout:
                self.error = "no first fix before the first restart"
                self._set("done", now)
        elif self.state == "settle":
            if now - self._t >= self.cfg.settle_s:
                self._send(snap, now)
        elif self.state == "await_restart":
            self._observe(snap)
            if self._restart_seen or self._lost_mono is not None or self._losses(snap) > self._losses_before:
                self._set("await_fix", now)
            elif now - self._t > self.cfg.timeout_s:
                self._finish(None, "timeout: the receiver did not restart")
        elif self.state == "await_fix":
            self._observe(snap)
            fix = (snap.analysis or {}).get("fix") or {}
            _, last = _starts(snap)
            reacq = fix.get("reacquisition_s") or []
            if self._restart_seen and last is not None and last.get("from") == "restart" and \
                    isinstance(last.get("ttff_s"), int | float):
                self._finish(float(last["ttff_s"]), "receiver restart")
            elif self._losses(snap) > self._losses_before and fix.get("current") not in (None, "none") and reacq:
                self._finish(float(reacq[-1]), "loss of fix to fix, receiver time")
            elif not self._restart_seen and fixed and self._lost_mono is not None and ep.mono > self._lost_mono:
                self._finish(ep.mono - self._sent_mono, "from command, host time")
            elif now - self._sent_mono > self.cfg.timeout_s:
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
            self._set("done", now)
            return
        if self._mark is not None:
            from livefix.state.model import RESTART_NOTE

            self._mark(f"{RESTART_NOTE}: {self.cfg.kind} (TTFF cycle {len(self.cycles) + 1})")
        self._set("await_restart", now)

    def _finish(self, ttff: float | None, basis: str) -> None:
        self.cycles.append({"cycle": len(self.cycles) + 1, "ttff_s": None if ttff is None else round(ttff, 3),
                            "basis": basis})
        self._set("done" if len(self.cycles) >= self.cfg.n else "settle", self._t)
        self._t = self._sent_mono if ttff is None else self._t

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
                "method": "restart sent as " + ("shell command" if self.cfg.command else "bytes to the receiver")}
