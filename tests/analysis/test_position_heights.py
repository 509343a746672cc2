"""Heights: only GGA/GNS heights count, never 0; MSL-only heights are not mixed with ellipsoidal ones
(issue 13 item 4, position side)."""

from __future__ import annotations

from position_nmea import analyse, circle, gga, rmc


def test_rmc_epochs_between_gga_do_not_touch_the_vertical() -> None:
    # 10 Hz RMC, GGA once a second; GGA heights alternate +-0.1 m about 400 + 48 m (ellipsoidal)
    eps = []
    for k in range(3000):
        t = k / 10.0
        e, n = circle(k, 0.01)
        lines = [rmc(t, e, n)]
        if k % 10 == 0:
            lines.insert(0, gga(t, e, n, u=0.1 if (k // 10) % 2 else -0.1, q=4))
        eps.append(lines)
    p = analyse(eps, dt=0.1)["position"]
    assert p["height_datum"] == "ellipsoidal" and p["n_v"] == 300  # 300 GGA epochs carry a height
    assert abs(p["mean"]["h"] - 448.0) < 0.001  # hand arithmetic: mean of +-0.1 about 400 + 48
    assert abs(p["v95_m"] - 0.1) < 1e-6  # every |u - mean| is 0.1 m exactly
    assert p["no_height"] == 2700  # the RMC-only epochs, counted and left out


def test_rmc_only_log_has_no_height() -> None:
    eps = [[rmc(k, *circle(k, 0.5))] for k in range(200)]
    p = analyse(eps)["position"]
    assert p["cep50_m"] is not None  # horizontal figures still there
    assert p["mean"]["h"] is None and p["v95_m"] is None and p["height_datum"] is None  # not 0.0 / -0.0
    assert p["offset_m"]["u"] is None


def test_msl_only_heights_are_not_mixed_with_ellipsoidal() -> None:
    eps = []
    for k in range(200):  # 100 epochs with geoid separation 48 m, then 100 with the field empty
        e, n = circle(k, 0.5)
        eps.append([gga(k, e, n, sep="48.0" if k < 100 else "")])
    p = analyse(eps)["position"]
    assert p["height_datum"] == "ellipsoidal" and p["other_datum_heights"] == 100
    assert abs(p["mean"]["h"] - 448.0) < 0.001 and p["n_v"] == 100  # the MSL heights (400 m) left out
    eps = [[gga(k, *circle(k, 0.5), sep="")] for k in range(100)]
    p = analyse(eps)["position"]
    assert p["height_datum"] == "msl" and p["mean"]["h_datum"] == "msl" and abs(p["mean"]["h"] - 400.0) < 0.001
