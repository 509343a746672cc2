"""DOP from geometry of the satellites the receiver says it uses, next to the DOP it reports.

Why compute our own: a reported DOP alone cannot show a receiver that uses odd satellites, and a
computed DOP lets installers compare spots even when the receiver prints no GSA.

Geometry: one row per used (system, prn) with azimuth/elevation; the model of livefix.geodesy.dop,
one receiver-clock column per constellation (a multi-GNSS receiver estimates inter-system biases),
solved in closed form by livefix.analysis.dopsolve (in C when built: bit-identical, no numpy calls
on the tiny matrices).
Receivers differ: some solve with a single clock, some apply another elevation mask or weight by
C/N0, so an epoch counts as a disagreement only when the reported HDOP or PDOP differs from BOTH
our per-system-clock and our single-clock values by more than 20 % and more than 0.3 (common
practice thresholds; a persistent disagreement points at a different satellite set or mask).
Which clock model the receiver states its DOP in is decided by the session itself: each compared
epoch votes for the model closer to the reported values, and `computed` shows the winner
(per-system clocks when there is nothing to compare). Real multi-GNSS receivers mostly state DOP
with one clock (e.g. a GPS+GLONASS+Galileo+BeiDou log with one GLONASS satellite used: 1.31 single
clock, 2.03 per-system clocks, 1.3 reported); both models' figures are in the snapshot.
Session medians come from a log-spaced histogram (0.5 % bins): bounded memory, deterministic.
Satellite numbers that fit no NMEA block (Epoch.unknown_ids) cannot be placed in the geometry:
they are counted and listed here, never dropped silently.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from livefix.analysis.dopsolve import make_solver, pick_core
from livefix.analysis.streaming import LogHistogram
from livefix.state.epoch import Epoch

KEYS = ("gdop", "pdop", "hdop", "vdop", "tdop")
REL_TOL = 0.20
ABS_TOL = 0.3
MAX_UNKNOWN_IDS = 64  # distinct unknown satellite labels listed in the snapshot
_NO = object()  # matches no reported value
_NO_REP = (_NO, _NO, _NO)


def used_geometry(ep: Epoch) -> tuple[tuple[float, float, str], ...]:
    """(az, el, system) of used satellites, one per (system, prn), sorted for a stable cache key."""
    return _used(ep)[0]


def _used(ep: Epoch) -> tuple[tuple[tuple[float, float, str], ...], int]:
    """used_geometry(ep) and the number of used satellites with or without az/el (flagged in the
    sky or listed in GSA), from one pass over the satellites."""
    listed = set(ep.used_prns)
    seen: dict[tuple[str, int], tuple[float, float, str]] = {}
    flagged: set[tuple[str, int]] = set()
    for s in ep.sats:
        used = s.used
        if not (used or listed):  # neither flagged nor possibly listed: nothing to count
            continue
        k = (s.system, s.prn)
        if used:
            flagged.add(k)
        if k in seen or not (used or k in listed):  # the first listed signal of a satellite ...
            continue
        az, el = s.azim, s.elev
        if el is None or az is None:  # ... that has a direction
            continue
        seen[k] = (float(az), float(el), k[0])
    flagged.update(listed)
    return tuple([seen[k] for k in sorted(seen)]), len(flagged)


Used = Callable[[Epoch], "tuple[tuple[tuple[float, float, str], ...], int]"]


def make_used(native: bool | None = None) -> Used:
    """_used in C when picked (dopsolve.pick_core: same tuples, same float objects; odd epochs handed
    over to _used), else _used itself."""
    core = pick_core(native)
    if core is None:
        return _used
    fast = core.used

    def used_native(ep: Epoch) -> tuple[tuple[tuple[float, float, str], ...], int]:
        r = fast(ep.sats, ep.used_prns)
        return _used(ep) if r is NotImplemented else r  # type: ignore[no-any-return]

    return used_native


def _differs(rep: float | None, calc: dict[str, float] | None, key: str) -> bool:
    if rep is None or calc is None:
        return False
    d = abs(rep - calc[key])
    return d > ABS_TOL and d > REL_TOL * rep


class DopStats:
    def __init__(self, native: bool | None = None) -> None:
        """native: the solve and the used-satellite pass in C (dopsolve.pick_core: None as
        LIVEFIX_PURE says)."""
        self._solve = make_solver(native)
        self._used_of = make_used(native)
        self.reset()

    def reset(self) -> None:
        self.hist_rep = {k: LogHistogram() for k in ("gdop", "pdop", "hdop", "vdop")}
        self.hist_calc = {k: LogHistogram() for k in KEYS}  # per-system receiver clocks
        self.hist_single = {k: LogHistogram() for k in KEYS}  # one receiver clock
        self._votes = {"single": 0, "per_system": 0}  # compared epochs closer to each clock model
        self.unknown_epochs = 0  # epochs listing satellite numbers no NMEA block fits
        self.unknown_ids: set[str] = set()
        self.current_used_listed = 0  # used satellites this epoch, with or without az/el
        self.current_calc: dict[str, float] | None = None
        self._single: dict[str, float] | None = None
        self.current_n = 0
        self._compared = 0
        self._disagreements = 0
        self._cache_key: tuple | None = None
        self._sats: tuple | None = None
        self._used: tuple | None = None
        self._geo: tuple = ()
        self._rep_obj: tuple = _NO_REP  # the latest reported floats, by identity
        self._rep_key: tuple | None = None
        # Histogram bins and the verdict repeat for long runs of epochs: each run is counted (epochs
        # since its mark) and added when its inputs change or a reader asks, not once per epoch
        self._rep_bins: list[tuple[LogHistogram, int]] = []
        self._calc_bins: list[tuple[LogHistogram, int]] = []
        self._n = 0  # epochs seen
        self._rep_mark = self._calc_mark = self._v_mark = 0  # _n when each run began
        self._verdict: tuple[bool, bool, int] | None = None  # (compared, disagree, vote) for the inputs

    # -- counters of the compared epochs, settled on reading -----------------------------------
    @property
    def votes(self) -> dict[str, int]:
        self._flush_verdict()
        return self._votes

    @property
    def compared(self) -> int:
        self._flush_verdict()
        return self._compared

    @property
    def disagreements(self) -> int:
        self._flush_verdict()
        return self._disagreements

    @property
    def disagreeing(self) -> bool:
        """Whether the latest epoch disagreed (its verdict)."""
        v = self._verdict
        return v is not None and v[1]

    @property
    def current_rep(self) -> dict[str, float | None]:
        """The latest epoch's reported DOPs ({} before any epoch); GSA carries no GDOP."""
        pdop, hdop, vdop = self._rep_obj
        if pdop is _NO:
            return {}
        return {"pdop": pdop, "hdop": hdop, "vdop": vdop, "gdop": None}

    def _flush_verdict(self) -> None:
        """Count the epochs judged by the current verdict since its mark (before it changes)."""
        k = self._n - self._v_mark
        if not k:
            return
        self._v_mark = self._n
        v = self._verdict
        assert v is not None  # every epoch leaves one
        if v[0]:
            self._compared += k
            if v[1]:
                self._disagreements += k
            if v[2]:
                self._votes["single" if v[2] > 0 else "per_system"] += k

    def on_epoch(self, ep: Epoch) -> None:
        sats, used = ep.sats, ep.used_prns
        if sats is not self._sats or (used is not self._used and used != self._used):  # reused tuples
            # the state model hands out a new tuple only on a change
            self._geo, self.current_used_listed = self._used_of(ep)
            self._sats, self._used = sats, used
            if self._geo != self._cache_key:  # az/el are whole degrees and change slowly: cache
                self._new_geometry(self._geo)
        pdop, hdop, vdop = ep.pdop, ep.hdop, ep.vdop
        ro = self._rep_obj
        if pdop is not ro[0] or hdop is not ro[1] or vdop is not ro[2]:
            rkey = self._rep_obj = (pdop, hdop, vdop)
            if rkey != self._rep_key:  # reported values repeat for many epochs: cache their bins
                self._flush_verdict()
                self._verdict = None
                self._flush_rep()
                self._rep_key = rkey
                rep = self.current_rep
                self._rep_bins = [(h, b) for k, h in self.hist_rep.items() if (b := h.bin(rep[k])) is not None]
        if self._verdict is None:
            self._verdict = self._judge()
        self._n += 1
        if ep.unknown_ids:
            self.unknown_epochs += 1
            if len(self.unknown_ids) < MAX_UNKNOWN_IDS:
                self.unknown_ids.update(ep.unknown_ids)

    def _new_geometry(self, geo: tuple) -> None:
        self._flush_verdict()
        self._verdict = None
        self._flush_calc()
        self._cache_key = geo
        self.current_n = len(geo)
        if len(geo) >= 4:
            az = [g[0] for g in geo]
            el = [g[1] for g in geo]
            systems = [g[2] for g in geo]
            self.current_calc = self._solve(az, el, systems)
            single_too = len(set(systems)) > 1  # one constellation: both models agree
            self._single = self._solve(az, el) if single_too else self.current_calc
        else:
            self.current_calc = self._single = None
        self._calc_bins = [(h[k], b) for h, calc in ((self.hist_calc, self.current_calc),
                                                    (self.hist_single, self._single)) if calc is not None
                           for k in KEYS if (b := h[k].bin(calc[k])) is not None]

    @property
    def current_single(self) -> dict[str, float] | None:
        """DOP of the same satellites with one receiver clock."""
        return self._single

    @property
    def clock_model(self) -> str:
        """The clock model the reported DOPs follow, by the session's votes (ties: per-system)."""
        return "single" if self.votes["single"] > self.votes["per_system"] else "per_system"

    def _judge(self) -> tuple[bool, bool, int]:
        """Whether this epoch is compared, whether it disagrees, and its clock-model vote
        (+1 single, -1 per-system, 0 none); pure in rep and calc."""
        calc, rep, single = self.current_calc, self.current_rep, self._single
        if calc is None or (rep["hdop"] is None and rep["pdop"] is None):
            return (False, False, 0)
        single = single or calc
        bad = any(_differs(rep[k], calc, k) and _differs(rep[k], single, k) for k in ("hdop", "pdop"))
        off = [(abs(rep[k] - single[k]), abs(rep[k] - calc[k])) for k in ("hdop", "pdop") if rep[k] is not None]
        d_single, d_multi = sum(a for a, _ in off), sum(b for _, b in off)
        vote = 0 if abs(d_single - d_multi) < 1e-9 else (1 if d_single < d_multi else -1)
        return (True, bad, vote)

    @staticmethod
    def _add_run(bins: list[tuple[LogHistogram, int]], run: int) -> None:
        for h, b in bins:
            h.add_bin(b, run)

    def _flush_rep(self) -> None:
        run = self._n - self._rep_mark
        if run:
            self._add_run(self._rep_bins, run)
            self._rep_mark = self._n

    def _flush_calc(self) -> None:
        run = self._n - self._calc_mark
        if run:
            self._add_run(self._calc_bins, run)
            self._calc_mark = self._n

    def snapshot(self) -> dict[str, Any]:
        self._flush_rep()
        self._flush_calc()

        def rnd(d: dict | None, keys: tuple[str, ...]) -> dict[str, float | None]:
            return {k: (None if d is None or d.get(k) is None else round(d[k], 3)) for k in keys}

        single = self.clock_model == "single"
        def median(h: LogHistogram, p: float = 0.5) -> float | None:  # 3 decimals: a DOP is given to 0.1 or 0.01
            q = h.quantile(p)
            return None if q is None else round(q, 3)

        per_system = {k: median(h) for k, h in self.hist_calc.items()}
        one_clock = {k: median(h) for k, h in self.hist_single.items()}
        calc95 = self.hist_single if single else self.hist_calc
        return {
            "reported": {k: median(h) for k, h in self.hist_rep.items()},
            "computed": one_clock if single else per_system,
            # 95th percentiles over the epochs (LogHistogram bins: within about 0.25 %)
            "p95": {"reported": {k: median(h, 0.95) for k, h in self.hist_rep.items()},
                    "computed": {k: median(h, 0.95) for k, h in calc95.items()}},
            "clock_model": self.clock_model,
            "clock_model_votes": dict(self.votes),
            "computed_per_system_clock": per_system,
            "computed_single_clock": one_clock,
            "current": {"reported": rnd(self.current_rep, ("gdop", "pdop", "hdop", "vdop")),
                        "computed": rnd(self.current_single if single else self.current_calc, KEYS),
                        "computed_per_system_clock": rnd(self.current_calc, KEYS),
                        "computed_single_clock": rnd(self.current_single, KEYS),
                        "used": self.current_n, "used_listed": self.current_used_listed,
                        "disagree": self.disagreeing},
            "unknown_ids": {"epochs": self.unknown_epochs, "ids": sorted(self.unknown_ids)},
            "disagreements": self.disagreements,
            "compared": self.compared,
            "disagree_share": round(self.disagreements / self.compared, 4) if self.compared else None,
        }
