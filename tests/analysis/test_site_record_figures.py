"""The analysis figures behind the site record (livefix.analysis.median, counts, span): the bounded
median against numpy.median, satellite counts per constellation from hand-written GSV/GSA, the
DTM datum, and the measurement span by the receiver's clock and the host's."""

from __future__ import annotations

import random

import numpy as np
import pytest
from position_nmea import analyse, gga, hms, line, rmc

from livefix.analysis.counts import median_of
from livefix.analysis.median import MAX_BINS, BinnedMedian
from livefix.report.document import ReceiverRun, build_report
from livefix.report.facts import sections


def test_binned_median_is_within_one_bin_of_numpy_median() -> None:
    rnd = random.Random(7)
    xs = [rnd.gauss(612.3, 0.02) for _ in range(5001)]
    m = BinnedMedian(0.001)
    for x in xs:
        m.add(x)
    assert abs(m.quantile() - float(np.median(xs))) <= m.width  # numpy.median: the exact sample median
    assert m.width == 0.001  # 2 cm noise fits in far fewer than MAX_BINS 1 mm bins


def test_binned_median_coarsens_and_stays_bounded() -> None:
    rnd = random.Random(3)
    xs = [rnd.uniform(-5000.0, 5000.0) for _ in range(20000)]  # a vehicle's worth of spread
    m = BinnedMedian(0.001)
    for x in xs:
        m.add(x)
    assert len(m.bins) <= MAX_BINS and m.width > 0.001
    assert abs(m.quantile() - float(np.median(xs))) <= m.width
    assert abs(m.quantile(0.95) - float(np.percentile(xs, 95, method="inverted_cdf"))) <= m.width


def test_binned_median_of_a_constant_is_exact() -> None:
    m = BinnedMedian(0.001)
    for _ in range(100):
        m.add(47.9)  # a geoid separation the receiver repeats: no bin-centre offset
    assert m.quantile() == 47.9


@pytest.mark.parametrize("counts", [[3, 1, 2, 5], [4, 4, 6, 6], [7], [0, 9, 9, 1, 2, 2]])
def test_median_of_a_count_histogram_is_numpys(counts: list[int]) -> None:
    hist: dict[int, int] = {}
    for c in counts:
        hist[c] = hist.get(c, 0) + 1
    assert median_of(hist) == float(np.median(counts))  # even counts: mean of the two middle values


def _gsv(talker: str, prns: list[int], sig: str = "1") -> bytes:
    """One GSV set (NMEA 4.11: up to four satellites a sentence, signal ID last), C/N0 40 for all."""
    parts = [prns[i:i + 4] for i in range(0, len(prns), 4)] or [[]]
    out = b""
    for k, part in enumerate(parts, 1):
        sats = "".join(f",{p:02d},{20 + 5 * j},{(40 * p) % 360:03d},40" for j, p in enumerate(part))
        out += line(f"{talker}GSV,{len(parts)},{k},{len(prns):02d}{sats},{sig}")
    return out


def _gsa(prns: list[int], sid: int) -> bytes:
    ids = [f"{p:02d}" for p in prns] + [""] * (12 - len(prns))
    return line(f"GNGSA,A,3,{','.join(ids)},1.8,0.9,1.5,{sid}")


def test_satellite_counts_per_constellation() -> None:
    # epochs 0-5: 6 GPS and 4 GLONASS in view, 5 and 3 used; epochs 6-9: GPS 8 in view, 7 used, GLONASS 2 used
    gps_a, gps_b, glo = [1, 3, 6, 9, 14, 17], [1, 3, 6, 9, 14, 17, 19, 22], [65, 66, 72, 80]
    epochs = []
    for i in range(10):
        gps, used_g, used_r = (gps_a, gps_a[:5], glo[:3]) if i < 6 else (gps_b, gps_b[:7], glo[:2])
        epochs.append([gga(i, 0, 0), rmc(i, 0, 0), _gsa(used_g, 1), _gsa(used_r, 2), _gsv("GP", gps), _gsv("GL", glo)])
    c = analyse(epochs)["satellites"]["by_system"]
    # hand count over the epochs that list satellites: GPS in view 6 x6 then 8 x4 -> median 6, min 6
    assert c["G"]["in_view"] == {"median": 6.0, "min": 6, "max": 8}
    assert c["G"]["used"]["median"] == 5.0 and c["G"]["used"]["max"] == 7
    assert c["R"]["in_view"]["median"] == 4.0 and c["R"]["used"] == {"median": 3.0, "min": 2, "max": 3}
    assert c["all"]["in_view"]["median"] == 10.0 and c["all"]["used"]["median"] == 8.0


def test_dtm_datum_is_reported_and_named() -> None:
    # DTM (NMEA 0183): local datum, subdivision, offsets, reference datum
    epochs = [[gga(i, 0, 0), rmc(i, 0, 0), line("GPDTM,W84,,0.0,N,0.0,E,0.0,W84")] for i in range(5)]
    a = analyse(epochs)
    assert a["session"]["datum"]["local"] == "W84" and a["session"]["datum"]["reference"] == "W84"
    assert a["session"]["datum"]["epochs"] == 5
    report = build_report([ReceiverRun("rx1", "mem", a)])
    pos = next(s for s in sections(report, report["receivers"][0]) if s.id == "position")
    assert dict(pos.rows)["Datum"].startswith("WGS 84 (DTM local datum W84")
    no_dtm = analyse([[gga(i, 0, 0), rmc(i, 0, 0)] for i in range(5)])
    assert no_dtm["session"]["datum"] is None


def test_measurement_span_by_receiver_and_host_clocks() -> None:
    from livefix.items import Chunk
    from livefix.pipeline import Pipeline

    p = Pipeline()
    for i in range(11):  # receiver 10:00:00 .. 10:00:10 on 4 Dec 2026; host clock 5 s ahead (invented)
        t = 36000.0 + i
        p.feed(Chunk(100.0 + i, 1796378400.0 + 5.0 + i, gga(t, 0, 0) + rmc(t, 0, 0)))
    p.finish()
    a = p.snapshot().analysis
    assert a["internal_errors"] == 0
    s = a["session"]
    assert (s["start_utc"], s["end_utc"], s["duration_s"]) == ("2026-12-04T10:00:00.000Z", "2026-12-04T10:00:10.000Z", 10.0)
    assert s["host_minus_utc_s"] == {"start": 5.0, "end": 5.0}  # 1796378400 = 2026-12-04T10:00:00Z (hand arithmetic)
    report = build_report([ReceiverRun("rx1", "mem", a)])
    rows = dict(next(sec for sec in sections(report, report["receivers"][0]) if sec.id == "measurement").rows)
    assert rows["Start (host clock)"] == "2026-12-04T10:00:05.000Z" and rows["Host minus receiver time"] == "5 s, 5 s"
    assert hms(36000.0) == "100000.00"
