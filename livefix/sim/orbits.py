"""Keplerian MEO shells for the simulated receiver: an original, invented constellation model.

Four shells shaped like the global constellations (plane count, inclination, semi-major axis as
published for the nominal designs; see docs/sources.md#orbits), with invented phasing, small invented
eccentricities and no real almanac. Positions are earth-fixed (the node regresses at the earth's
rotation rate), which is all the az/el and DOP geometry needs.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from livefix.geodesy import GM, OMEGA_E


@dataclass(frozen=True, slots=True)
class Shell:
    """One constellation: `planes` planes equally spaced in node, `per_plane` satellites each."""

    system: str  # RINEX letter
    planes: int
    per_plane: int
    incl_deg: float
    a_m: float
    node_spacing_deg: float
    first_prn: int  # NMEA number of the first satellite (GLONASS 65.., others 1..)
    phase_step_deg: float  # invented along-track offset between neighbouring planes
    node0_deg: float  # invented node of the first plane at the scenario start


# Semi-major axes: GPS SPS Performance Standard 2001 Table 3-1 (G); docs/sources.md#orbits for the others
# (R and C "from memory", E from public material). Phasing, nodes and PRNs are invented.
SHELLS: dict[str, Shell] = {
    "G": Shell("G", 6, 5, 55.0, 26_559_700.0, 60.0, 1, 17.0, 12.0),
    "R": Shell("R", 3, 8, 64.8, 25_510_000.0, 120.0, 65, 15.0, 40.0),
    "E": Shell("E", 3, 8, 56.0, 29_600_000.0, 120.0, 1, 15.0, 75.0),
    "C": Shell("C", 3, 8, 55.0, 27_900_000.0, 120.0, 19, 15.0, 100.0),
}


def period_s(a_m: float) -> float:
    """Keplerian orbital period 2π·sqrt(a³/GM)."""
    return 2.0 * math.pi * math.sqrt(a_m**3 / GM)


def solve_kepler(m: np.ndarray | float, e: np.ndarray | float, tol: float = 1e-13) -> np.ndarray:
    """Eccentric anomaly E from mean anomaly M: E - e·sin E = M, by Newton iteration (vectorised)."""
    m = np.asarray(m, dtype=float)
    e = np.asarray(e, dtype=float)
    ecc = m + 0.85 * e * np.sign(np.sin(m))  # a starting value that converges for any e < 1
    for _ in range(30):
        f = ecc - e * np.sin(ecc) - m
        step = f / (1.0 - e * np.cos(ecc))
        ecc = ecc - step
        if np.all(np.abs(step) < tol):
            break
    return ecc


class Constellation:
    """Orbital elements of every simulated satellite, evaluated in bulk."""

    def __init__(self, systems: tuple[str, ...], rng: np.random.Generator) -> None:
        sys_l, prn_l, a_l, e_l, i_l, node_l, argp_l, m0_l = [], [], [], [], [], [], [], []
        for letter in systems:
            sh = SHELLS[letter]
            for p in range(sh.planes):
                for k in range(sh.per_plane):
                    sys_l.append(letter)
                    prn_l.append(sh.first_prn + p * sh.per_plane + k)
                    a_l.append(sh.a_m)
                    e_l.append(float(rng.uniform(0.0005, 0.012)))  # small, invented
                    i_l.append(math.radians(sh.incl_deg + rng.normal(0.0, 0.4)))
                    node_l.append(math.radians(sh.node0_deg + p * sh.node_spacing_deg))
                    argp_l.append(float(rng.uniform(0.0, 2 * math.pi)))
                    m0_l.append(math.radians(k * 360.0 / sh.per_plane + p * sh.phase_step_deg
                                             + rng.normal(0.0, 2.0)) - argp_l[-1])
        self.systems = tuple(sys_l)
        self.prns = tuple(prn_l)
        self.a = np.array(a_l)
        self.e = np.array(e_l)
        self.incl = np.array(i_l)
        self.node0 = np.array(node_l)
        self.argp = np.array(argp_l)
        self.m0 = np.array(m0_l)
        self.n = np.sqrt(GM / self.a**3)  # mean motion

    def __len__(self) -> int:
        return len(self.prns)

    def ecef(self, t: float) -> np.ndarray:
        """Earth-fixed positions (N×3, metres) at t seconds after the scenario start."""
        ecc = solve_kepler(self.m0 + self.n * t, self.e)
        nu = 2.0 * np.arctan2(np.sqrt(1 + self.e) * np.sin(ecc / 2), np.sqrt(1 - self.e) * np.cos(ecc / 2))
        r = self.a * (1.0 - self.e * np.cos(ecc))
        u = self.argp + nu  # argument of latitude
        xp, yp = r * np.cos(u), r * np.sin(u)
        node = self.node0 - OMEGA_E * t  # earth-fixed longitude of the ascending node
        ci, cn, sn = np.cos(self.incl), np.cos(node), np.sin(node)
        x = xp * cn - yp * ci * sn
        y = xp * sn + yp * ci * cn
        z = yp * np.sin(self.incl)
        return np.column_stack((x, y, z))
