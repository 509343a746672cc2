"""Checks that catch faults the rest of the analysis tests let through: each test here kills one or
more deliberate faults of bench/mutants.py (named in the docstring) that survived the suite. The
expected values come from hand arithmetic on the fixture, numpy/scipy, or the rule as documented."""

from __future__ import annotations

import math
import statistics

import numpy as np
from position_nmea import BASE, circle, gga, rmc
from scipy import signal, stats

from livefix.analysis.config import AnalysisConfig
from livefix.analysis.convergence import first_hold
from livefix.analysis.dop import DopStats, _differs
from livefix.analysis.drift import slope_fit
from livefix.analysis.median import BinnedMedian
from livefix.analysis.motion import MotionDetector
from livefix.analysis.position_figures import horizontal
from livefix.analysis.scatter import figures
from livefix.analysis.track import Moments3
from livefix.items import Chunk
from livefix.pipeline import Pipeline
from livefix.state.epoch import Epoch, SatObs


def _run(epochs: list[tuple[float, list[bytes]]], config: AnalysisConfig | None = None) -> dict:
    """Feed (session second, lines) epochs with host time = receiver time; the analysis snapshot."""
    p = Pipeline(config)
    for t, lines in epochs:
        p.feed(Chunk(100.0 + t, 1.8e9 + t, b"".join(lines)))
    p.finish()
    a = p.snapshot().analysis
    assert a["internal_errors"] == 0, a["last_error"]
    return a


def test_cep50_and_sigmas_of_five_hand_placed_points() -> None:
    """Kills scatter-cep50-rank and scatter-cov-bias."""
    # mean (0, 0) by construction; radii 3, 1, 2, 5, 5 -> the middle one of five is 3 (hand arithmetic)
    e = np.array([3.0, -1.0, -2.0, 0.0, 0.0])
    n = np.array([0.0, 0.0, 0.0, 5.0, -5.0])
    f = figures(e, n)
    assert f["cep50_m"] == 3.0
    # sample variances with n - 1 = 4 (hand arithmetic): E (9 + 1 + 4) / 4 = 3.5, N 50 / 4 = 12.5
    assert f["sigma_e_m"] == round(math.sqrt(3.5), 4) and f["sigma_n_m"] == round(math.sqrt(12.5), 4)
    assert f["drms_m"] == 4.0 and f["drms2_m"] == 8.0  # sqrt(3.5 + 12.5) = 4, 2DRMS = 2 x 4 (NRC 1995)


def test_streaming_moments_equal_numpy_cov() -> None:
    """Kills moments-onepass: the streaming covariance behind long sessions' sigma and ellipse."""
    rng = np.random.default_rng(21)
    e, n = rng.normal(2.0, 0.3, 500), rng.normal(-1.0, 0.7, 500) + 0.5 * rng.normal(0, 0.3, 500)
    u = rng.normal(400.0, 1.1, 500)
    u[::7] = np.nan  # epochs without a height add to the horizontal moments only
    m = Moments3()
    for a, b, c in zip(e.tolist(), n.tolist(), u.tolist(), strict=True):
        m.add(a, b, c)
    cov = m.cov()
    assert cov is not None
    assert np.allclose(cov[:2, :2], np.cov(e, n), rtol=1e-10, atol=0)  # numpy.cov (n - 1)
    assert math.isclose(cov[2, 2], float(np.var(u[np.isfinite(u)], ddof=1)), rel_tol=1e-10)


def test_slope_se_equals_linregress_when_the_residuals_alternate() -> None:
    """Kills drift-dof: with no positive autocorrelation the slope's SE is the textbook OLS one."""
    t = np.arange(12.0)
    y = 0.02 * t + 0.3 * (-1.0) ** t  # residuals alternate: lag-1 correlation near -1, taken as 0
    fit = slope_fit(t, y)
    ref = stats.linregress(t, y)  # scipy: slope and its standard error with n - 2 dof
    assert fit is not None and fit["rho"] == 0.0
    assert math.isclose(fit["b"], ref.slope, rel_tol=1e-12)
    assert math.isclose(fit["se"], ref.stderr, rel_tol=1e-9)
    assert math.isclose(fit["ci95"], stats.t.ppf(0.975, 10) * ref.stderr, rel_tol=1e-3)  # scipy.stats.t


