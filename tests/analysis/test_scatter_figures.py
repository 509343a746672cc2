"""Scatter figures against scipy and the published circular-normal factors."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, optimize, stats

from livefix.analysis.scatter import figures
from livefix.analysis.streaming import LogHistogram


def _exact_cep(se: float, sn: float, p: float) -> float:
    """Radius holding p of a centred elliptical normal, by quadrature with scipy.stats.norm."""
    def cdf(r: float) -> float:
        f = lambda x: stats.norm.pdf(x, scale=se) * (  # noqa: E731
            stats.norm.cdf(math.sqrt(max(r * r - x * x, 0.0)) / sn)
            - stats.norm.cdf(-math.sqrt(max(r * r - x * x, 0.0)) / sn))
        return integrate.quad(f, -r, r, limit=200)[0]
    return optimize.brentq(lambda r: cdf(r) - p, 1e-6, 10 * (se + sn))


def test_circular_factors_match_rayleigh_and_published() -> None:
    rng = np.random.default_rng(11)
    e, n, u = rng.normal(0, 1, 40000), rng.normal(0, 1, 40000), rng.normal(0, 1, 40000)
    f = figures(e, n, u)
    # scipy.stats.rayleigh quantiles; published circular-normal factors (docs/sources.md#circular-normal-factors):
    # CEP50 = 1.1774 sigma, R95 = 2.4477 sigma, 2DRMS = 2.8284 sigma, V95 = 1.960 sigma
    assert abs(stats.rayleigh.ppf(0.5) - 1.1774) < 1e-4 and abs(stats.rayleigh.ppf(0.95) - 2.4477) < 1e-4
    assert abs(f["cep50_m"] - 1.1774) < 0.03
    assert abs(f["cep95_m"] - 2.4477) < 0.05
    assert f["r95_m"] == f["cep95_m"]  # documented: R95 is the same empirical 95 % radius
    assert abs(f["r95_gauss_m"] - 2.4477) < 0.03
    assert abs(f["drms2_m"] - 2.8284) < 0.03
    assert abs(f["v95_m"] - stats.norm.ppf(0.975)) < 0.04  # scipy.stats.norm: 1.960 sigma
    # NRC (1995): CEP ~= 0.589 (sN + sE) -> 1.178 for unit sigmas
    assert abs(f["cep50_m"] - 0.589 * 2) < 0.03


def test_elliptical_cep_against_quadrature_and_nrc() -> None:
    rng = np.random.default_rng(12)
    se, sn = 1.0, 2.0
    e, n = rng.normal(0, se, 40000), rng.normal(0, sn, 40000)
    f = figures(e, n)
    ref50, ref95 = _exact_cep(se, sn, 0.5), _exact_cep(se, sn, 0.95)  # scipy quad + brentq
    assert abs(f["cep50_m"] / ref50 - 1) < 0.02
    assert abs(f["cep95_m"] / ref95 - 1) < 0.02
    # NRC (1995) CEP ~= 0.589 (sN + sE): an approximation, a few per cent for this ellipticity
    assert abs(ref50 / (0.589 * (se + sn)) - 1) < 0.05
    assert abs(f["drms2_m"] - 2 * math.hypot(se, sn)) < 0.05  # NRC (1995): 2DRMS = 2 sqrt(sN^2 + sE^2)


def test_2drms_containment_between_line_and_circle() -> None:
    rng = np.random.default_rng(13)
    m = 60000
    # US FRP Appendix A: 2DRMS holds ~95 % (ellipse collapsed to a line) to ~98 % (circle);
    # exact ends: chi2(2).cdf(8) = 0.9817 (scipy), 2*norm.cdf(2)-1 = 0.9545 (scipy)
    circle = stats.chi2(2).cdf(8.0)
    line = 2 * stats.norm.cdf(2.0) - 1
    shares = []
    for ratio in (1.0, 0.5, 0.2, 0.01):
        e, n = rng.normal(0, ratio, m), rng.normal(0, 1.0, m)
        f = figures(e, n)
        shares.append(float(np.mean(np.hypot(e - e.mean(), n - n.mean()) <= f["drms2_m"])))
    assert abs(shares[0] - circle) < 0.003
    assert abs(shares[-1] - line) < 0.004
    assert all(line - 0.004 <= s <= circle + 0.003 for s in shares)
    assert shares == sorted(shares, reverse=True)  # flatter ellipse -> smaller share


def test_error_ellipse_axes_and_orientation() -> None:
    rng = np.random.default_rng(14)
    ang = math.radians(30.0)  # major axis 30 deg east of north
    a, b = rng.normal(0, 3.0, 30000), rng.normal(0, 1.0, 30000)
    e = a * math.sin(ang) + b * math.cos(ang)
    n = a * math.cos(ang) - b * math.sin(ang)
    el = figures(e, n)["ellipse"]
    # common practice: 1-sigma semi-axes = sqrt of the covariance eigenvalues
    assert abs(el["major_m"] - 3.0) < 0.05 and abs(el["minor_m"] - 1.0) < 0.02
    assert abs(el["orient_deg"] - 30.0) < 1.0


def test_streaming_histogram_quantiles_close_to_numpy() -> None:
    rng = np.random.default_rng(15)
    r = stats.rayleigh.rvs(scale=0.02, size=20000, random_state=rng)
    h = LogHistogram()
    for x in r:
        h.add(float(x))
    for p in (0.5, 0.95):  # reference: numpy percentile of the same sample; bins are 0.5 % wide
        assert abs(h.quantile(p) / np.percentile(r, 100 * p) - 1) < 0.006
    # bounded: bins only where values fell, about 460 a decade (ln 10 / 0.005); this Rayleigh sample
    # spans under 4 decades
    assert len(h.bins) < 4 * 461


def test_streaming_histogram_counts_exact_zeros() -> None:
    # a position that repeats the mean exactly has radius 0: 3 zeros and 1 value of 2.0 (hand count)
    h = LogHistogram()
    for x in (0.0, 0.0, 0.0, 2.0, float("nan"), -1.0, None):
        h.add(x)
    assert h.n == 4  # NaN, negative and None are not counted
    assert h.quantile(0.5) == 0.0 and h.quantile(0.75) == 0.0  # 3 of 4 values are 0
    assert h.quantile(0.95) == pytest.approx(2.0, rel=0.0025)  # bin centre within half a 0.5 % bin
