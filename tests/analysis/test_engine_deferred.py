"""Work the analysis defers or remembers changes no result: DOP verdict counters added as runs
equal the rule counted epoch by epoch, reflector checks of arcs in progress evaluated when read equal
checks evaluated at once, and the fix statistics' remembered time marks start afresh after a reset.
Each stream changes the inputs mid-way (geometry, reported DOP, a stream gap inside an arc)."""

from __future__ import annotations

import json
import math

import numpy as np

from livefix.analysis.config import AnalysisConfig
from livefix.analysis.dop import DopStats
from livefix.analysis.fixes import FixStats
from livefix.analysis.reflectors import ReflectionStats
from livefix.geodesy import dop as geometry_dop
from livefix.state.epoch import Epoch, SatObs

T0 = 1.7e9
LAMBDA = 299_792_458.0 / 1575.42e6  # GPS L1: c / 1575.42 MHz


# ---- DOP: compared / disagreements / votes counted as runs ---------------------------------------
GEOS = (  # (system, prn, el, az) of the used satellites; the third one mixes constellations
    (("G", 1, 90, 0), ("G", 2, 20, 0), ("G", 3, 20, 120), ("G", 4, 20, 240), ("G", 5, 45, 60)),
    (("G", 1, 70, 10), ("G", 2, 25, 5), ("G", 3, 15, 130), ("G", 4, 30, 250)),
    (("G", 1, 80, 0), ("G", 2, 20, 10), ("E", 3, 25, 120), ("E", 4, 20, 230), ("G", 5, 40, 300),
     ("E", 6, 55, 180)),
    (("G", 1, 80, 0), ("G", 2, 20, 10), ("E", 3, 25, 120), ("E", 4, 20, 230), ("R", 5, 40, 300)),  # 6 unknowns
    (("G", 1, 80, 0), ("G", 2, 20, 10), ("G", 3, 25, 120)),  # three: no computed DOP
)


def _dop_epoch(geo: tuple, t: float, hdop: float | None, pdop: float | None) -> Epoch:
    sats = tuple(SatObs(s, p, "1", el, az, 40.0, True) for s, p, el, az in geo)
    return Epoch(mono=t, wall=T0 + t, utc=T0 + t, quality=1, hdop=hdop, pdop=pdop, sats=sats,
                 used_prns=tuple((s, p) for s, p, _, _ in geo))


def _rule(geo: tuple, hdop: float | None, pdop: float | None) -> tuple[bool, bool, int]:
    """The dop module's rule written out: compared when a DOP is computed (>= 4 satellites) and one
    is reported; a disagreement when hdop or pdop differs from both clock models by > 0.3 and > 20 %
    (common practice); the vote goes to the clock model with the smaller summed difference."""
    if len(geo) < 4 or (hdop is None and pdop is None):
        return (False, False, 0)
    az, el, systems = [g[3] for g in geo], [g[2] for g in geo], [g[0] for g in geo]
    multi = geometry_dop(az, el, systems)  # one receiver clock per constellation
    if multi is None:  # more unknowns than satellites: nothing computed
        return (False, False, 0)
    single = (geometry_dop(az, el) if len(set(systems)) > 1 else None) or multi
    rep = {"hdop": hdop, "pdop": pdop}

    def differs(r: float | None, c: float) -> bool:
        return r is not None and abs(r - c) > 0.3 and abs(r - c) > 0.2 * r

    bad = any(differs(rep[k], multi[k]) and differs(rep[k], single[k]) for k in rep)
    d_single = sum(abs(rep[k] - single[k]) for k in rep if rep[k] is not None)
    d_multi = sum(abs(rep[k] - multi[k]) for k in rep if rep[k] is not None)
    vote = 0 if abs(d_single - d_multi) < 1e-9 else (1 if d_single < d_multi else -1)
    return (True, bad, vote)


def test_dop_counters_added_as_runs_equal_the_rule_per_epoch() -> None:
    rng = np.random.default_rng(5)
    lazy = DopStats()
    want = {"compared": 0, "disagreements": 0, "single": 0, "per_system": 0}
    geo, rep, t = GEOS[0], (1.2, 2.0), 0.0
    for _ in range(400):
        t += 0.1
        if rng.random() < 0.05:  # the geometry changes now and then ...
            geo = GEOS[int(rng.integers(len(GEOS)))]
        if rng.random() < 0.08:  # ... and so do the reported values (one of them sometimes empty)
            rep = (round(float(rng.uniform(0.6, 4.0)), 1), None if rng.random() < 0.2 else round(float(rng.uniform(1.0, 6.0)), 1))
        hdop, pdop = rep
        # new float objects every epoch, as the decoder hands them out
        lazy.on_epoch(_dop_epoch(geo, t, None if hdop is None else float(str(hdop)),
                                 None if pdop is None else float(str(pdop))))
        compared, bad, vote = _rule(geo, hdop, pdop)
        want["compared"] += compared
        want["disagreements"] += compared and bad
        if compared and vote:
            want["single" if vote > 0 else "per_system"] += 1
        if rng.random() < 0.03:  # read mid-stream, now and then: the runs so far are settled
            assert (lazy.compared, lazy.disagreements) == (want["compared"], want["disagreements"])
            assert lazy.disagreeing == (compared and bad)
    assert want["compared"] > 100 and want["disagreements"] > 10 and want["single"] and want["per_system"]
    snap = lazy.snapshot()
    assert snap["compared"] == want["compared"]
    assert snap["disagreements"] == want["disagreements"]
    assert snap["clock_model_votes"] == {"single": want["single"], "per_system": want["per_system"]}