def test_lag1_correction_recovers_the_generating_ar1_coefficient() -> None:
    """Kills drift-rho-bias: on AR(1) noise of coefficient 0.3 about a trend, the corrected lag-1
    autocorrelation averages to 0.3 (the coefficient the noise was made with)."""
    rng = np.random.default_rng(8)
    n, runs, phi = 60, 4000, 0.3
    white = rng.normal(size=(runs, n + 100))
    ar = signal.lfilter([1.0], [1.0, -phi], white, axis=1)[:, 100:]  # scipy: x[k] = phi x[k-1] + w[k]
    t = np.arange(n, dtype=float)
    rhos = [slope_fit(t, 0.01 * t + row)["rho"] for row in ar]  # type: ignore[index]
    # Monte-Carlo standard error 0.002; the first-order correction leaves about -0.006 at n = 60 (this
    # seed: 0.294), and one short by 1/n = 0.017 would sit near 0.277
    assert abs(float(np.mean(rhos)) - phi) < 0.012


def test_horizontal_drift_interval_uses_the_sidak_level() -> None:
    """Kills drift-h-sidak: each axis's 95 % half-width widened to the sqrt(0.95) level."""
    k = stats.norm.ppf((1 + math.sqrt(0.95)) / 2) / stats.norm.ppf(0.975)  # scipy.stats.norm
    rate, ci = horizontal(3.0, 4.0, 1.0, 1.0)
    assert rate == 5.0  # hypot(3, 4)
    assert ci is not None
    assert abs(ci[0] - math.hypot(3 - k, 4 - k)) < 0.006 and abs(ci[1] - math.hypot(3 + k, 4 + k)) < 0.006


def test_binned_median_of_an_even_count_is_the_inverted_cdf_value() -> None:
    """Kills median-rank: values far apart (one per bin) give numpy's inverted-CDF quantile exactly."""
    m = BinnedMedian(0.001)
    xs = [4.0, 1.0, 3.0, 2.0]
    for x in xs:
        m.add(x)
    for p in (0.25, 0.5, 0.75):  # numpy inverted_cdf (Hyndman & Fan definition 1): 1, 2, 3
        assert m.quantile(p) == float(np.percentile(xs, 100 * p, method="inverted_cdf"))


def test_median_east_resolution_shrinks_with_the_cosine_of_latitude() -> None:
    """Kills median-cos-degrees."""
    a = _run([(float(k), [gga(k, 0.0, 0.0)]) for k in range(5)])
    res = a["session"]["median"]["by_fix"]["single"]["resolution_m"]
    # 1e-8 degree bins; 111 320 m per degree (common practice); east scaled by cos(latitude)
    assert res["n"] == round(1e-8 * 111320.0, 4)
    assert res["e"] == round(1e-8 * 111320.0 * math.cos(math.radians(BASE[0])), 4)  # 0.0008 at 47.1 deg


def test_no_fix_epochs_with_coordinates_are_not_fixes() -> None:
    """Kills valid-fix-quality: GGA quality 0 is "fix not available" (NMEA 0183) even when the
    receiver repeats its last coordinates."""
    eps = [(float(k), [gga(k, 0.1 * (k % 3), 0.0, q=1 if k < 10 else 0)]) for k in range(20)]
    a = _run(eps)
    assert set(a["position"]["by_fix"]) == {"single"} and a["position"]["by_fix"]["single"]["n"] == 10
    assert a["fix"]["epochs_by_fix"] == {"single": 10, "none": 10}  # hand count of the fixture


def test_outage_of_exactly_the_threshold_is_not_listed() -> None:
    """Kills outage-le: only outages *longer* than config.outage_s are listed; every loss counts."""
    eps = [(float(k), [gga(k, 0.0, 0.0, q=0 if 10 <= k <= 12 else 1)]) for k in range(20)]
    # last fix at 9, first no-fix time 10, fix back at 13: a 3.0 s outage (hand arithmetic)
    a = _run(eps, AnalysisConfig(outage_s=3.0))["fix"]
    assert a["fix_losses"] == 1 and a["reacquisition_s"] == [3.0] and a["outages_total"] == 0
    b = _run(eps, AnalysisConfig(outage_s=2.5))["fix"]
    assert b["outages_total"] == 1 and b["outages"][0]["duration_s"] == 3.0


def test_nominal_interval_is_the_median_of_an_even_window() -> None:
    """Kills interval-median-even."""
    a = _run([(t, [gga(t, 0.0, 0.0)]) for t in (0.0, 1.0, 3.0)])
    assert a["fix"]["interval_s"] == statistics.median([1.0, 2.0])  # the two intervals: 1.5


