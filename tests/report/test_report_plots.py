"""Report plots: legends, one colour per constellation shared by every plot, UTC clock-time axes,
the sky plot's orientation and labels, per-fix-type scatter, outages and jumps marked.

The fixture is hand-written NMEA (checksums computed here) with known times, fix types and satellites.
"""

from __future__ import annotations

import datetime as dt
import itertools
import math
import re

import numpy as np
import pytest

from livefix.pipeline import Pipeline
from livefix.report.plot_style import SYSTEMS
from livefix.report.plots import PLOTS, cn0_elevation, make_plots
from livefix.report.plots_sky import sky_plot
from livefix.sources.base import Chunk

START = dt.datetime(2026, 12, 4, 12, 0, 0, tzinfo=dt.UTC)  # invented session: 12:00:00 to 12:06:39 UTC
N_EPOCHS = 400
LAT0, LON0 = 47.5, 8.25  # invented site
M_PER_DEG_LAT = 111_200.0  # about 111.2 km per degree of latitude near 47° (from memory; only spreads points)
# fixture satellites: (talker, NMEA number, elevation, azimuth, C/N0); GLONASS numbers 65-96 (NMEA 0183 4.11)
SATS = (("GP", 5, 70, 40, 48), ("GP", 12, 35, 120, 42), ("GP", 19, 20, 220, 36), ("GP", 25, 10, 300, 30),
        ("GL", 66, 60, 80, 46), ("GL", 71, 40, 170, 41), ("GL", 80, 25, 260, 37), ("GL", 87, 15, 340, 33))


def _cs(body: str) -> str:
    """NMEA 0183: XOR of the bytes between '$' and '*', two uppercase hex digits."""
    x = 0
    for b in body.encode("ascii"):
        x ^= b
    return f"{x:02X}"


def _line(body: str) -> bytes:
    return f"${body}*{_cs(body)}\r\n".encode("ascii")


def _dm(v: float, deg_digits: int) -> str:
    d = int(abs(v))
    return f"{d:0{deg_digits}d}{(abs(v) - d) * 60:010.7f}"


def fix_at(i: int) -> tuple[int, float, float]:
    """(GGA quality, east m, north m) of epoch i: RTK fixed with centimetre noise, RTK float for
    60-89 s, no fix for 150-169 s, an 8 m jump east for 250-289 s."""
    e, n = 0.01 * math.sin(i * 2.4), 0.01 * math.cos(i * 1.7)
    if 60 <= i < 90:
        return 5, 20 * e, 20 * n
    if 150 <= i < 170:
        return 0, 0.0, 0.0
    if 250 <= i < 290:
        return 4, e + 8.0, n
    return 4, e, n


def epoch_lines(i: int) -> bytes:
    t = START + dt.timedelta(seconds=i)
    hms = t.strftime("%H%M%S") + ".00"
    q, e, n = fix_at(i)
    lat = LAT0 + n / M_PER_DEG_LAT
    lon = LON0 + e / (M_PER_DEG_LAT * math.cos(math.radians(LAT0)))
    pos = f"{_dm(lat, 2)},N,{_dm(lon, 3)},E" if q else ",,,"
    out = [_line(f"GNGGA,{hms},{pos},{q},08,0.9,{'400.000,M,48.0,M' if q else ',,,'},1.0,0000"),
           _line(f"GNRMC,{hms},{'A' if q else 'V'},{pos},0.0,0.0,{t:%d%m%y},,,{'R' if q else 'N'},V")]
    for talker, sys_id in (("GP", 1), ("GL", 2)):
        group = [s for s in SATS if s[0] == talker]
        used = ",".join(f"{s[1]:02d}" for s in group) + "," * (12 - len(group))
        out.append(_line(f"GNGSA,A,3,{used},1.6,0.9,1.3,{sys_id}"))
        sats = ",".join(f"{s[1]:02d},{s[2]:02d},{(s[3] + i * 0.05) % 360:03.0f},{s[4]}" for s in group)
        out.append(_line(f"{talker}GSV,1,1,{len(group):02d},{sats},1"))
    return b"".join(out)


@pytest.fixture(scope="module")
def analysis() -> dict:
    p = Pipeline()
    wall0 = START.timestamp()
    for i in range(N_EPOCHS):
        p.feed(Chunk(100.0 + i, wall0 + i, epoch_lines(i)))
    p.finish()
    a = p.snapshot().analysis
    assert a["internal_errors"] == 0, a["last_error"]
    return a


