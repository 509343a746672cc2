"""Error and signal models of the simulated receiver.

Position error: per axis (east, north, up) a first-order Gauss-Markov process plus white noise,
the combination scaled by the DOP of the satellites actually used (horizontal 1-sigma per axis
= UERE·HDOP/√2, vertical = UERE·VDOP), with a UERE and a correlation time per fix type. The
values below are invented but plausible (common practice: metre level autonomous, decimetres
DGNSS/float, about a centimetre RTK fixed).

C/N0: rises with the sine of elevation from `cn0_5deg` at 5° to `cn0_zenith` at 90° (defaults 32
and 48 dB-Hz bracket the typical 37–45 dB-Hz, docs/sources.md#typical-cn0), plus a per-satellite offset and
white noise; multipath sectors attenuate and add jitter.
"""

from __future__ import annotations

import math

import numpy as np

# fix type -> (UERE metres, Gauss-Markov correlation time seconds); invented, plausible.
UERE: dict[str, tuple[float, float]] = {
    "single": (1.5, 90.0),
    "dgnss": (0.5, 60.0),
    "rtk_float": (0.2, 20.0),
    "rtk_fixed": (0.015, 10.0),
}
# The error path is stepped on a fixed 20 Hz grid (the highest sim rate) whatever the output rate.
GRID_HZ = 20
GRID_DT = 1.0 / GRID_HZ
GM_SHARE = 0.85  # share of the variance that is time-correlated; the rest is white
FLOAT_CONVERGE_S = 8.0  # rtk_float error starts 4x larger and decays with this time constant
# Invented per-system C/N0 offsets (dB) so the constellations do not look identical.
SYSTEM_CN0_OFFSET = {"G": 0.0, "R": -1.5, "E": 0.5, "C": -0.5}


class PositionError:
    """Correlated ENU error in metres; call `at` once per epoch with a fix."""

    def __init__(self, rng: np.random.Generator) -> None:
        self.rng = rng
        self.state = rng.standard_normal(3)  # unit-variance Gauss-Markov state
        self.k = 0  # grid ticks taken (see `at`)
        self._white = np.zeros(3)

    def sigmas(self, fix: str, hdop: float, vdop: float, since_fix_type_s: float) -> tuple[float, float, float]:
        """1-sigma (east, north, up) the receiver should report for this fix type and geometry."""
        uere = UERE[fix][0]
        if fix == "rtk_float":
            uere *= 1.0 + 3.0 * math.exp(-since_fix_type_s / FLOAT_CONVERGE_S)
        s_h = uere * hdop / math.sqrt(2.0)
        return (s_h, s_h, uere * vdop)

    def at(self, k: int, fix_before: str, fix: str, sig: tuple[float, float, float],
           resume: bool = False) -> np.ndarray:
        """Error at grid tick k (GRID_HZ ticks per second), stepping every tick not yet taken.

        The path lives on a fixed grid, so a receiver at 1 Hz sees at each whole second the same
        error as one at 20 Hz: changing the output rate changes the sampling, not the receiver.
        Ticks before k relax with `fix_before`'s correlation time, tick k with `fix`'s. `resume`
        (first fix after a time without one) relaxes the skipped ticks in one exact draw, so an
        hour without a fix costs no more than one tick."""
        n = k - self.k
        if n <= 0:
            return self._mix(self._white, sig)
        if resume and n > 1:
            p = math.exp(-(n - 1) * GRID_DT / UERE[fix_before][1])
            self.state = p * self.state + math.sqrt(1.0 - p * p) * self.rng.standard_normal(3)
            n = 1
        draws = self.rng.standard_normal((n, 6))
        phi_b, phi = math.exp(-GRID_DT / UERE[fix_before][1]), math.exp(-GRID_DT / UERE[fix][1])
        st = self.state
        for i in range(n):
            p = phi if i == n - 1 else phi_b
            st = p * st + math.sqrt(1.0 - p * p) * draws[i, :3]
        self.state, self.k, self._white = st, k, draws[-1, 3:]
        return self._mix(self._white, sig)

    def _mix(self, white: np.ndarray, sig: tuple[float, float, float]) -> np.ndarray:
        return (math.sqrt(GM_SHARE) * self.state + math.sqrt(1.0 - GM_SHARE) * white) * np.asarray(sig)


def cn0_model(el_deg: np.ndarray, c5: float, c90: float) -> np.ndarray:
    """Mean C/N0 (dB-Hz) against elevation: linear in sin(el), c5 at 5°, c90 at zenith."""
    s5 = math.sin(math.radians(5.0))
    x = (np.sin(np.radians(np.clip(el_deg, 0.0, 90.0))) - s5) / (1.0 - s5)
    return c5 + (c90 - c5) * x
