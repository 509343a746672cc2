"""DOP from geometry against a closed form and against a plain numpy least-squares covariance."""

from __future__ import annotations

import math

import numpy as np
import pytest

from livefix.analysis.dop import DopStats, used_geometry
from livefix.analysis.streaming import LogHistogram
from livefix.geodesy import dop as geometry_dop
from livefix.state.epoch import Epoch, SatObs


def _ep(sats: list[tuple[str, int, float, float]], hdop=None, pdop=None, vdop=None, t=0.0) -> Epoch:
    obs = tuple(SatObs(s, p, "", int(el), int(az), 40, True) for s, p, el, az in sats)
    return Epoch(mono=t, wall=1.8e9 + t, utc=1.8e9 + t, quality=1, hdop=hdop, pdop=pdop, vdop=vdop, sats=obs)


@pytest.mark.parametrize("elev", [0.0, 10.0, 30.0, 45.0])
def test_zenith_plus_three_closed_form(elev: float) -> None:
    # Closed form, derived from the linearised navigation equations G = [-los | 1], Q = (GᵀG)⁻¹:
    # one satellite at the zenith plus three at elevation E, azimuths 0/120/240 (s = sin E,
    # c = cos E). The horizontal block of GᵀG is (3/2)c²·I (Σsin²A = Σcos²A = 3/2, cross sums 0)
    # and decouples; the up/clock block is [[3s²+1, -(3s+1)], [-(3s+1), 4]] with determinant
    # 3(1-s)². Hence HDOP = 2/(√3·c), VDOP = 2/(√3·(1-s)), TDOP = √(3s²+1)/(√3·(1-s)).
    s, c = math.sin(math.radians(elev)), math.cos(math.radians(elev))
    got = geometry_dop([0, 0, 120, 240], [90, elev, elev, elev])
    hd, vd = 2 / (math.sqrt(3) * c), 2 / (math.sqrt(3) * (1 - s))
    td = math.sqrt(3 * s * s + 1) / (math.sqrt(3) * (1 - s))
    assert got["hdop"] == pytest.approx(hd, rel=1e-9)
    assert got["vdop"] == pytest.approx(vd, rel=1e-9)
    assert got["tdop"] == pytest.approx(td, rel=1e-9)
    assert got["pdop"] == pytest.approx(math.hypot(hd, vd), rel=1e-9)
    assert got["gdop"] == pytest.approx(math.sqrt(hd * hd + vd * vd + td * td), rel=1e-9)


def test_zenith_plus_three_at_horizon_value() -> None:
    # Same closed form at E = 0: HDOP = VDOP = 2/√3 ≈ 1.1547, PDOP = √(8/3) ≈ 1.633.
    got = geometry_dop([0, 0, 120, 240], [90, 0, 0, 0])
    assert got["hdop"] == pytest.approx(1.1547, abs=1e-4)
    assert got["pdop"] == pytest.approx(1.6330, abs=1e-4)


def _numpy_lstsq_cov(az: np.ndarray, el: np.ndarray, systems: list[str]) -> np.ndarray:
    """Independent reference: covariance of the least-squares estimator via numpy's pseudo-inverse
    (pinv(G) · pinv(G)ᵀ = (GᵀG)⁻¹ for unit-variance ranges); G built here from first principles."""
    a, e = np.radians(az), np.radians(el)
    cols = [-np.cos(e) * np.sin(a), -np.cos(e) * np.cos(a), -np.sin(e)]
    for name in sorted(set(systems)):
        cols.append(np.array([1.0 if s == name else 0.0 for s in systems]))
    g = np.column_stack(cols)
    p = np.linalg.pinv(g)
    return p @ p.T


def test_random_geometries_match_numpy_least_squares() -> None:
    rng = np.random.default_rng(7)
    checked = 0
    for _ in range(200):
        n = int(rng.integers(6, 16))
        az = rng.uniform(0, 360, n)
        el = rng.uniform(5, 90, n)
        systems = list(rng.choice(["G", "E", "R"], n))
        if min(systems.count(x) for x in set(systems)) < 1:
            continue
        cov = _numpy_lstsq_cov(az, el, systems)
        if np.linalg.cond(cov) > 1e8:
            continue
        got = geometry_dop(az, el, systems)
        assert got is not None
        # numpy least-squares covariance (reference library)
        assert got["hdop"] == pytest.approx(math.sqrt(cov[0, 0] + cov[1, 1]), rel=1e-7)
        assert got["vdop"] == pytest.approx(math.sqrt(cov[2, 2]), rel=1e-7)
        assert got["pdop"] == pytest.approx(math.sqrt(cov[0, 0] + cov[1, 1] + cov[2, 2]), rel=1e-7)
        assert got["gdop"] == pytest.approx(math.sqrt(np.trace(cov)), rel=1e-7)
        checked += 1
    assert checked > 150


def test_used_geometry_dedupes_signals_and_skips_unused() -> None:
    sats = (SatObs("G", 1, "1", 40, 10, 45, True), SatObs("G", 1, "5", 40, 10, 42, True),
            SatObs("G", 2, "1", 30, 100, 40, False), SatObs("E", 3, "7", 60, 200, 44, True),
            SatObs("E", 4, "7", None, 200, 44, True))
    ep = Epoch(mono=0, wall=0, utc=None, quality=1, sats=sats, used_prns=(("G", 2),))
    geo = used_geometry(ep)
    assert [(g[2]) for g in geo] == ["E", "G", "G"]  # E03, G01 once, G02 via GSA list; E04 lacks elevation


def test_stats_agree_flag_and_medians() -> None:
    geo = [("G", 1, 90, 0), ("G", 2, 20, 0), ("G", 3, 20, 120), ("G", 4, 20, 240), ("G", 5, 45, 60)]
    truth = geometry_dop([g[3] for g in geo], [g[2] for g in geo])
    d = DopStats()
    d.on_epoch(_ep(geo, hdop=round(truth["hdop"], 1), pdop=round(truth["pdop"], 1)))
    assert d.disagreements == 0 and d.compared == 1
    d.on_epoch(_ep(geo, hdop=truth["hdop"] * 2 + 0.5, pdop=truth["pdop"], t=1))
    assert d.disagreements == 1
    # within 0.3 absolute -> not a disagreement even if > 20 % (common practice thresholds)
    d.on_epoch(_ep(geo, hdop=truth["hdop"] + 0.25, pdop=truth["pdop"], t=2))
    assert d.disagreements == 1
    snap = d.snapshot()
    assert snap["current"]["computed"]["hdop"] == pytest.approx(truth["hdop"], abs=1e-3)
    assert snap["computed"]["hdop"] == pytest.approx(truth["hdop"], rel=0.006)


def test_too_few_satellites_gives_none() -> None:
    d = DopStats()
    d.on_epoch(_ep([("G", 1, 90, 0), ("G", 2, 20, 0), ("G", 3, 20, 120)], hdop=1.0))
    assert d.snapshot()["current"]["computed"]["hdop"] is None
    assert d.compared == 0


def test_log_histogram_median_matches_numpy() -> None:
    rng = np.random.default_rng(3)
    xs = rng.lognormal(0.3, 0.4, 20001)
    h = LogHistogram()
    for x in xs:
        h.add(float(x))
    # numpy median as the reference; histogram bins are 0.5 % wide
    assert h.quantile(0.5) == pytest.approx(float(np.median(xs)), rel=0.006)
    assert len(h.bins) < 1000