@pytest.fixture(scope="module")
def plots(analysis: dict) -> dict[str, dict]:
    return {p["id"]: p for p in make_plots(analysis)}


def _texts(svg: str) -> list[tuple[str, float, float]]:
    """(text, x, y) of every text element (matplotlib writes text as text with svg.fonttype none)."""
    out = []
    for m in re.finditer(r"<text\b([^>]*)>([^<]*)</text>", svg):
        x, y = re.search(r'\bx="([-\d.]+)"', m.group(1)), re.search(r'\by="([-\d.]+)"', m.group(1))
        out.append((m.group(2), float(x.group(1)) if x else math.nan, float(y.group(1)) if y else math.nan))
    return out


def test_every_plot_is_drawn_with_a_legend(plots):
    assert set(plots) == {pid for pid, _, _ in PLOTS}
    for pid, p in plots.items():
        assert "svg" in p, f"{pid}: {p.get('note')}"
        assert 'id="legend_1"' in p["svg"], pid  # matplotlib names the legend group legend_1


def test_constellation_colours_are_one_table_and_distinct(analysis):
    def legend_colours(fig) -> dict[str, str]:
        import matplotlib.colors as mc

        out = {}
        for ax in fig.axes:
            leg = ax.get_legend()
            if leg is None:
                continue
            for handle, text in zip(leg.legend_handles, leg.get_texts(), strict=True):
                if text.get_text() in {s.label for s in SYSTEMS.values()} and hasattr(handle, "get_facecolor"):
                    out[text.get_text()] = mc.to_hex(handle.get_facecolor()[0]).upper()
        return out

    sky, cn0 = legend_colours(sky_plot(analysis)), legend_colours(cn0_elevation(analysis))
    want = {SYSTEMS["G"].label: SYSTEMS["G"].colour.upper(), SYSTEMS["R"].label: SYSTEMS["R"].colour.upper()}
    assert sky == want and cn0 == want  # the fixture has GPS and GLONASS: same colours in both plots
    # every pair of constellation colours stays apart for normal sight and for the three dichromacies,
    # simulated with the matrices at severity 1 of docs/sources.md#colour-vision-simulation (from memory),
    # as CIELAB distance (sRGB and CIELAB formulas: IEC 61966-2-1, CIE 15; ΔE 10 is far above the
    # roughly 2.3 just-noticeable difference: common practice)
    sim = {"normal": np.eye(3),
           "deuteranopia": [[0.367322, 0.860646, -0.227968], [0.280085, 0.672501, 0.047413],
                            [-0.011820, 0.042940, 0.968881]],
           "protanopia": [[0.152286, 1.052583, -0.204868], [0.114503, 0.786281, 0.099216],
                          [-0.003882, -0.048116, 1.051998]],
           "tritanopia": [[1.255528, -0.076749, -0.178779], [-0.078411, 0.930809, 0.147602],
                          [0.004733, 0.691367, 0.303900]]}
    for name, m in sim.items():
        for a, b in itertools.combinations(SYSTEMS, 2):
            d = np.linalg.norm(_lab(np.asarray(m) @ _linear(SYSTEMS[a].colour))
                               - _lab(np.asarray(m) @ _linear(SYSTEMS[b].colour)))
            assert d >= 10, (name, a, b, d)
    assert len({s.marker for s in SYSTEMS.values()}) == len(SYSTEMS)  # and never colour alone


def _linear(hex_colour: str) -> np.ndarray:
    c = np.array([int(hex_colour[i:i + 2], 16) / 255 for i in (1, 3, 5)])
    return np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)  # sRGB decoding, IEC 61966-2-1


def _lab(rgb: np.ndarray) -> np.ndarray:
    xyz = np.array([[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722], [0.0193, 0.1192, 0.9505]]) @ np.clip(rgb, 0, 1)
    t = xyz / np.array([0.95047, 1.0, 1.08883])  # D65 white
    f = np.where(t > (6 / 29) ** 3, np.cbrt(t), t / (3 * (6 / 29) ** 2) + 4 / 29)
    return np.array([116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])])