# ---- reflector checks of arcs in progress, evaluated when read --------------------------------
def _rising_el(t: float) -> float:
    return 4.0 + 0.02 * t  # 4 -> 26 degrees in 1100 s: checks at 600 and 900 samples (>= 10 degrees)


def _refl_epochs(gap: tuple[float, float] | None, seconds: int = 1000, seed: int = 3) -> list[Epoch]:
    """1 Hz epochs of one rising satellite with a reflection off a plane 1.5 m below the antenna
    (two-ray model, a = 0.2: C/N0 += 10 log10(1 + a^2 + 2a cos(4 pi h sin(e) / lambda + 1))) and two
    high ones; no epochs at all inside `gap` (seconds)."""
    rng = np.random.default_rng(seed)
    out = []
    for k in range(seconds):
        t = float(k)
        if gap and gap[0] <= t < gap[1]:
            continue
        el = _rising_el(t)
        x = math.sin(math.radians(el))
        c = 30.0 + 25.0 * x + 10.0 * math.log10(1.04 + 0.4 * math.cos(4.0 * math.pi * 1.5 * x / LAMBDA + 1.0))
        sats = (SatObs("G", 5, "1", round(el), round(100.0 + 0.01 * t), round(c + rng.normal(0, 0.5)), True),
                SatObs("G", 20, "1", 60, 300, 47, True), SatObs("G", 24, "1", 45, 10, 45, True))
        out.append(Epoch(mono=t, wall=T0 + t, utc=T0 + t, quality=1, lat=47.0, lon=8.0, h=550.0, sats=sats))
    return out


class _Eager(ReflectionStats):
    """Every check evaluated in the epoch that makes it (no check ever waits)."""

    def on_epoch(self, ep: Epoch) -> None:
        super().on_epoch(ep)
        self._settle_checks()


def _count_checks(stage: ReflectionStats) -> list[int]:
    calls = [0]
    check = stage._check

    def counted(*a):  # noqa: ANN002, ANN202
        calls[0] += 1
        return check(*a)

    stage._check = counted  # type: ignore[method-assign]
    return calls


def test_reflector_checks_evaluated_when_read_equal_checks_evaluated_at_once() -> None:
    # a stream gap of 90 s (> gap_s) after the check at 600 samples: the arc closes when the
    # satellite is back and a new arc of the same signal starts in that very sample
    for gap in (None, (650.0, 740.0)):
        eps = _refl_epochs(gap)
        lazy, eager = ReflectionStats(), _Eager()
        n_lazy, n_eager = _count_checks(lazy), _count_checks(eager)
        for i, ep in enumerate(eps):
            lazy.on_epoch(ep)
            eager.on_epoch(ep)
            if i in (640, 935):  # snapshots mid-stream, after a check each
                assert json.dumps(lazy.snapshot(), sort_keys=True) == json.dumps(eager.snapshot(), sort_keys=True)
        a, b = lazy.snapshot(), eager.snapshot()
        assert json.dumps(a, sort_keys=True) == json.dumps(b, sort_keys=True)
        assert n_eager[0] == (2 if gap is None else 1) and n_lazy[0] <= n_eager[0]  # checks at 600, 900 samples
    # without snapshots in between, the check at 600 samples is never evaluated: the arc closed (gap)
    eps = _refl_epochs((650.0, 740.0))
    lazy, eager = ReflectionStats(), _Eager()
    n_lazy, n_eager = _count_checks(lazy), _count_checks(eager)
    for ep in eps:
        lazy.on_epoch(ep)
        eager.on_epoch(ep)
    assert json.dumps(lazy.snapshot(), sort_keys=True) == json.dumps(eager.snapshot(), sort_keys=True)
    assert eager.snapshot()["arcs_evaluated"] >= 1 and n_lazy[0] < n_eager[0]


# ---- fix statistics: remembered time marks --------------------------------------------------------
def test_rtk_mark_is_set_afresh_after_a_reset() -> None:
    """The share of RTK-fixed time after the first RTK-fixed epoch, after a statistics reset: only the
    epochs after the reset count (2 no-fix, then 6 RTK-fixed, then 2 float epochs at 1 s: the
    first RTK epoch's own time onwards is 6 s fixed of 8 s, 0.75; the time-book rule of
    livefix.analysis.availability, written out here)."""
    f = FixStats(AnalysisConfig(), lambda ev: None)

    def ep(t: float, q: int) -> Epoch:
        return Epoch(mono=t, wall=T0 + t, utc=T0 + t, quality=q, lat=47.0 if q else None,
                     lon=8.0 if q else None, h=500.0 if q else None, sentences=("GGA",))

    for k in range(20):
        f.on_epoch(ep(float(k), 4))
    f.reset()
    for k, q in enumerate([0, 0, 4, 4, 4, 4, 4, 4, 5, 5]):
        f.on_epoch(ep(100.0 + k, q))
    assert f.snapshot()["rtk_fixed_share_after_first"] == 0.75
