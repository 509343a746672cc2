"""Signal quality: C/N0 per satellite, constellation and elevation band, the expected C/N0-vs-elevation
curve of this session, weak satellites, and broadband drops that point to interference.

Why a session curve: antennas, cables and receivers differ by several dB, so "weak" is judged
against what this installation does at the same elevation, not against a fixed number.
Session figures (means, bands, curve) sample the latest epoch once per second of stream time, so
a 10 Hz and a 1 Hz stream weigh the sky alike; "current" is the latest epoch.
Curve: least squares cn0 = a + b·sin(el) from running sums (bounded, exact).
The satellite loops run in C when built (livefix/analysis/_sigcore.c); these Python loops are its
reference and take over from the first satellite it leaves (odd types, values Python raises on).
Interference (common practice; NAVITEC 2010, docs/sources.md#interference-indicator): a jammer
lowers C/N0 on every satellite at once regardless of direction, whereas blockage and multipath hit
particular sectors. Each signal keeps a slow baseline (exponential, 30 s time constant, frozen while
an event is open); an event opens when ≥ 70 % of the satellites with a baseline dropped by at least
config.interference_drop_db and the median drop is that large, and closes when the median drop is
back under half of it. A satellite that lost lock counts as dropped in the share, but the median
is taken over the ≥ 4 satellites still tracked: losing everything at once (antenna or cable fault,
receiver restart) is an outage, reported by the fix statistics, not interference.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

from livefix.analysis import signal_native
from livefix.analysis.config import AnalysisConfig
from livefix.state.epoch import Epoch, Event, SatObs
from livefix.timefmt import iso

BASE_TAU_S = 30.0  # baseline time constant
BASE_MIN_N = 5  # epochs before a baseline counts
LOST_S = 10.0  # a signal missing from view this recently counts as lost (dropped)
FORGET_S = 60.0  # baselines of signals gone this long are forgotten (bounded memory)
SHARE = 0.70
MIN_MEASURED = 4  # still-tracked satellites needed to call (or end) an event
LOST_CN0 = 20.0  # assumed C/N0 of a signal that lost lock, dB-Hz (common practice: tracking floor)
WEAK_DB = 8.0  # this far below the session curve = weak
CURVE_MIN_N = 100
MAX_LIST = 100
MAX_SATS = 128  # per-satellite list in the snapshot (current epoch)
EVAL_S = 0.95  # session sums and interference use epochs at least this far apart (stream time)
# weak sectors: cells of SECTOR_AZ x SECTOR_EL degrees (the obstruction map's scale, coarser so a
# cell gathers samples), judged once they hold SECTOR_MIN_N samples (a satellite-minute at the
# one-per-second sampling above)
SECTOR_AZ, SECTOR_EL, SECTOR_MIN_N = 30, 15, 60
_SIN = [math.sin(math.radians(e)) for e in range(91)]
_BAND = [min(e // 10, 8) for e in range(91)]  # 10-degree band of a whole-degree elevation (90 joins 80-90)
_CELL_EL = [min(e, 89) // SECTOR_EL for e in range(91)]  # sector row of a whole-degree elevation
_NO_SYSTEM = object()  # matches no system letter


# what the C loops take from this module (handed over once by livefix/analysis/signal_native.py)
_CORE_ARGS = (SatObs, _SIN, _BAND, _CELL_EL, SECTOR_AZ, BASE_MIN_N, BASE_TAU_S, LOST_S, LOST_CN0,
              Epoch, EVAL_S, SHARE, MIN_MEASURED, FORGET_S)
_CORE = signal_native.load(_CORE_ARGS)


def _sin(el: int) -> float:
    return _SIN[min(max(int(el), 0), 90)]


def _median(xs: list[float]) -> float:
    s = sorted(xs)
    n = len(s)
    return s[n // 2] if n % 2 else 0.5 * (s[n // 2 - 1] + s[n // 2])


class SignalStats:
    def __init__(self, config: AnalysisConfig, emit: Callable[[Event], None], native: bool | None = None) -> None:
        """native: the satellite loops in C (signal_native.pick: None as LIVEFIX_PURE says)."""
        self.config = config
        self.emit = emit
        self._core = signal_native.pick(_CORE, native)
        self.reset()

    def reset(self) -> None:
        self.n = 0
        self.sum = 0.0
        self.top4_sum = 0.0
        self.top4_n = 0
        self.by_sys: dict[str, list[float]] = {}  # letter -> [sum, n]
        self.bands = [[0.0, 0] for _ in range(9)]
        self.cs = [0.0] * 5  # n, Σx, Σx², Σy, Σxy  (x = sin el)
        self.cur: list[SatObs] = []  # tracked signals of the latest epoch
        self._cur_sum: float = 0
        self.cur_mean: float | None = None
        self.cur_top4: float | None = None
        self.base: dict[tuple, list[float]] = {}  # key -> [ema, n, last_t]
        self.active: dict[str, Any] | None = None
        self.events: list[dict[str, Any]] = []
        self.events_total = 0
        self._if_t = -math.inf
        self._last_sats: tuple | None = None
        # per (az cell, el cell): [n, Σ sin el, Σ C/N0]; the residual to the linear curve is exact
        # from these sums whenever the curve is read (bounded: 12 x 6 cells)
        self.cells: dict[tuple[int, int], list[float]] = {}

    # -- per epoch --------------------------------------------------------------------------
    def on_epoch(self, ep: Epoch) -> None:
        if self._core is not None and self._core.step(self, ep):
            return  # done in C (_sigcore_step.c); False: nothing was changed, the code below runs the epoch
        self.epoch_reference(ep)

    def epoch_step(self) -> Callable[[Epoch], None]:
        """on_epoch as the Analyzer calls it: the C step bound to this stage, running
        epoch_reference when it hands back (_sigcore.c bind_step: no Python frame per epoch), else
        on_epoch itself."""
        core = self._core
        if core is None or not hasattr(core, "bind_step") or type(self) is not SignalStats:
            return self.on_epoch  # a subclass keeps its own on_epoch
        return core.bind_step(self, SignalStats.epoch_reference)

    def epoch_reference(self, ep: Epoch) -> None:
        """The Python code of on_epoch: the reference the C step twins."""
        if ep.sats is not self._last_sats:  # the state model reuses the tuple while unchanged
            self._last_sats = ep.sats
            self.cur = [s for s in ep.sats if s.cn0 and s.cn0 > 0]
            vals = [s.cn0 for s in self.cur]
            self._cur_sum = sum(vals)  # what _accumulate adds per sample (same terms, same order)
            if vals:
                self.cur_mean = self._cur_sum / len(vals)
                top = sorted(vals, reverse=True)[:4]
                self.cur_top4 = sum(top) / len(top)
            else:
                self.cur_mean = self.cur_top4 = None
        dt = ep.mono - self._if_t
        if dt >= EVAL_S or dt < 0:  # one sample per ~second of stream time, whatever the rate
            self._if_t = ep.mono
            self._accumulate()
            self._interference(ep)

    def _accumulate(self) -> None:
        cur, core = self.cur, self._core
        done = 0 if core is None else core.accumulate(cur, self.cs, self.by_sys, self.bands, self.cells,
                                                      self.config.elev_mask_deg)
        if done < len(cur):
            self._accumulate_sats(cur if done == 0 else cur[done:])
        if cur:
            self.n += len(cur)
            self.sum += self._cur_sum
            self.top4_sum += self.cur_top4 or 0.0
            self.top4_n += 1

    def _accumulate_sats(self, sats: list[SatObs]) -> None:
        """Session sums of these tracked signals (the reference of _sigcore.accumulate)."""
        mask = self.config.elev_mask_deg
        cs, bands, by_sys, sin, cells, band = self.cs, self.bands, self.by_sys, _SIN, self.cells, _BAND
        by_sys_get, cells_get, cell_el, last = by_sys.get, cells.get, _CELL_EL, _NO_SYSTEM
        n0, sx, sxx, sy, sxy = cs  # running sums in locals, the same additions in the same order
        try:  # finally: a bad satellite leaves the sums as far as they got, as in-place adds did
            for s in sats:
                c = s.cn0 or 0
                system = s.system
                if system != last:  # the sky is sorted by system: look the sums up once per run
                    acc = by_sys_get(system)
                    if acc is None:
                        acc = by_sys[system] = [0.0, 0]
                    last = system
                acc[0] += c
                acc[1] += 1
                el = s.elev
                if el is not None and 0 <= el <= 90:
                    b = bands[band[el]]
                    b[0] += c
                    b[1] += 1
                    if el >= mask:
                        x = sin[el]
                        n0 += 1
                        sx += x
                        sxx += x * x
                        sy += c
                        sxy += x * c
                        az = s.azim
                        if az is not None:
                            key = (int(az % 360) // SECTOR_AZ, cell_el[el])
                            cell = cells_get(key)
                            if cell is None:
                                cell = cells[key] = [0, 0.0, 0.0]
                            cell[0] += 1
                            cell[1] += x
                            cell[2] += c
        finally:
            cs[:] = (n0, sx, sxx, sy, sxy)

    def _interference(self, ep: Epoch) -> None:
        t, thr, base = ep.mono, self.config.interference_drop_db, self.base
        frozen = self.active is not None
        drops: list[float] = []  # every satellite with a baseline; lost ones count as dropped
        measured: list[float] = []  # those still tracked
        seen: set[tuple] = set()
        sats, core = ep.sats, self._core
        done = 0 if core is None else core.baselines(sats, base, t, thr, frozen, seen, drops, measured)
        if done < len(sats):
            self._baseline_sats(sats if done == 0 else sats[done:], t, thr, frozen, seen, drops, measured)
        if len(base) > len(seen) or not seen.issuperset(base):
            for k in [k for k in base if k not in seen]:
                b = base[k]
                if t - b[2] > FORGET_S:
                    del base[k]
                elif t - b[2] <= LOST_S and b[1] >= BASE_MIN_N:
                    drops.append(max(thr, b[0] - LOST_CN0))
        if len(measured) < MIN_MEASURED:  # nothing (or too little) left to judge by: not decided here
            return
        med = _median(measured)
        share = sum([d >= thr for d in drops]) / len(drops)  # a count of True, as an int
        act = self.active
        if act is None and share >= SHARE and med >= thr:
            self.active = {"mono": t, "start": iso(ep.utc if ep.utc is not None else ep.wall),
                           "drop_db": med, "sats": len(drops), "last": t}
            self.emit(Event(t, ep.wall, "interference", f"broadband C/N0 drop of {med:.1f} dB on "
                            f"{round(share * len(drops))} of {len(drops)} satellites", ep.utc,
                            {"phase": "start", "drop_db": round(med, 1)}))
        elif act is not None:
            act["last"] = t
            act["drop_db"] = max(act["drop_db"], med)
            if med < thr / 2:
                dur = t - act["mono"]
                self._record(act, dur, False)
                self.active = None
                self.emit(Event(t, ep.wall, "interference", f"C/N0 recovered after {dur:.0f} s "
                                f"(largest median drop {act['drop_db']:.1f} dB)", ep.utc,
                                {"phase": "end", "duration_s": round(dur, 1),
                                 "drop_db": round(act["drop_db"], 1)}))

    def _baseline_sats(self, sats: tuple[SatObs, ...], t: float, thr: float, frozen: bool, seen: set[tuple],
                       drops: list[float], measured: list[float]) -> None:
        """Baselines of these signals updated, their drops collected (the reference of
        _sigcore.baselines)."""
        base = self.base
        seen_add, base_get, drop, meas, min_n = seen.add, base.get, drops.append, measured.append, BASE_MIN_N
        for s in sats:
            k = (s.system, s.prn, s.signal)  # SatObs.key
            seen_add(k)
            b = base_get(k)
            c = s.cn0
            if not (c and c > 0):
                c = None
            if b is not None:
                bn = b[1]
                if bn >= min_n:
                    if c is not None:
                        d = b[0] - c
                        meas(d)
                        drop(d)
                    elif t - b[2] <= LOST_S:  # lost lock recently (not a satellite long behind a wall)
                        drop(max(thr, b[0] - LOST_CN0))
                if c is None:
                    continue
                if not frozen or bn < min_n:
                    if bn >= min_n:  # min(1, max(0, dt) / tau) without the builtin calls (hot)
                        a = t - b[2]
                        a = (a if a > 0.0 else 0.0) / BASE_TAU_S
                        if a > 1.0:
                            a = 1.0
                    else:
                        a = 1.0 / (bn + 1)
                    b[0] += a * (c - b[0])
                    b[1] = bn + 1
                b[2] = t
            elif c is not None:
                base[k] = [float(c), 1, t]

    def _record(self, act: dict[str, Any], dur: float, ongoing: bool) -> None:
        self.events_total += 1
        self.events.append(self._item(act, dur, ongoing))
        if len(self.events) > MAX_LIST:
            del self.events[0]

    @staticmethod
    def _item(act: dict[str, Any], dur: float, ongoing: bool) -> dict[str, Any]:
        return {"start": act["start"], "duration_s": round(dur, 1), "drop_db": round(act["drop_db"], 1),
                "sats": act["sats"], "ongoing": ongoing}

    # -- reading ----------------------------------------------------------------------------
    def curve(self) -> tuple[float, float] | None:
        n, sx, sxx, sy, sxy = self.cs
        if n < CURVE_MIN_N:
            return None
        var = n * sxx - sx * sx
        if var <= 1e-9 * n * n:  # one elevation only: flat curve
            return (sy / n, 0.0)
        b = (n * sxy - sx * sy) / var
        return ((sy - b * sx) / n, b)

    def weak_sectors(self, cv: tuple[float, float] | None) -> list[dict[str, Any]]:
        """Sky cells whose mean C/N0 is weak_sector_db or more below the session curve at their
        own elevations: mean residual = (Σc − a·n − b·Σ sin el) / n, exact from the cell sums.
        Cells next to each other in azimuth within one elevation band are joined into one sector."""
        if cv is None:
            return []
        a, b = cv
        lim = self.config.weak_sector_db
        weak: dict[tuple[int, int], tuple[float, int]] = {}
        for key, (n, sx, sc) in self.cells.items():
            if n >= SECTOR_MIN_N:
                below = (a * n + b * sx - sc) / n
                if below >= lim:
                    weak[key] = (below, int(n))
        out = []
        n_az = 360 // SECTOR_AZ
        for j in sorted({k[1] for k in weak}):
            cols = {i for i, jj in weak if jj == j}
            starts = [i for i in sorted(cols) if (i - 1) % n_az not in cols] or [0]  # [0]: all round
            for i in starts:
                run = [i]
                while (run[-1] + 1) % n_az in cols and len(run) < len(cols):
                    run.append((run[-1] + 1) % n_az)
                out.append({"az_from": run[0] * SECTOR_AZ, "az_to": (run[-1] + 1) * SECTOR_AZ % 360,
                            "el_from": j * SECTOR_EL, "el_to": (j + 1) * SECTOR_EL,
                            "below_curve_db": round(max(weak[(k, j)][0] for k in run), 1),
                            "n": sum(weak[(k, j)][1] for k in run)})
        return out

    def snapshot(self) -> dict[str, Any]:
        cv = self.curve()
        weak = []
        if cv is not None:
            a, b = cv
            for s in self.cur:
                el, c = s.elev, s.cn0 or 0
                if el is None or el < self.config.elev_mask_deg:
                    continue
                exp = a + b * _sin(el)
                if c < exp - WEAK_DB:
                    label = s.label + (f"/{s.signal}" if s.signal else "")
                    weak.append({"sat": label, "elev": el, "azim": s.azim, "cn0": c, "expected": round(exp, 1)})
            weak.sort(key=lambda w: (w["cn0"] - w["expected"], w["sat"]))
        inter = list(self.events)
        if self.active is not None:
            inter.append(self._item(self.active, self.active["last"] - self.active["mono"], True))

        def r(x: float | None) -> float | None:
            return None if x is None else round(x, 2)

        return {
            "cn0_mean_dbhz": r(self.sum / self.n) if self.n else None,
            "top4_mean_dbhz": r(self.top4_sum / self.top4_n) if self.top4_n else None,
            "current": {"cn0_mean_dbhz": r(self.cur_mean), "top4_mean_dbhz": r(self.cur_top4),
                        "tracked": len(self.cur)},
            "by_sat": [{"sat": x.label + (f"/{x.signal}" if x.signal else ""), "cn0": x.cn0, "elev": x.elev,
                        "azim": x.azim} for x in sorted(self.cur, key=lambda x: x.key)[:MAX_SATS]],
            "by_system": {k: r(v[0] / v[1]) for k, v in sorted(self.by_sys.items()) if v[1]},
            "by_elevation": [{"from": 10 * i, "to": 10 * i + 10, "mean": r(b[0] / b[1]) if b[1] else None,
                              "n": b[1]} for i, b in enumerate(self.bands)],
            "curve": None if cv is None else {"a": round(cv[0], 3), "b": round(cv[1], 3),
                                              "n": int(self.cs[0])},
            "weak": weak[:32],
            "weak_sectors": self.weak_sectors(cv),
            "weak_sector_db": self.config.weak_sector_db,
            "interference": inter,
            "interference_count": self.events_total + (self.active is not None),
            "interference_active": self.active is not None,
        }