def test_wide_single_fix_scatter_is_not_a_series_of_jumps() -> None:
    """Kills jump-sigma-k and jumps-min-limit: the k-sigma limit is max(radius, k sigma)."""
    # 8 m golden-angle pattern: sigma_h = 8 / sqrt(2) = 5.66 m (mean of r^2 is r^2 / 2), so the limits
    # max(5 m, 8 x 5.66 m) = 45 m lie far beyond the 16 m widest step and 8 m from the centre
    eps = []
    for k in range(600):
        e, n = circle(k, 8.0)
        eps.append((float(k), [gga(k, e, n), rmc(k, e, n, speed_mps=0.0)]))
    a = _run(eps)
    assert a["fix"]["jumps_total"] == 0
    assert a["position"]["jumps"]["count"] == 0 and a["position"]["jumps"]["excluded_epochs"] == 0


def test_jumps_measured_from_a_centre_away_from_the_anchor() -> None:
    """Kills jumps-en-swap: the first fix (the anchor of the E/N/U frame) lies 29 m from the site."""
    eps = [(0.0, [gga(0, -15.0, -25.0, q=1)])]
    for k in range(1, 400):  # RTK fixed at the site, within 5 mm: no jump in the fixture
        e, n = circle(k, 0.005)
        eps.append((float(k), [gga(k, e, n, q=4)]))
    j = _run(eps)["position"]["jumps"]
    assert j["count"] == 0 and j["excluded_epochs"] == 0


def test_one_step_is_not_motion() -> None:
    """Kills motion-one-half: a step lies in one half-window only (the documented rule)."""
    eps = []
    for k in range(200):
        e, n = circle(k, 0.01)
        eps.append((float(k), [gga(k, e + (15.0 if k >= 100 else 0.0), n)]))  # no speed over ground given
    m = _run(eps)["motion"]
    assert m["moves"] == 0 and m["state"] == "static"


def test_speed_at_the_threshold_is_standing_still() -> None:
    """Kills motion-speed-lt: "at or below" motion_speed_mps the receiver is not moving."""
    cfg = AnalysisConfig()
    det = MotionDetector(cfg)
    # positions running on at 2 m/s (40 m per window) while the reported speed is exactly the threshold
    assert not any(det.update(float(k), 2.0 * k, 0.0, cfg.motion_speed_mps) for k in range(60))
    assert det.state() == "static"


def test_first_hold_accepts_a_spell_of_exactly_the_hold_time() -> None:
    """Kills conv-hold-gt: "stays within the radius for at least converge_hold_s"."""
    assert first_hold(np.arange(61.0), np.ones(61, dtype=bool), 60.0) == 0.0  # 0 .. 60 s: 60 s
    assert first_hold(np.arange(60.0), np.ones(60, dtype=bool), 60.0) is None  # 0 .. 59 s: too short


def test_dop_disagreement_needs_both_tolerances() -> None:
    """Kills dop-or: a disagreement is off by more than 0.3 AND by more than 20 % (dop.py's rule)."""
    assert not _differs(1.0, {"hdop": 1.25}, "hdop")  # 25 % but only 0.25
    assert not _differs(10.0, {"hdop": 10.5}, "hdop")  # 0.5 but only 5 %
    assert _differs(2.0, {"hdop": 3.0}, "hdop")  # 1.0 and 50 %


def test_dop_is_computed_from_exactly_four_satellites() -> None:
    """Kills dop-min-sats: four satellites fix position and clock (one receiver clock)."""
    az, el = [0.0, 0.0, 120.0, 240.0], [90.0, 30.0, 30.0, 30.0]
    sats = tuple(SatObs("G", i + 1, "", int(el[i]), int(az[i]), 45, True) for i in range(4))
    d = DopStats()
    d.on_epoch(Epoch(mono=0, wall=0, utc=None, quality=1, sats=sats))
    a, e = np.radians(az), np.radians(el)
    # textbook geometry rows [-cos e sin a, -cos e cos a, -sin e, 1]; DOP from (G^T G)^-1
    g = np.column_stack((-np.cos(e) * np.sin(a), -np.cos(e) * np.cos(a), -np.sin(e), np.ones(4)))
    q = np.linalg.inv(g.T @ g)
    cur = d.snapshot()["current"]["computed"]
    assert cur["hdop"] is not None and abs(cur["hdop"] - math.sqrt(q[0, 0] + q[1, 1])) < 1e-3
    assert abs(cur["vdop"] - math.sqrt(q[2, 2])) < 1e-3
