"""GNSS-IR estimation of one arc (livefix.analysis.reflection) against closed forms and scipy.

Synthetic arcs: a satellite rising from 5° to 25°, one C/N0 sample per second, whose direct signal
rises smoothly (28 + 20·sqrt(sin e) dB-Hz, neither polynomial in sin e nor linear in dB, so no
detrend model is favoured) and interferes with a reflection of amplitude ratio a off a horizontal
plane H below the antenna: C/N0 += 10·log10(1 + a² + 2a·cos(4πH·sin e/λ + φ)) (two-ray model;
H = f·λ/2 from the GNSS-IR software paper, GPS Solutions 22:80 (2018), see docs/sources.md#gnss-ir-method),
then 1 dB-Hz white noise and rounding to whole dB-Hz as NMEA writes it.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.signal

from livefix.analysis.reflection import (
    ReflectionConfig,
    detrended,
    estimate,
    fresnel_zone,
    lomb_scargle,
    nyquist_height,
    wavelength,
)

LAMBDA = 299_792_458.0 / 1575.42e6  # GPS L1 / Galileo E1: c / 1575.42 MHz (IS-GPS-200; SI value of c)
CFG = ReflectionConfig()


def arc(h: float | None, rng: np.random.Generator, a: float = 0.15, phase: float = 0.0, noise: float = 1.0,
        n: int = 2400, whole_db: bool = True) -> tuple[np.ndarray, np.ndarray]:
    e = np.linspace(5.0, 25.0, n)
    x = np.sin(np.radians(e))
    c = 28.0 + 20.0 * np.sqrt(x)
    if h is not None:
        c = c + 10.0 * np.log10(1.0 + a * a + 2.0 * a * np.cos(4.0 * math.pi * h * x / LAMBDA + phase))
    c = c + rng.normal(0.0, noise, n)
    return x, (np.round(c) if whole_db else c)


def test_wavelength_is_c_over_f() -> None:
    # λ = c / 1575.42 MHz = 0.190294 m (docs/sources.md#carrier-frequencies); BeiDou B1I c / 1561.098 MHz
    assert wavelength("G", "1") == pytest.approx(LAMBDA, rel=1e-12)
    assert wavelength("G", "1") == pytest.approx(0.190294, abs=1e-6)
    assert wavelength("E", "7") == pytest.approx(LAMBDA, rel=1e-12)
    assert wavelength("C", "1") == pytest.approx(299_792_458.0 / 1561.098e6, rel=1e-12)
    assert wavelength("R", "1") is None  # GLONASS FDMA channel not in NMEA: no wavelength, no guess


@pytest.mark.parametrize("h", [0.5, 0.8, 1.5, 2.5, 4.0, 6.0])
def test_known_heights_recovered_within_3cm(h: float) -> None:
    rng = np.random.default_rng(int(h * 100))
    for phase in np.linspace(0.0, 2.0 * math.pi, 4, endpoint=False):
        x, c = arc(h, rng, phase=phase)
        fit = estimate(x, c, LAMBDA, CFG)
        assert fit.accepted, fit
        assert fit.height_m == pytest.approx(h, abs=0.03)  # the closed-form H of the fixture
        # amplitude: the oscillation of 10^(C/20) over its trend is ≈ a (0.15): first order in a
        assert 0.10 < fit.amplitude < 0.20


def test_periodogram_matches_scipy_lombscargle() -> None:
    rng = np.random.default_rng(5)
    x, c = arc(2.2, rng)
    y, _ = detrended(x, c, CFG.poly_order)
    heights = np.arange(0.5, 8.0, 0.005)
    f = 2.0 * heights / LAMBDA
    ours = lomb_scargle(x, y, f)
    ref = scipy.signal.lombscargle(x, y, 2.0 * np.pi * f)  # angular frequencies, classical, not normalised
    np.testing.assert_allclose(ours, ref, rtol=1e-7, atol=1e-9 * ref.max())
    assert int(np.argmax(ours)) == int(np.argmax(ref))
    assert heights[int(np.argmax(ref))] == pytest.approx(2.2, abs=0.03)  # scipy's peak is the fixture's H


def test_no_reflector_gives_no_accepted_arc() -> None:
    rng = np.random.default_rng(11)
    fits = [estimate(*arc(None, rng), LAMBDA, CFG) for _ in range(60)]
    assert not [f for f in fits if f.accepted]
    assert all(f.pk_noise < CFG.min_peak_noise or f.amplitude < CFG.min_amplitude for f in fits)


def test_whole_db_staircase_without_noise_is_not_a_reflector() -> None:
    # a rise linear in sin e (as the simulator's C/N0 model) written in whole dB is a staircase
    # repeating at S cycles per unit sin e (S = dB risen / sin e covered): a sawtooth the
    # periodogram sees as a reflector at H = S·λ/2. It must be refused; a real reflector there passes.
    x = np.sin(np.radians(np.linspace(5.0, 25.0, 2400)))
    smooth = 32.0 + 17.5 * (x - x[0]) / (1.0 - x[0])
    fit = estimate(x, np.round(smooth), LAMBDA, CFG)
    assert not fit.accepted and fit.why == "rounding alias"
    steps = 17.5 / (1.0 - x[0])  # hand arithmetic on the fixture: dB per unit sin e = staircase frequency
    assert fit.height_m == pytest.approx(steps * LAMBDA / 2.0, abs=0.05)  # H = f·λ/2 of that frequency
    h = float(steps * LAMBDA / 2.0)
    refl = 10.0 * np.log10(1.0 + 0.15**2 + 0.3 * np.cos(4.0 * math.pi * h * x / LAMBDA))
    assert estimate(x, np.round(smooth + refl), LAMBDA, CFG).accepted


def test_short_arc_and_few_points_are_refused() -> None:
    rng = np.random.default_rng(3)
    x, c = arc(2.0, rng)
    short = x < math.sin(math.radians(12.0))  # 5–12°: under min_span_deg (10°)
    assert estimate(x[short], c[short], LAMBDA, CFG).why == "short arc"
    assert estimate(x[::100], c[::100], LAMBDA, CFG).why == "few points"  # 24 samples < 40


def test_nyquist_limit_is_lambda_over_4_dx() -> None:
    x = np.sin(np.radians(np.linspace(5.0, 25.0, 61)))
    dx = (x[-1] - x[0]) / 60  # mean spacing in sin e
    assert nyquist_height(x, LAMBDA) == pytest.approx(LAMBDA / (4.0 * dx))  # f_max = 1/(2Δx), H = fλ/2
    # a coarsely sampled arc: heights are only searched up to its Nyquist height
    rng = np.random.default_rng(4)
    xs, cs = arc(1.5, rng, n=61, noise=0.3, whole_db=False)
    fit = estimate(xs, cs, LAMBDA, CFG)
    assert fit.nyquist_m == pytest.approx(LAMBDA / (4.0 * dx))
    assert fit.height_m is not None and fit.height_m <= fit.nyquist_m


def _path_excess(d: float, y: float, h: float, el: float) -> float:
    """Path of a plane wave from elevation el (toward +d) via ground point (d, y) to an antenna h
    above the origin, minus nothing (compare differences only)."""
    e = math.radians(el)
    return -d * math.cos(e) + math.sqrt(d * d + y * y + h * h)


@pytest.mark.parametrize(("h", "el"), [(1.8, 5.0), (1.8, 10.0), (3.0, 15.0), (2.0, 90.0)])
def test_fresnel_zone_matches_ray_geometry(h: float, el: float) -> None:
    # first Fresnel zone: ground points whose path exceeds the specular one by at most λ/2
    # (geometry from first principles, solved numerically here; the formula is from the GNSS-IR
    # Fresnel-zone paper, GPS Solutions 17 (2013), from memory)
    from scipy.optimize import brentq, minimize_scalar

    spec = minimize_scalar(lambda d: _path_excess(d, 0.0, h, el), bounds=(0.0, 1e4), method="bounded",
                           options={"xatol": 1e-10})
    d0, p0 = float(spec.x), float(spec.fun)
    g = lambda d: _path_excess(d, 0.0, h, el) - p0 - LAMBDA / 2.0  # noqa: E731
    near, far = (brentq(g, -1e3, d0), brentq(g, d0, 1e5)) if el < 90 else (-math.nan, math.nan)
    dist, semi_major, semi_minor = fresnel_zone(h, el, LAMBDA)
    if el < 90:
        assert dist == pytest.approx((near + far) / 2.0, rel=1e-6)
        assert semi_major == pytest.approx((far - near) / 2.0, rel=1e-6)
        y = brentq(lambda y: _path_excess(dist, y, h, el) - p0 - LAMBDA / 2.0, 0.0, 1e4)
        assert semi_minor == pytest.approx(y, rel=1e-3)
    else:  # zenith: a circle r² = λH + λ²/4 around the antenna's foot (hand arithmetic)
        assert dist == pytest.approx(0.0, abs=1e-9)
        assert semi_major == pytest.approx(semi_minor)
        assert semi_minor == pytest.approx(math.sqrt(LAMBDA * h + LAMBDA**2 / 4.0))


def test_degenerate_arc_is_refused_with_a_small_search() -> None:
    # a satellite standing still in elevation (span 0): the resolution cell λ/2 / Δsin e is
    # unbounded: refused even when the configured span test is switched off
    x = np.full(500, math.sin(math.radians(15.0)))
    c = np.round(40.0 + np.random.default_rng(1).normal(0.0, 1.0, 500))
    assert estimate(x, c, LAMBDA, CFG).why == "short arc"
    fit = estimate(x, c, LAMBDA, ReflectionConfig(min_span_deg=0.0))
    assert not fit.accepted


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_periodogram_matches_scipy_on_noise_and_low_frequencies(seed: int) -> None:
    # scipy.signal.lombscargle (normalize=False) is the reference: pure noise, uneven sampling and
    # frequencies down to a tenth of a cycle over the arc, where Σcos² and Σsin² are far apart
    rng = np.random.default_rng(seed)
    x = np.sort(rng.uniform(0.05, 0.45, 300))
    y = rng.normal(size=x.size)
    f = np.concatenate([np.linspace(0.25, 3.0, 40), np.linspace(3.0, 60.0, 400)])
    ours = lomb_scargle(x, y, f)
    ref = scipy.signal.lombscargle(x, y, 2.0 * np.pi * f)
    np.testing.assert_allclose(ours, ref, rtol=1e-7, atol=1e-9 * ref.max())
