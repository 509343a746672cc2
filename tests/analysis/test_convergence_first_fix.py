"""Convergence is not TTFF: from the first fix until the position stays within the radius of the
final converged position, horizontal and vertical apart (issue 13 item 14)."""

from __future__ import annotations

from position_nmea import analyse, circle, gga

from livefix.analysis.config import AnalysisConfig


def test_float_then_fixed_converges_when_fixed() -> None:
    # 30 s without fix, 120 s RTK float 0.3 m east and 5 cm up, then RTK fixed at the site for 600 s
    eps = []
    for k in range(750):
        e, n = circle(k, 0.004)
        if k < 30:
            eps.append([gga(k, e, n, q=0)])
        elif k < 150:
            eps.append([gga(k, e + 0.3, n, u=0.05, q=5)])
        else:
            eps.append([gga(k, e, n, q=4)])
    a = analyse(eps)
    p = a["position"]
    assert a["fix"]["ttff_s"] == 30.0
    c = AnalysisConfig()
    assert p["convergence"]["radius_h_m"] == dict(c.converge_h)["rtk_fixed"] == 0.05  # shown in the snapshot
    # hand arithmetic: first fix at 30 s; horizontally inside 5 cm only from the fixed epochs at 150 s
    assert p["convergence_s"] == 120.0
    # vertically the float epochs are 5 cm off, inside the 10 cm radius: converged at the first fix
    assert p["convergence_v_s"] == 0.0
    # before the fix: each fix type was judged against its own median, so convergence equalled TTFF


def test_single_fix_settling_from_twenty_metres() -> None:
    eps = []
    for k in range(400):  # first fix 20 m off, error shrinking by 1 m per 5 s, then at the site
        off = max(0.0, 20.0 - k / 5.0)
        e, n = circle(k, 0.3)
        eps.append([gga(k, e + off, n, q=1)])
    p = analyse(eps)["position"]
    # single radius 5 m: off <= 5 m - noise from k = 75 (+- 2 for the 0.3 m pattern)
    assert 73.0 <= p["convergence_s"] <= 77.0


def test_radius_from_the_profile() -> None:
    from livefix.analysis.config import AnalysisConfig
    from livefix.analysis.position import PositionStats
    from livefix.check.profile import parse_profile
    from livefix.geodesy import LocalFrame
    from livefix.state.epoch import Epoch

    prof = parse_profile('[profile]\nconverge_h_m = 0.5\n[[threshold]]\nname = "c"\nmetric = "position.convergence_s"\n'
                         'op = "<="\nlimit = 60\n')
    cfg = prof.config()
    assert cfg.converge_radius == (0.5, None) and isinstance(cfg, AnalysisConfig)
    frame = LocalFrame(47.0, 8.0, 400.0)
    ps = PositionStats(cfg, lambda ev: None)
    for k in range(400):  # single fixes: 2 m off for 100 s, 0.3 m off for 100 s, then at the site
        off = 2.0 if k < 100 else (0.3 if k < 200 else 0.0)
        lat, lon, h = frame.geodetic(off, 0.0, 0.0)
        ps.on_epoch(Epoch(mono=k, wall=1.8e9 + k, utc=1.8e9 + k, quality=1, lat=lat, lon=lon, h=h))
    s = ps.snapshot()
    # the profile's 0.5 m radius: inside from k = 100 (0.3 m off); the single default (5 m) would say 0 s
    assert s["convergence"]["radius_h_m"] == 0.5 and s["convergence_s"] == 100.0
