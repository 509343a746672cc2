"""GNSS-IR on a public log of a low-cost reflectometry sensor by the water (mphw_190110.LOG, see
shared/realdata/SOURCES.md): static, GPS only, 1 Hz, C/N0 written with one decimal, ~1.5 h.

The reference is computed here apart from livefix: the log's GSV lines read with a regular
expression (NMEA 0183 fields), elevation smoothed with numpy's polynomial fit, linear SNR detrended
and scipy.signal.lombscargle's peak taken as H = f·λ/2 (the GNSS-IR software paper, GPS Solutions
22:80 (2018)). Skipped when the corpus folder is absent.
"""

from __future__ import annotations

import threading
from pathlib import Path

import numpy as np
import pytest
import scipy.signal

from livefix.pipeline import Pipeline
from livefix.sources import open_source

LOG = Path(__file__).resolve().parents[2] / ".." / "shared" / "realdata" / "corpus" / "mphw_190110.LOG"
LAMBDA = 299_792_458.0 / 1575.42e6  # GPS L1: c / 1575.42 MHz

pytestmark = pytest.mark.skipif(not LOG.is_file(), reason="shared/realdata/corpus is not present")


def reference_height(prn: int) -> tuple[float, float]:
    """(H, mean azimuth) of the satellite's rising arc through 5-25 degrees, by scipy."""
    t = -1
    rows = []
    for line in LOG.read_bytes().decode("ascii", "replace").splitlines():
        if line.startswith("$GPGGA"):
            t += 1  # one GGA per second in this log (SOURCES.md: 1 Hz)
        elif line.startswith("$GPGSV"):
            f = line.split("*")[0].split(",")[4:]
            for k in range(0, len(f) - 3, 4):
                if f[k] and int(f[k]) == prn and f[k + 1] and f[k + 3]:
                    rows.append((t, float(f[k + 1]), float(f[k + 2]), float(f[k + 3])))
    a = np.array(rows)
    a = a[(a[:, 1] >= 4) & (a[:, 1] <= 26)]
    u = (a[:, 0] - a[0, 0]) / (a[-1, 0] - a[0, 0])
    el = np.polynomial.polynomial.polyval(u, np.polynomial.polynomial.polyfit(u, a[:, 1], 3))
    keep = (el >= 5) & (el <= 25)
    x, snr = np.sin(np.radians(el[keep])), 10 ** (a[keep, 3] / 20)
    y = snr - np.polynomial.polynomial.polyval(x, np.polynomial.polynomial.polyfit(x, snr, 2))
    hs = np.arange(0.4, 8.0, 0.001)
    p = scipy.signal.lombscargle(x, y, 2 * np.pi * 2 * hs / LAMBDA)
    return float(hs[int(np.argmax(p))]), float(a[keep, 2].mean())


def test_reflector_height_found_and_stable() -> None:
    src = open_source(str(LOG), speed=None)
    p = Pipeline()
    heights = []
    for k, item in enumerate(src.items(threading.Event())):
        p.feed(item)
        if k % 200 == 0:
            h = p.analyzer.snapshot(p.counters())["reflection"]["height_m"]
            if h is not None:
                heights.append(h)
    p.finish()
    src.close()
    a = p.analyzer
    r = a.snapshot(p.counters())["reflection"]
    assert a.internal_errors == 0
    assert r["arcs"] >= 1 and r["arcs_evaluated"] >= 3
    rising = [s for s in r["sectors"] if s["az_from"] <= 290 < s["az_to"] or s["az_from"] <= 295 < s["az_to"]]
    assert rising, r["sectors"]  # the satellite rising in the west-north-west (GSV azimuths 289-301)
    h_ref, az_ref = reference_height(9)
    assert 270 < az_ref < 310
    assert r["height_m"] == pytest.approx(h_ref, abs=0.05)  # scipy's Lomb-Scargle peak on the same arc
    # stability: the estimate of the growing arc (re-estimated every 300 samples) moves by under 10 cm
    assert heights and max(heights) - min(heights) < 0.10
