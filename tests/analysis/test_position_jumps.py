"""Jumps and re-convergence are reported apart and kept out of the scatter; scatter per fix type
with the share of each; estimators named for what they are (issue 13 item 12)."""

from __future__ import annotations

from position_nmea import GEOD, analyse, circle, gga, latlon


def _soak() -> list[list[bytes]]:
    # RTK fixed at 1 Hz for 3600 s, noise pattern radius 5 mm; at t = 1800 the position jumps 1.2 m
    # east, stays there 120 s, then re-converges linearly over 60 s
    eps = []
    for k in range(3600):
        e, n = circle(k, 0.005)
        if 1800 <= k < 1920:
            e += 1.2
        elif 1920 <= k < 1980:
            e += 1.2 * (1980 - k) / 60.0
        eps.append([gga(k, e, n, u=n, q=4)])
    return eps


def test_one_jump_does_not_ruin_the_rtk_scatter() -> None:
    a = analyse(_soak())
    p = a["position"]
    # pattern radius 5 mm: every settled epoch is within 5 mm of the site, so within 10 mm of the mean
    assert p["fix"] == "rtk_fixed" and p["cep50_m"] <= 0.005 and p["cep95_m"] <= 0.010
    assert p["r95_m"] <= 0.010 and p["v95_m"] <= 0.010
    j = p["jumps"]
    assert j["count"] == 1
    item = j["items"][0]
    assert item["end"] == "returned" and abs(item["size_h_m"] - 1.2) < 0.01
    # hand arithmetic: back within the 5 cm RTK-fixed radius when 1.2 * (1980 - k) / 60 <= 0.05 - noise,
    # i.e. k = 1978 (+-1 for the noise pattern): the excursion lasts about 178 s from t = 1800
    assert 176.0 <= item["duration_s"] <= 180.0
    assert 186 <= j["excluded_epochs"] <= 191  # the excursion plus the 10 s hold back inside
    assert j["rule"]["radius_h_m"]["rtk_fixed"] == 0.05 and j["rule"]["hold_s"] == 10.0  # values shown
    # before the fix: 180 of 3600 epochs 0.05 .. 1.2 m off put CEP95 near 1 m


def test_scatter_per_fix_type_with_shares() -> None:
    eps = []
    for k in range(1000):  # 700 RTK fixed (5 mm), 200 float (10 cm), 100 DGNSS (50 cm) epochs
        q = 4 if k < 700 else (5 if k < 900 else 2)
        r = {4: 0.005, 5: 0.1, 2: 0.5}[q]
        e, n = circle(k, r)
        eps.append([gga(k, e, n, q=q)])
    p = analyse(eps)["position"]
    bf = p["by_fix"]
    # hand arithmetic: 700 / 1000, 200 / 1000, 100 / 1000 of the settled epochs
    assert (bf["rtk_fixed"]["share"], bf["rtk_float"]["share"], bf["dgnss"]["share"]) == (0.7, 0.2, 0.1)
    assert bf["rtk_fixed"]["cep95_m"] <= 0.01 and bf["rtk_float"]["cep95_m"] <= 0.2 and bf["dgnss"]["cep95_m"] <= 1.0
    assert p["fix"] == "rtk_fixed" and p["cep95_m"] == bf["rtk_fixed"]["cep95_m"]


def test_reference_is_a_median_and_named_so() -> None:
    eps = []
    for k in range(100):  # first 60 epochs: 59 at the site, one 30 m off (a mean would move 0.5 m)
        e = 30.0 if k == 10 else 0.0
        eps.append([gga(k, e, 0.0, q=1)])
    p = analyse(eps)["position"]
    assert p["ref"]["source"] == "session_median"  # was "session_mean" though it was computed as a median
    lat, lon = latlon(0.0, 0.0)
    _, _, d = GEOD.inv(lon, lat, p["ref"]["lon"], p["ref"]["lat"])  # reference: pyproj.Geod
    assert d < 0.001  # the median ignores the outlier
    # the scatter centre is the mean: 30 m / 100 epochs = 0.3 m east of the median (hand arithmetic;
    # the outlier came before the jump filter had settled, so it is kept)
    assert abs(p["offset_m"]["e"] - 0.3) < 0.001
    assert "median" in p["estimators"]["ref_session_median"] and "mean" in p["estimators"]["scatter_centre"]
