"""Position jumps and re-convergence periods, kept out of the scatter.

Why: one jump on an RTK-fixed soak with millimetre noise (a wrong ambiguity fix, a multipath
burst) puts a fraction of the epochs metres away and makes CEP50/R95 describe the jump, not the
receiver. Scatter must describe the converged receiver, so such spells are reported on their own
(count, size, duration) and their epochs do not enter CEP/R95/V95, drift or Allan deviation.

Rule, per fix type (thresholds in AnalysisConfig, shown in the snapshot):
- settled centre: exponentially weighted mean of the accepted epochs (about EW_N epochs of
  memory) and their spread sigma (horizontal, vertical);
- after WARMUP accepted epochs, an epoch further from the centre than
  max(converge radius of its fix type, jump_sigma * sigma) opens an *excursion*; the centre is
  frozen while it lasts;
- the excursion closes when the position has been back within that limit for jump_hold_s (the
  re-convergence is part of the excursion), or, when it stays away, after jump_level_s as a new
  level: the centre moves there (the antenna was moved or the solution settled elsewhere).

The settled case of `check` (nearly every epoch of a standing receiver) has a C twin,
livefix/analysis/_epochcore_jumps.c, which hands every other case back to this code, the reference.
"""

from __future__ import annotations

import math
from collections import deque
from typing import Any

from livefix.analysis.config import AnalysisConfig
from livefix.analysis.counts import load_core, pick_core
from livefix.analysis.streaming import num
from livefix.timefmt import iso

EW_N = 300.0  # memory of the settled centre and spread, epochs
WARMUP = 20  # accepted epochs of a fix type before excursions are looked for
LIST_CAP = 100  # newest excursions listed; older ones only counted
_EW_A = 1.0 / EW_N


class _Centre:
    """Exponentially weighted centre and spread of one fix type (O(1), bounded)."""

    __slots__ = ("n", "c", "vh", "nu", "vu")

    def __init__(self) -> None:
        self.n = 0
        self.c = [0.0, 0.0, 0.0]
        self.vh = 0.0  # horizontal variance (E + N)
        self.nu = 0  # epochs with a height
        self.vu = 0.0

    def add(self, e: float, n: float, u: float) -> None:
        self.n += 1
        a = 1.0 / self.n  # max(1 / n, 1 / EW_N) without the builtin call
        if _EW_A > a:
            a = _EW_A
        c = self.c
        de, dn = e - c[0], n - c[1]
        c[0] += a * de
        c[1] += a * dn
        self.vh = (1 - a) * (self.vh + a * (de * de + dn * dn))
        if u == u:  # finite height (NaN when the epoch has none)
            self.nu += 1
            b = 1.0 / self.nu
            if _EW_A > b:
                b = _EW_A
            du = u - c[2]
            c[2] += b * du
            self.vu = (1 - b) * (self.vu + b * du * du)


_CORE = load_core("configure_jumps", _Centre, WARMUP, _EW_A, math.hypot)  # the settled case in C


