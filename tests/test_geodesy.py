"""livefix.geodesy against outside references: NIMA TR8350.2 constants, pyproj transforms, and a
plain least-squares covariance for DOP."""

from __future__ import annotations

import math

import numpy as np
import pytest
from pyproj import Transformer

from livefix import geodesy

# pyproj: WGS 84 geographic 3D (EPSG:4979) -> WGS 84 geocentric (EPSG:4978)
TO_ECEF = Transformer.from_crs("EPSG:4979", "EPSG:4978", always_xy=True)


def test_wgs84_constants_match_tr8350():
    # NIMA TR8350.2, 3rd ed. (2000, amended 2004), Table 3.1
    assert geodesy.A == 6378137.0
    assert geodesy.INV_F == 298.257223563
    assert geodesy.GM == 3986004.418e8
    assert geodesy.OMEGA_E == 7292115.0e-11
    # derived: semi-minor axis b = 6356752.3142 m, e^2 = 6.69437999014e-3 (TR8350.2 Table 3.3)
    assert geodesy.B == pytest.approx(6356752.3142, abs=1e-4)
    assert geodesy.E2 == pytest.approx(6.69437999014e-3, rel=1e-11)


def _points() -> list[tuple[float, float, float]]:
    rng = np.random.default_rng(7)
    pts = [(0.0, 0.0, 0.0), (89.999, 10.0, 100.0), (-89.9, -170.0, 2500.0), (45.0, 180.0, -50.0),
           (-33.3, 151.2, 8848.0), (60.0, -45.0, 20_000.0)]
    for _ in range(200):
        pts.append((float(rng.uniform(-89.5, 89.5)), float(rng.uniform(-180, 180)), float(rng.uniform(-400, 9000))))
    return pts


def test_geodetic_to_ecef_matches_pyproj():
    for lat, lon, h in _points():
        x, y, z = geodesy.geodetic_to_ecef(lat, lon, h)
        rx, ry, rz = TO_ECEF.transform(lon, lat, h)  # reference: pyproj EPSG:4979 -> EPSG:4978
        assert math.dist((x, y, z), (rx, ry, rz)) < 1e-3


def test_ecef_to_geodetic_round_trip_through_pyproj():
    for lat, lon, h in _points():
        rx, ry, rz = TO_ECEF.transform(lon, lat, h)  # reference ECEF from pyproj
        la, lo, hh = geodesy.ecef_to_geodetic(rx, ry, rz)
        back = geodesy.geodetic_to_ecef(la, lo, hh)
        assert math.dist(back, (rx, ry, rz)) < 1e-3
        assert hh == pytest.approx(h, abs=1e-3)


def test_local_frame_enu_round_trip():
    fr = geodesy.LocalFrame(46.9, 7.6, 600.0)
    lat, lon, h = fr.geodetic(3.0, -4.0, 1.5)
    e, n, u = fr.enu(lat, lon, h)
    assert (e, n, u) == pytest.approx((3.0, -4.0, 1.5), abs=1e-6)
    # pyproj distance check: the 5 m horizontal, 1.5 m vertical offset is sqrt(27.25) m in ECEF
    p0 = TO_ECEF.transform(7.6, 46.9, 600.0)
    p1 = TO_ECEF.transform(lon, lat, h)
    assert math.dist(p0, p1) == pytest.approx(math.sqrt(27.25), abs=1e-6)


def test_az_el_of_zenith_and_horizon_points():
    fr = geodesy.LocalFrame(10.0, 20.0, 0.0)
    up = fr.origin + fr.rot[2] * 2.0e7
    north = fr.origin + fr.rot[1] * 1.0e5
    east = fr.origin + fr.rot[0] * 1.0e5
    az, el = geodesy.az_el(fr, np.vstack((up, north, east)))
    # common practice: azimuth clockwise from true north, elevation above the local horizon
    assert el[0] == pytest.approx(90.0, abs=1e-6)
    assert (az[1], el[1]) == pytest.approx((0.0, 0.0), abs=1e-6)
    assert (az[2], el[2]) == pytest.approx((90.0, 0.0), abs=1e-6)


def _lsq_cov(az, el, systems):  # noqa: ANN001
    """Reference: covariance of the least-squares solution for unit-variance ranges, estimated from
    the normal-equation solution of many noisy ranges (textbook result Q = (GᵀG)⁻¹, from memory)."""
    los = geodesy.line_of_sight(np.asarray(az), np.asarray(el))
    names = sorted(set(systems))
    clk = np.array([[1.0 if s == n else 0.0 for n in names] for s in systems])
    g = np.hstack((-los, clk))
    rng = np.random.default_rng(3)
    noise = rng.standard_normal((len(az), 40_000))
    sol, *_ = np.linalg.lstsq(g, noise, rcond=None)  # least-squares solutions, one per column
    return np.cov(sol)


def test_dop_matches_least_squares_covariance():
    az = [0, 72, 144, 216, 288, 30, 150, 270, 10]
    el = [15, 30, 45, 20, 60, 85, 25, 40, 50]
    systems = ["G", "G", "G", "G", "G", "E", "E", "E", "E"]
    d = geodesy.dop(az, el, systems)
    cov = _lsq_cov(az, el, systems)
    # Monte-Carlo reference: 40k draws give about 1 % standard error on the variances
    assert d["hdop"] == pytest.approx(math.sqrt(cov[0, 0] + cov[1, 1]), rel=0.03)
    assert d["vdop"] == pytest.approx(math.sqrt(cov[2, 2]), rel=0.03)
    assert d["pdop"] == pytest.approx(math.sqrt(np.trace(cov[:3, :3])), rel=0.03)
    assert d["gdop"] == pytest.approx(math.sqrt(np.trace(cov)), rel=0.03)


def test_dop_textbook_geometry():
    # Worked case: one satellite at zenith, three on the horizon 120 deg apart, one clock. By hand,
    # GᵀG = [[1.5,0,0,0],[0,1.5,0,0],[0,0,1,-1],[0,0,-1,4]], so HDOP = sqrt(2/1.5) and
    # VDOP = sqrt(4/3); cross-checked against the explicit inverse.
    d = geodesy.dop([0, 0, 120, 240], [90, 0, 0, 0])
    g = np.hstack((-geodesy.line_of_sight(np.array([0, 0, 120, 240.0]), np.array([90, 0, 0, 0.0])), np.ones((4, 1))))
    q = np.linalg.inv(g.T @ g)
    assert d["hdop"] == pytest.approx(math.sqrt(q[0, 0] + q[1, 1]), rel=1e-9)
    assert d["hdop"] == pytest.approx(math.sqrt(4.0 / 3.0), rel=1e-9)
    assert d["vdop"] == pytest.approx(math.sqrt(4.0 / 3.0), rel=1e-9)


def test_dop_singular_and_too_few():
    assert geodesy.dop([0, 90, 180], [30, 30, 30]) is None  # fewer satellites than unknowns
    assert geodesy.dop([0, 0, 0, 0, 0], [10, 10, 10, 10, 10]) is None  # all on one line of sight
