"""Drift as a slope with an honest 95 % interval; checks fail only beyond it (issue 13 item 13)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from position_nmea import analyse_file
from scipy import stats

from livefix.analysis import position_figures
from livefix.analysis.config import AnalysisConfig
from livefix.analysis.drift import T975_LOW, run_needed_s, slope_fit, t975
from livefix.analysis.position import PositionStats
from livefix.check.interval import judge
from livefix.check.profile import OPS, evaluate, parse_profile
from livefix.geodesy import LocalFrame
from livefix.state.epoch import Epoch

T0 = 1.8e9


def _ar1(rng: np.random.Generator, phi: float, n: int) -> np.ndarray:
    w = rng.normal(0.0, 1.0, n + 200)
    x = np.empty_like(w)
    x[0] = w[0]
    for i in range(1, w.size):
        x[i] = phi * x[i - 1] + w[i]
    return x[200:]


def test_white_noise_matches_linregress() -> None:
    rng = np.random.default_rng(71)
    t = np.arange(600.0)
    y = 3e-5 * t + rng.normal(0, 0.01, t.size)
    fit = slope_fit(t, y)
    ref = stats.linregress(t, y)  # reference: scipy.stats.linregress (OLS slope and its standard error)
    assert math.isclose(fit["b"], ref.slope, rel_tol=1e-9)
    assert 1.0 <= fit["se"] / ref.stderr < 1.05  # white noise: the AR(1) terms are small-sample corrections only
    # 95 % half-width: Student t with n - 2 dof on white noise (scipy.stats.t), within 5 %
    assert abs(fit["ci95"] / (stats.t.ppf(0.975, 598) * ref.stderr) - 1) < 0.05


def test_ar1_interval_covers_95_percent() -> None:
    rng = np.random.default_rng(72)
    trials, n, phi = 1000, 400, 0.6
    t = np.arange(n, dtype=float)
    hits = 0
    for _ in range(trials):
        y = 0.002 * t + _ar1(rng, phi, n)  # known slope 0.002, AR(1) noise with known phi
        fit = slope_fit(t, y)
        hits += abs(fit["b"] - 0.002) <= fit["ci95"]
    # binomial(1000, 0.95): 99.7 % of runs of a true 95 % interval fall in this range (scipy.stats.binom)
    lo, hi = stats.binom.interval(0.997, trials, 0.95)
    assert lo <= hits <= hi, hits


def test_t_quantiles_and_sidak_factor_against_scipy() -> None:
    for dof, v in enumerate(T975_LOW, start=1):
        assert abs(v - stats.t.ppf(0.975, dof)) < 1e-3  # reference: scipy.stats.t
    for dof in (5, 7, 12, 30, 120, 1000):
        assert abs(t975(dof) - stats.t.ppf(0.975, dof)) < 1e-3
    assert abs(position_figures.Z_SIDAK - stats.norm.ppf((1 + math.sqrt(0.95)) / 2)) < 1e-5


def test_run_needed_hand_arithmetic() -> None:
    # the slope's uncertainty falls as T^-1.5: halving a 20 mm/h half-width against a 10 mm/h gap
    # needs (20 / 10)^(2/3) = 1.587 times the run
    assert run_needed_s(3600.0, 0.0, 20.0, 10.0) == pytest.approx(3600.0 * 2 ** (2 / 3))


@pytest.mark.parametrize(("value", "ci", "passed", "inconclusive"), [
    (2.0, (0.0, 8.0), True, False),  # whole interval below the limit: pass
    (30.0, (15.0, 45.0), False, False),  # whole interval above: fail
    (11.4, (0.0, 40.0), False, True),  # the case: 11.4 mm/h with SE 11-18 mm/h
])
def test_judge_on_the_interval(value: float, ci: tuple[float, float], passed: bool, inconclusive: bool) -> None:
    ok, inc, note = judge(OPS["<="], 10.0, value, ci, 7200.0)
    assert (ok, inc) == (passed, inconclusive)
    if inc:
        assert note.startswith("inconclusive: run longer (about ") and "h needed" in note


def test_clean_antenna_is_not_failed_on_noise() -> None:
    # a static antenna with correlated noise (AR(1), phi 0.99 at 1 Hz, 5 mm) and no drift for 2 h
    rng = np.random.default_rng(73)
    frame = LocalFrame(46.0, 7.0, 500.0)
    ps = PositionStats(AnalysisConfig(ref=(46.0, 7.0, 500.0)), lambda ev: None)
    n = 7200
    e, nn = 0.005 * _ar1(rng, 0.99, n) / 7.1, 0.005 * _ar1(rng, 0.99, n) / 7.1  # sd(AR) = 1/sqrt(1-phi^2) = 7.1
    for i in range(n):
        lat, lon, h = frame.geodetic(e[i], nn[i], 0.0)
        ps.on_epoch(Epoch(mono=i, wall=T0 + i, utc=T0 + i, quality=4, lat=lat, lon=lon, h=h))
    snap = ps.snapshot()
    lo, hi = snap["drift_h_ci95_mm_per_h"]
    assert lo <= snap["drift_h_mm_per_h"] <= hi and snap["drift_span_s"] > 7000
    prof = parse_profile('[[threshold]]\nname = "drift"\nmetric = "derived.drift_h_mm_per_h"\nop = "<="\nlimit = 10\n')
    (r,) = evaluate(prof, {"position": snap})
    # the true drift is 0: the interval holds it, so the verdict may be pass or inconclusive, never fail
    assert r.passed or r.inconclusive
    assert r.interval == (lo, hi)


def test_report_says_inconclusive_and_shows_value_plus_minus() -> None:
    from livefix.report.document import ReceiverRun, build_report
    from livefix.report.markdown import render_markdown

    pos = {"drift_mm_per_h": {"e": 8.0, "n": 8.0, "u": 1.0}, "drift_ci95_mm_per_h": {"e": [-12.0, 28.0],
           "n": [-12.0, 28.0], "u": [-9.0, 11.0]}, "drift_h_mm_per_h": 11.31, "drift_h_ci95_mm_per_h": [0.0, 51.0],
           "drift_span_s": 3600.0}
    analysis = {"position": pos, "motion": {"state": "static", "moving_share": 0.0}}
    prof = parse_profile('[[threshold]]\nname = "drift"\nmetric = "derived.drift_h_mm_per_h"\nop = "<="\nlimit = 10\n')
    results = evaluate(prof, analysis)
    assert results[0].inconclusive and not results[0].passed
    # hand arithmetic: measured hypot(8, 8) = 11.31 is above the limit, so the lower half-width
    # 11.31 - 0 must shrink below the gap 1.31 mm/h: (11.31 / 1.31)^(2/3) * 1 h = 4.2 h
    assert "about 4.2 h needed" in results[0].note
    run = ReceiverRun(name="rx1", source="x", analysis=analysis, results=results)
    doc = build_report([run], profile=prof)
    assert doc["verdict"] == "inconclusive" and doc["receivers"][0]["verdict"] == "inconclusive"
    md = render_markdown(doc)
    # the record's drift row (livefix.report.facts): value ± half the 95 % interval, [-12, 28] -> 8 ± 20
    assert "INCONCLUSIVE" in md and "8 ± 20, 8 ± 20, 1 ± 10 mm/h" in md
    assert "11.3 mm/h (95 % interval 0 to 51 mm/h)" in md


def test_corpus_rtk_log_with_1hz_heights_has_a_sane_vertical_drift() -> None:
    # RTK fixed, static, RMC at 10 Hz and GGA (heights) at 1 Hz (shared/realdata/SOURCES.md)
    p = analyse_file("gsvnoise_20220112_test.nmea")["position"]
    # issue 13 item 4: RMC-only epochs gave height 0 and a vertical drift of +12,459 mm/h; the right
    # figure is about -75 mm/h, from the GGA heights alone
    assert -100.0 < p["drift_mm_per_h"]["u"] < -50.0
    lo, hi = p["drift_ci95_mm_per_h"]["u"]
    assert lo <= p["drift_mm_per_h"]["u"] <= hi
    assert p["v95_m"] < 0.05 and p["height_datum"] == "ellipsoidal"  # RTK fixed heights: centimetres
