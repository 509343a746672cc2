"""The simulator's reflecting planes (livefix.sim.reflector) and what the analysis finds in them.

Truth comes from the scenario file (read here directly) and from the two-ray closed form: a plane H
below the antenna changes the received power by 1 + a² + 2a·cos(4πH·sin e/λ + φ) (the GNSS-IR
software paper, GPS Solutions 22:80 (2018); docs/sources.md#two-ray-model).
"""

from __future__ import annotations

import dataclasses
import math
import tomllib
from pathlib import Path

import numpy as np
import pytest

from livefix.pipeline import Pipeline
from livefix.sim.receiver import SimReceiver
from livefix.sim.reflector import Reflector
from livefix.sim.scenario import Scenario
from livefix.sources import Chunk

SCENARIOS = Path(__file__).resolve().parents[2] / "livefix" / "sim" / "scenarios"
LAMBDA = 299_792_458.0 / 1575.42e6  # GPS L1: c / 1575.42 MHz


def test_cn0_change_is_the_two_ray_closed_form() -> None:
    r = Reflector(height_m=2.0, amplitude=0.2, roughness_m=0.0, az_from=90, az_to=180, el_below=30)
    el = np.array([5.0, 10.0, 20.0, 29.0])
    az = np.full(4, 120.0)
    got = r.cn0_change_db(az, el, np.full(4, LAMBDA))
    s = np.sin(np.radians(el))
    a = 0.2 * (1.0 - s)  # antenna taper of the model (module docstring)
    psi = 4.0 * math.pi * 2.0 * s / LAMBDA + math.pi  # 180° reflection phase
    np.testing.assert_allclose(got, 10.0 * np.log10(1.0 + a * a + 2.0 * a * np.cos(psi)), atol=1e-12)
    # outside the sector or above el_below: no change
    assert not r.cn0_change_db(np.array([200.0, 120.0]), np.array([10.0, 35.0]), np.full(2, LAMBDA)).any()
    # bounds: between 20·log10(1-a) and 20·log10(1+a) (hand arithmetic)
    assert (got <= 20 * np.log10(1 + a) + 1e-12).all() and (got >= 20 * np.log10(1 - a) - 1e-12).all()


def test_roughness_weakens_the_reflection_at_higher_elevation() -> None:
    smooth = Reflector(1.0, 0.2, 0.0)
    rough = Reflector(1.0, 0.2, 0.02)
    el = np.linspace(5.0, 29.0, 500)
    az = np.zeros(500)
    lam = np.full(500, LAMBDA)
    k = 2 * math.pi / LAMBDA
    # Rayleigh-roughness factor exp(-2(kσ sin e)²) at 25°: 0.86 for σ = 2 cm (hand arithmetic)
    assert math.exp(-2 * (k * 0.02 * math.sin(math.radians(25))) ** 2) == pytest.approx(0.857, abs=0.002)
    assert np.ptp(rough.cn0_change_db(az, el, lam)) < np.ptp(smooth.cn0_change_db(az, el, lam))


def test_rooftop_scenario_has_its_roof_plane() -> None:
    truth = tomllib.loads((SCENARIOS / "rooftop.toml").read_text())["reflector"][0]
    sc = Scenario.load("rooftop")
    assert len(sc.reflectors) == 1
    r = sc.reflectors[0]
    assert (r.height_m, r.az_from, r.az_to) == (truth["height_m"], truth["az_from"], truth["az_to"])
    with pytest.raises(ValueError, match="reflector"):
        Scenario.load(_bad_toml())


def _bad_toml() -> Path:
    import tempfile

    text = (SCENARIOS / "rooftop.toml").read_text().replace("height_m = 1.8", "height_m = 1.8\ncolour = 1")
    f = tempfile.NamedTemporaryFile("w", suffix=".toml", delete=False)  # noqa: SIM115
    f.write(text)
    f.close()
    return Path(f.name)


def simulated_reflection(scenario: str, hours: float) -> dict:
    """The `reflection` snapshot of a simulated session at 1 Hz with GPS, Galileo and BeiDou."""
    sc = dataclasses.replace(Scenario.load(scenario), systems=("G", "E", "C"))
    p = Pipeline()
    for t, data in SimReceiver(sc, rate_hz=1, seed=1).epochs(hours * 3600.0):
        p.feed(Chunk(t, sc.start_utc + t, data))
    p.finish()
    assert p.analyzer.internal_errors == 0
    return p.analyzer.snapshot(p.counters())["reflection"]


def test_simulated_rooftop_session_reports_the_roof_height_and_sectors() -> None:
    # 2 h at 1 Hz from the generator (simulated clocks, not real time), GPS, Galileo and BeiDou
    # (GLONASS carries no known wavelength in NMEA and is not analysed). A 6 h run of the whole
    # rooftop scenario is reported in docs; this one keeps CI short.
    truth = tomllib.loads((SCENARIOS / "rooftop.toml").read_text())["reflector"][0]
    r = simulated_reflection("rooftop", 2.0)
    assert r["arcs"] >= 6
    assert r["height_m"] == pytest.approx(truth["height_m"], abs=0.05)  # the scenario's roof plane
    lo, hi = truth["az_from"], truth["az_to"]
    for s in r["sectors"]:  # every sector with accepted arcs overlaps the roof's azimuths
        assert s["az_to"] > lo and s["az_from"] < hi, s
        assert s["height_m"] == pytest.approx(truth["height_m"], abs=0.05)
    for arc in r["recent"]:
        assert lo - 10 <= arc["az"] <= hi + 10, arc  # arcs straddling an edge may lean out a little