@pytest.mark.parametrize("pid", ["position-time", "signal-time"])
def test_time_axes_are_utc_clock_time(plots, pid):
    texts = [t for t, _, _ in _texts(plots[pid]["svg"])]
    ticks = [t for t in texts if re.fullmatch(r"\d\d:\d\d", t)]
    # the fixture runs 12:00:00-12:06:39 UTC: one-minute ticks 12:00 .. 12:06 (hand arithmetic)
    assert ticks == [f"12:{m:02d}" for m in range(0, 7)]
    assert any("UTC" in t and "2026-12-04 12:00:00" in t for t in texts)  # the axis says UTC and the date
    assert "100" not in texts and "200" not in texts  # no seconds-since-start axis


def test_sky_plot_is_north_up_clockwise_with_every_elevation_label(plots):
    texts = {t: (x, y) for t, x, y in _texts(plots["sky"]["svg"])}
    for label in ("90°", "75°", "60°", "45°", "30°", "15°", "0°"):
        assert label in texts, label
    vb = [float(v) for v in re.search(r'viewBox="([^"]+)"', plots["sky"]["svg"]).group(1).split()]
    x90, y90 = texts["90°"]
    assert vb[0] < x90 < vb[0] + vb[2] and vb[1] < y90 < vb[1] + vb[3]  # the zenith label lies on the page
    # a compass read from above (common practice for sky plots): N top, E right, S bottom, W left;
    # SVG y grows downwards
    (nx, ny), (ex, ey), (sx, sy), (wx, wy) = (texts[k] for k in ("N", "E", "S", "W"))
    assert ny < ey < sy and ex > nx > wx
    assert abs(nx - sx) < 1 and abs(ey - wy) < 1
    assert abs(nx - x90) < 1 and abs(ey - y90) < 3  # the zenith in the centre


def test_scatter_colours_each_fix_type_and_draws_cep_circles(plots, analysis):
    texts = [t for t, _, _ in _texts(plots["scatter"]["svg"])]
    assert any(t.startswith("RTK fixed (") for t in texts) and any(t.startswith("RTK float (") for t in texts)
    assert any(t.startswith("CEP50 RTK fixed") for t in texts) and any(t.startswith("CEP95 RTK fixed") for t in texts)
    # the float epochs (30 of them, 60-89 s) are in the snapshot for the scatter
    assert len(analysis["position"]["samples_by_fix"]["rtk_float"]["e"]) == 30


def test_outages_and_jumps_are_marked_on_the_time_plots(plots, analysis):
    assert [o["start"] for o in analysis["fix"]["outages"]] == ["2026-12-04T12:02:30.000Z"]  # 150 s after 12:00
    texts = [t for t, _, _ in _texts(plots["position-time"]["svg"])]
    assert "no fix (1)" in texts
    jumps = analysis["fix"]["jumps"]
    assert jumps and jumps[0]["time"] == "2026-12-04T12:04:10.000Z"  # 250 s after 12:00: the 8 m step
    assert f"position jump ({len(jumps)})" in texts


def test_a_plot_without_data_is_a_note_not_an_error():
    out = {p["id"]: p for p in make_plots({})}
    assert all("note" in p and "svg" not in p for p in out.values())


@pytest.mark.parametrize(("seconds", "step", "want"), [
    # 90 s: one-minute ticks would be two, so seconds; 15 s is the first step giving <= 8 ticks (hand arithmetic)
    (90, 1, [f"12:0{m}:{s:02d}" for m, s in ((0, 0), (0, 15), (0, 30), (0, 45), (1, 0), (1, 15), (1, 30))]),
    # three days: 12-hour ticks with the day of month, since HH:MM alone would repeat (hand arithmetic)
    (3 * 86400, 600, [f"{4 + h // 24:02d} {h % 24:02d}:00" for h in range(0, 73, 12)]),
])
def test_time_axis_for_short_and_long_runs(seconds, step, want):
    t = list(range(0, seconds + 1, step))
    a = {"trend": {"t0": "2026-12-04T12:00:00.000Z" if seconds < 86400 else "2026-12-04T00:00:00.000Z",
                   "t": t, "sats_used": [10] * len(t), "cn0_mean": [40.0] * len(t), "bucket_s": step}}
    svg = {p["id"]: p for p in make_plots(a)}["signal-time"]["svg"]
    ticks = [x for x, _, _ in _texts(svg) if re.fullmatch(r"(\d\d )?\d\d:\d\d(:\d\d)?", x)]
    assert ticks == want
