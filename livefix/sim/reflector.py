"""Reflecting surfaces of the simulated site: the C/N0 a real antenna sees above a roof or ground.

Why: the analysis estimates reflector heights from C/N0 oscillations (livefix.analysis.reflectors);
the simulator must make those oscillations with a known truth. A horizontal plane H below the
antenna sends a reflected copy of each signal that arrives with an extra path 2H·sin(e), a phase
ψ = 4πH·sin(e)/λ + φ. Direct (amplitude 1) and reflected (amplitude a) add as phasors, so the
received power changes by |1 + a·e^{iψ}|² = 1 + a² + 2a·cos ψ (two-ray model, common practice;
the GNSS-IR software paper, GPS Solutions 22:80 (2018), for its use in reflectometry).

The reflected amplitude a falls with elevation: the surface's roughness (rms height σ) removes the
coherent part by exp(−2(kσ·sin e)²), k = 2π/λ (the Rayleigh-roughness factor, from memory), and the
antenna's gain pattern weakens signals from further below the horizon, taken here as (1 − sin e)
(invented, plausible). Reflection phase φ = 180° (a grazing reflection reverses the phase, from memory).

Walls are a simplification. A vertical wall d metres from the antenna, facing azimuth α, reflects
signals from satellites in front of it with an extra path 2d·cos e·cos(az − α) (image-antenna
geometry, common practice), which grows with cos e rather than sin e; against sin e its frequency
drifts along the arc (an apparent height d·tan e). The simulator does not model that drift: a wall
is a Reflector limited to a narrow azimuth sector in front of it, with its own effective height and
amplitude, so the analysis has one known truth per sector. Tests must not read such a sector's
height as a wall distance.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

C_LIGHT = 299_792_458.0  # m/s
# Carrier of the signal the simulator writes in GSV, MHz: GPS L1 C/A, Galileo E1, BeiDou B1I (interface
# specifications, docs/sources.md#carrier-frequencies); GLONASS G1 at its channel-0 frequency 1602 MHz (its FDMA
# channel is not modelled).
SIM_CARRIER_MHZ = {"G": 1575.42, "E": 1575.42, "C": 1561.098, "R": 1602.0}


@dataclass(frozen=True, slots=True)
class Reflector:
    """A horizontal plane height_m below the antenna, seen in the azimuth sector az_from..az_to
    (clockwise, degrees true) below el_below."""

    height_m: float
    amplitude: float = 0.15  # reflected/direct amplitude ratio at the horizon
    roughness_m: float = 0.0  # rms height of the surface
    az_from: float = 0.0
    az_to: float = 360.0
    el_below: float = 30.0
    phase_deg: float = 180.0

    def covers(self, az: np.ndarray, el: np.ndarray) -> np.ndarray:
        span = (self.az_to - self.az_from) % 360.0
        if span == 0.0 and self.az_to != self.az_from:
            span = 360.0
        in_az = ((az - self.az_from) % 360.0 <= span) | (span >= 360.0)
        return in_az & (el > 0.0) & (el < self.el_below)

    def cn0_change_db(self, az: np.ndarray, el: np.ndarray, lam: np.ndarray) -> np.ndarray:
        """C/N0 change in dB (positive or negative) per satellite; 0 outside the sector."""
        s = np.sin(np.radians(np.clip(el, 0.0, 90.0)))
        k = 2.0 * math.pi / lam
        a = self.amplitude * np.exp(-2.0 * (k * self.roughness_m * s) ** 2) * (1.0 - s)
        psi = 4.0 * math.pi * self.height_m * s / lam + math.radians(self.phase_deg)
        gain = 10.0 * np.log10(np.maximum(1.0 + a * a + 2.0 * a * np.cos(psi), 1e-6))
        return np.where(self.covers(az, el), gain, 0.0)


def wavelengths(systems: list[str] | tuple[str, ...]) -> np.ndarray:
    """Carrier wavelength per satellite (metres) from its system letter."""
    return np.array([C_LIGHT / (SIM_CARRIER_MHZ[s] * 1e6) for s in systems])


def total_change_db(reflectors: tuple[Reflector, ...], az: np.ndarray, el: np.ndarray,
                    lam: np.ndarray) -> np.ndarray:
    out = np.zeros(len(el))
    for r in reflectors:
        out = out + r.cn0_change_db(az, el, lam)
    return out
