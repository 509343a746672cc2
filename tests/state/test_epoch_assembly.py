"""Epoch assembly on real-receiver habits: one epoch is one time of fix.

Rule (NMEA 0183 4.10/4.11): GGA, RMC, GNS and GLL report a position "as of" their UTC time field, so
only they open and close epochs. ZDA is a date/clock sentence and GST describes the fix whose time it
carries; untimed sentences (GSA, GSV, VTG, TXT) join the epoch in progress. Every fixture below is
invented; the expected values are counted by hand from the fixture (seconds written in the lines).
"""

from __future__ import annotations

import datetime as dt

from nmeakit import sentence as cs  # checksum from the standard's definition

from livefix.decode.decoder import Decoder
from livefix.state import StateModel


def hms(t: float) -> str:
    h, rem = divmod(t, 3600)
    m, s = divmod(rem, 60)
    return f"{int(h):02d}{int(m):02d}{s:05.2f}"


def gga(talker: str, t: float, q: int = 1, alt: str = "101.5", sep: str = "45.2") -> bytes:
    return cs(f"{talker}GGA,{hms(t)},4807.0380,N,01131.0000,E,{q},08,0.9,{alt},M,{sep},M,,")


def rmc(t: float, date: str = "150326") -> bytes:
    return cs(f"GPRMC,{hms(t)},A,4807.0380,N,01131.0000,E,0.0,0.0,{date},,,A")


def zda(t: float, d: int = 15, m: int = 3, y: int = 2026) -> bytes:
    return cs(f"GNZDA,{hms(t)},{d:02d},{m:02d},{y},00,00")


def run(lines: list[bytes], step_s: float = 0.05) -> tuple[list, StateModel]:
    """Decode with livefix's own decoder and assemble; host time advances a little per line."""
    dec, sm, out = Decoder(), StateModel(), []
    for i, raw in enumerate(lines):
        msg = dec.decode(raw)
        assert type(msg).__name__ == "Decoded", (raw, msg)
        out += sm.on_sentence(msg, 100.0 + i * step_s, 1.7e9 + i * step_s)
    out += sm.finish()
    return out, sm


T0 = 12 * 3600.0  # 12:00:00 UTC
DAY = dt.datetime(2026, 3, 15, tzinfo=dt.UTC).timestamp()


def test_zda_stamped_after_the_fix_does_not_make_an_epoch() -> None:
    # A 1 Hz receiver that stamps ZDA 50 ms after the fix: 10 fixes -> 10 epochs, 1.0 s apart.
    lines = []
    for k in range(10):
        lines += [gga("GP", T0 + k), rmc(T0 + k), zda(T0 + k + 0.05)]
    eps, _ = run(lines)
    assert len(eps) == 10  # counted in the fixture
    assert [e.utc for e in eps] == [DAY + T0 + k for k in range(10)]
    assert all(e.quality == 1 for e in eps)  # no "NO FIX" half-epochs


def test_gga_2hz_with_zda_1hz_is_2hz() -> None:
    lines = []
    for k in range(20):
        t = T0 + 0.5 * k
        lines.append(gga("GP", t))
        if k % 2 == 0:
            lines.append(zda(t + 0.05))
    eps, _ = run(lines)
    assert len(eps) == 20
    steps = {round(b.utc - a.utc, 3) for a, b in zip(eps, eps[1:], strict=False)}
    assert steps == {0.5}  # 2 Hz: the fixture's fix times are 0.5 s apart


def test_several_talkers_for_one_time_are_one_epoch() -> None:
    lines = []
    for k in range(5):
        lines += [gga("GP", T0 + k), gga("GL", T0 + k), gga("GN", T0 + k), rmc(T0 + k)]
    eps, _ = run(lines)
    assert len(eps) == 5


def test_gns_only_receiver_gets_a_position_from_the_talker_that_has_one() -> None:
    # GP and GL GNS come first with empty position fields, the GN one carries the combined fix.
    lines = []
    for k in range(3):
        t = hms(T0 + k)
        lines += [cs(f"GPGNS,{t},,,,,,6,,,,1.0,0"), cs(f"GLGNS,{t},,,,,,4,,,,1.0,0"),
                  cs(f"GNGNS,{t},4807.0380,N,01131.0000,E,DDNNN,10,1.2,101.5,45.2,,")]
    eps, _ = run(lines)
    assert len(eps) == 3
    for e in eps:
        assert abs(e.lat - (48 + 7.038 / 60)) < 1e-9  # 48 deg 07.0380 min
        assert abs(e.h - (101.5 + 45.2)) < 1e-9  # ellipsoidal = MSL height + geoid separation
        assert e.quality == 2  # mode D = differential (NMEA 0183)


def test_rmc_10hz_gga_1hz_keeps_heights_from_gga_only() -> None:
    lines = []
    for k in range(20):
        t = T0 + 0.1 * k
        if k % 10 == 0:
            lines.append(gga("GP", t))
        lines.append(rmc(t))
    eps, _ = run(lines)
    assert len(eps) == 20
    with_h = [e for e in eps if e.h is not None]
    assert len(with_h) == 2  # the two GGA epochs of the fixture
    assert all(e.h is None and e.alt_msl is None for e in eps if e not in with_h)  # never 0.0


def test_msl_height_without_geoid_separation_is_not_called_ellipsoidal() -> None:
    eps, _ = run([gga("GP", T0, sep="")])
    assert eps[0].alt_msl == 101.5 and eps[0].h is None and eps[0].sep is None


def test_zda_date_across_midnight_belongs_to_the_fix_day() -> None:
    # Fix at 23:59:59.95 on 15 March; its ZDA says 00:00:00.00 on 16 March (50 ms later).
    t = 86399.95
    eps, _ = run([gga("GP", t), zda(0.0, d=16)])
    assert eps[0].utc == DAY + t  # 2026-03-15T23:59:59.95Z


def test_gst_before_the_fix_sentences_describes_its_own_epoch() -> None:
    lines = []
    for k in range(3):
        t = hms(T0 + k)
        lines += [cs(f"GPGST,{t},0.010,0.020,0.010,45.0,0.0{k + 1}0,0.020,0.030"), gga("GP", T0 + k)]
    eps, _ = run(lines)
    assert len(eps) == 3
    assert [e.sigma_lat for e in eps] == [0.01, 0.02, 0.03]  # each epoch keeps the GST of its time


def test_empty_time_no_fix_bursts_are_separate_epochs() -> None:
    # A searching receiver: GGA and RMC with empty time, one burst a second (no fix).
    lines = [cs("GPGGA,,,,,,0,00,99.99,,,,,,"), cs("GPRMC,,V,,,,,,,,,,N")] * 4
    eps, _ = run(lines)
    assert len(eps) == 4 and all(e.utc is None and e.quality == 0 for e in eps)