class Jumps:
    """Excursion detector for all fix types; `check` says whether an epoch belongs in the scatter."""

    def __init__(self, config: AnalysisConfig, native: bool | None = None) -> None:
        """native: the settled case in C (counts.pick_core: None as LIVEFIX_PURE says)."""
        self.cfg = config
        self._core = pick_core(_CORE, native)
        self.lim_h = dict(config.converge_h)
        self.lim_v = dict(config.converge_v)
        self._lims: dict[str, tuple[float, float, float]] = {}  # fix -> (k, radius h, radius v), as limits reads them
        self.centres: dict[str, _Centre] = {}
        self.open: dict[str, dict[str, Any]] = {}  # fix -> the running excursion
        self.items: deque[dict[str, Any]] = deque(maxlen=LIST_CAP)
        self.total = 0
        self.excluded = 0  # epochs kept out of the scatter
        self.excluded_s = 0.0

    def limits(self, fix: str, c: _Centre) -> tuple[float, float]:
        """max(radius of the fix type, k sigma), horizontal and vertical (max() spelt out: hot)."""
        cfg = self.cfg
        k, sqrt = cfg.jump_sigma, math.sqrt
        lh, sh = self.lim_h.get(fix, cfg.jump_m), k * sqrt(c.vh)
        lv, sv = self.lim_v.get(fix, 2.0 * cfg.jump_m), k * sqrt(c.vu)
        return (sh if sh > lh else lh, sv if sv > lv else lv)

    def check(self, fix: str, t: float, abs_t: float | None, e: float, n: float, u: float) -> bool:
        """True when the epoch (session time t) is settled behaviour, False inside an excursion.
        `limits` and `_Centre.add` are spelt out here for the settled case (a call each per epoch)."""
        core = self._core
        if core is not None and core.jumps_settled(self, fix, e, n, u):
            return True
        c = self.centres.get(fix)
        if c is None:
            c = self.centres[fix] = _Centre()
        if c.n < WARMUP:
            c.add(e, n, u)
            return True
        lims = self._lims.get(fix)
        if lims is None:
            cfg = self.cfg
            lims = self._lims[fix] = (cfg.jump_sigma, self.lim_h.get(fix, cfg.jump_m),
                                      self.lim_v.get(fix, 2.0 * cfg.jump_m))
        k, lh, lv = lims
        vh, vu = c.vh, c.vu
        sh, sv = k * math.sqrt(vh), k * math.sqrt(vu)
        if sh > lh:
            lh = sh
        if sv > lv:
            lv = sv
        cc = c.c
        c0, c1 = cc[0], cc[1]
        dh = math.hypot(e - c0, n - c1)
        uu = u == u
        dv = abs(u - cc[2]) if uu and c.nu >= WARMUP else 0.0
        out = dh > lh or dv > lv
        x = self.open.get(fix)
        if x is None:
            if not out:  # _Centre.add(e, n, u), the same operations
                c.n = cn = c.n + 1
                a = 1.0 / cn
                if _EW_A > a:
                    a = _EW_A
                de, dn = e - c0, n - c1
                cc[0] = c0 + a * de
                cc[1] = c1 + a * dn
                c.vh = (1 - a) * (vh + a * (de * de + dn * dn))
                if uu:
                    c.nu = nu = c.nu + 1
                    b = 1.0 / nu
                    if _EW_A > b:
                        b = _EW_A
                    c2 = cc[2]
                    du = u - c2
                    cc[2] = c2 + b * du
                    c.vu = (1 - b) * (vu + b * du * du)
                return True
            x = self.open[fix] = {"t": t, "start": iso(abs_t), "fix": fix, "size_h_m": dh, "size_v_m": dv,
                                  "back": None, "last": t, "lvl": [e, n, u, 0]}
            self.total += 1
        self._note(x, t, e, n, u, dh, dv, out)
        if not out:
            if x["back"] is None:
                x["back"] = t
            elif t - x["back"] >= self.cfg.jump_hold_s:
                self._close(fix, x, "returned", x["back"])
        elif t - x["t"] >= self.cfg.jump_level_s:
            lvl = x["lvl"]
            c.c[0], c.c[1] = lvl[0], lvl[1]
            if lvl[2] == lvl[2]:
                c.c[2] = lvl[2]
            self._close(fix, x, "new_level", t)
        return False

    def _note(self, x: dict[str, Any], t: float, e: float, n: float, u: float, dh: float, dv: float,
              out: bool) -> None:
        """Size, excluded time and the running mean of the excursion's positions (a new level)."""
        self.excluded += 1
        if t > x["last"]:
            self.excluded_s += t - x["last"]
        x["last"] = t
        x["size_h_m"] = max(x["size_h_m"], dh)
        x["size_v_m"] = max(x["size_v_m"], dv)
        if out:
            x["back"] = None
        lvl = x["lvl"]
        lvl[3] += 1
        a = 1.0 / lvl[3]
        lvl[0] += a * (e - lvl[0])
        lvl[1] += a * (n - lvl[1])
        if u == u:
            lvl[2] = u if lvl[2] != lvl[2] else lvl[2] + a * (u - lvl[2])

    def _close(self, fix: str, x: dict[str, Any], how: str, end: float) -> None:
        del self.open[fix]
        self.items.append({"start": x["start"], "fix": fix, "size_h_m": num(x["size_h_m"], 3),
                           "size_v_m": num(x["size_v_m"], 3), "duration_s": num(end - x["t"], 2), "end": how})

    def snapshot(self) -> dict[str, Any]:
        items = list(self.items) + [
            {"start": x["start"], "fix": f, "size_h_m": num(x["size_h_m"], 3), "size_v_m": num(x["size_v_m"], 3),
             "duration_s": num(x["last"] - x["t"], 2), "end": "ongoing"} for f, x in sorted(self.open.items())]
        return {"count": self.total, "excluded_epochs": self.excluded, "excluded_s": num(self.excluded_s, 2),
                "items": items,
                "rule": {"radius_h_m": dict(self.lim_h), "radius_v_m": dict(self.lim_v), "sigma_k": self.cfg.jump_sigma,
                         "hold_s": self.cfg.jump_hold_s, "level_s": self.cfg.jump_level_s}}
