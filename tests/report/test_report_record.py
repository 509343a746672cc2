"""The site record every report carries (issue 16 item 2), checked on a demo recording with no
profile: each figure is in the JSON `record`, in the Markdown and in the HTML, and its value agrees
with an outside reference computed from the recording's own sentences parsed by pynmeagps
(numpy.median / numpy.percentile, pyproj for the east/north/up offset, hashlib for the digest)."""

from __future__ import annotations

import datetime as dt
import hashlib
import json
import math
import re
from pathlib import Path
from typing import Any

import numpy as np
import pynmeagps
import pytest
from pyproj import Transformer

from livefix.cli import main
from livefix.items import Chunk
from livefix.record.reader import RecordingReader
from livefix.report import facts
from livefix.report.escape import md_text

ROOT = Path(__file__).resolve().parents[2]
ROOFTOP = ROOT / "recordings" / "rooftop-5min.lfr"
REF = (46.9071, 7.6182, 612.0)  # an invented reference point a few metres from the demo antenna
# NMEA 4.11 talker and GSA system ID -> RINEX letter (docs/sources.md#system-ids)
TALKERS = {"GP": "G", "GL": "R", "GA": "E", "GB": "C"}
SYSTEM_IDS = {1: "G", 2: "R", 3: "E", 4: "C"}
SECTION_IDS = ("measurement", "site", "position", "reference", "scatter", "dop", "satellites", "signal", "sky",
               "availability", "timing", "provenance")


def _sentences(path: Path) -> list[Any]:
    """Every sentence of the recording, parsed by pynmeagps (the reference decoder)."""
    data = b"".join(i.data for i in RecordingReader(path).items() if isinstance(i, Chunk))
    return [pynmeagps.NMEAReader.parse(line.decode("ascii")) for line in data.split(b"\r\n") if line]


@pytest.fixture(scope="module")
def run(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    out = tmp_path_factory.mktemp("record")
    ref = ",".join(str(v) for v in REF)
    assert main(["report", str(ROOFTOP), "-o", str(out), "--ref", ref]) == 0
    doc = json.loads((out / "report.json").read_text(encoding="utf-8"))
    assert doc["receivers"][0]["analysis"]["internal_errors"] == 0
    return {"doc": doc, "rec": doc["receivers"][0]["record"], "md": (out / "report.md").read_text(encoding="utf-8"),
            "html": (out / "report.html").read_text(encoding="utf-8"), "msgs": _sentences(ROOFTOP)}


def test_every_record_field_is_in_the_json(run: dict[str, Any]) -> None:
    rec = run["rec"]
    assert run["doc"]["format"] == "livefix-report/2" and run["doc"]["verdict"] is None
    for section, keys in {"measurement": ("start_utc", "end_utc", "duration_s"),
                          "position": ("lat_deg", "lon_deg", "h_ellipsoidal_m", "geoid_separation_m", "h_msl_m",
                                       "datum_local"),
                          "reference": ("source", "offset_e_m", "offset_n_m", "offset_u_m"),
                          "availability": ("fix_share", "outages", "jumps", "stalls"),
                          "timing": ("ttff_s", "convergence_h_s", "drift_mm_per_h", "drift_ci95_half_mm_per_h"),
                          "provenance": ("input_sha256", "livefix_version", "thresholds")}.items():
        assert all(k in rec[section] for k in keys), section
    assert set(rec["dop"]) == {"reported", "computed"} and rec["dop"]["reported"]["hdop"]["p95"] is not None
    assert set(rec["satellites"]["by_system"]) == {"G", "R", "E", "C", "all"}
    assert rec["cn0_by_elevation"] and rec["scatter"]["rtk_fixed"]["cep95_m"] is not None
    assert rec["position"]["datum_local"] is None  # the demo receiver sends no DTM


def test_measurement_span_is_the_receiver_time_of_the_first_and_last_epoch(run: dict[str, Any]) -> None:
    ggas = [m for m in run["msgs"] if m.msgID == "GGA"]
    date = next(m.date for m in run["msgs"] if m.msgID == "RMC" and m.date)

    def stamp(t: dt.time) -> str:  # GGA time of fix on the RMC date (NMEA 0183)
        return dt.datetime.combine(date, t).strftime("%Y-%m-%dT%H:%M:%S.") + f"{t.microsecond // 1000:03d}Z"

    m = run["rec"]["measurement"]
    assert (m["start_utc"], m["end_utc"]) == (stamp(ggas[0].time), stamp(ggas[-1].time))
    # 3000 epochs at 10 Hz: 299.9 s from the first to the last (hand arithmetic)
    assert m["duration_s"] == pytest.approx(299.9, abs=1e-6) and m["epochs"] == len(ggas) == 3000


def test_median_position_matches_numpy_median_of_the_rtk_fixed_ggas(run: dict[str, Any]) -> None:
    fixed = [m for m in run["msgs"] if m.msgID == "GGA" and m.quality == 4]  # GGA quality 4 = RTK fixed
    lat = np.median([m.lat for m in fixed])
    lon = np.median([m.lon for m in fixed])
    h = np.median([m.alt + m.sep for m in fixed])  # ellipsoidal = MSL altitude + geoid separation
    p = run["rec"]["position"]
    assert p["fix"] == "rtk_fixed" and p["epochs"] == len(fixed)
    # within one bin of the bounded median (resolution published: about 1 mm) plus rounding
    assert abs(p["lat_deg"] - lat) <= 1.5e-8 and abs(p["lon_deg"] - lon) <= 1.5e-8
    assert p["h_ellipsoidal_m"] == pytest.approx(h, abs=0.0015)
    assert p["geoid_separation_m"] == pytest.approx(np.median([m.sep for m in fixed]), abs=0.0015)
    assert p["h_msl_m"] == pytest.approx(np.median([m.alt for m in fixed]), abs=0.0015)


def _enu(ref: tuple[float, float, float], lat: float, lon: float, h: float) -> tuple[float, float, float]:
    """East/north/up of a point about ref via pyproj's geodetic -> ECEF (EPSG:4979 -> 4978) and the
    standard local-level rotation (common practice)."""
    tr = Transformer.from_crs("EPSG:4979", "EPSG:4978", always_xy=True)
    x0, y0, z0 = tr.transform(ref[1], ref[0], ref[2])
    x, y, z = tr.transform(lon, lat, h)
    dx, dy, dz = x - x0, y - y0, z - z0
    p, lam = math.radians(ref[0]), math.radians(ref[1])
    e = -math.sin(lam) * dx + math.cos(lam) * dy
    n = -math.sin(p) * math.cos(lam) * dx - math.sin(p) * math.sin(lam) * dy + math.cos(p) * dz
    u = math.cos(p) * math.cos(lam) * dx + math.cos(p) * math.sin(lam) * dy + math.sin(p) * dz
    return e, n, u


def test_offset_from_the_reference_matches_pyproj(run: dict[str, Any]) -> None:
    p, r = run["rec"]["position"], run["rec"]["reference"]
    e, n, u = _enu(REF, p["lat_deg"], p["lon_deg"], p["h_ellipsoidal_m"])
    assert r["source"] == "--ref" and (r["lat_deg"], r["lon_deg"], r["h_ellipsoidal_m"]) == REF
    assert (r["offset_e_m"], r["offset_n_m"], r["offset_u_m"]) == pytest.approx((e, n, u), abs=2e-4)
    assert r["offset_horizontal_m"] == pytest.approx(math.hypot(e, n), abs=2e-4)


def test_dop_percentiles_match_numpy(run: dict[str, Any]) -> None:
    hdop = [m.HDOP for m in run["msgs"] if m.msgID == "GGA" and m.HDOP != ""]
    pdop = [m.PDOP for m in run["msgs"] if m.msgID == "GSA" and str(m.systemId) == "1" and m.PDOP != ""]  # one GSA per epoch
    d = run["rec"]["dop"]["reported"]
    # the log histogram's bins are 0.5 % wide: within 0.3 % of the inverted-CDF percentile
    for got, values in ((d["hdop"], hdop), (d["pdop"], pdop)):
        assert got["median"] == pytest.approx(np.percentile(values, 50, method="inverted_cdf"), rel=3e-3)
        assert got["p95"] == pytest.approx(np.percentile(values, 95, method="inverted_cdf"), rel=3e-3)


def test_satellite_counts_per_constellation_match_the_sentences(run: dict[str, Any]) -> None:
    by = run["rec"]["satellites"]["by_system"]
    for talker, letter in TALKERS.items():  # GSV field 3: satellites in view (NMEA 0183)
        in_view = [m.numSV for m in run["msgs"] if m.msgID == "GSV" and m.talker == talker and m.msgNum == 1]
        assert by[letter]["in_view"]["median"] == np.median(in_view)
        assert by[letter]["in_view"]["min"] == min(in_view)
    for sid, letter in SYSTEM_IDS.items():  # GSA: up to 12 satellite IDs used, by system ID (NMEA 4.11)
        used = [sum(1 for i in range(1, 13) if getattr(m, f"svid_{i:02d}") != "")
                for m in run["msgs"] if m.msgID == "GSA" and str(m.systemId) == str(sid)]
        assert by[letter]["used"]["median"] == np.median(used) and by[letter]["used"]["min"] == min(used)


def test_input_digest_is_the_sha256_of_the_file_as_given(run: dict[str, Any]) -> None:
    prov = run["rec"]["provenance"]
    assert prov["input_sha256"] == hashlib.sha256(ROOFTOP.read_bytes()).hexdigest()  # FIPS 180-4 via hashlib
    assert prov["input_bytes"] == ROOFTOP.stat().st_size and prov["thresholds"] is None


def test_markdown_shows_every_section_with_human_labels_and_no_entities(run: dict[str, Any]) -> None:
    md, doc = run["md"], run["doc"]
    assert "**Verdict: no limits set**" in md
    assert "&gt;" not in md and "&lt;" not in md and "&amp;" not in md  # backslash escapes only
    for sec in facts.sections(doc, doc["receivers"][0]):
        assert sec.id in SECTION_IDS and sec.title in md
        for label, _value in sec.rows:
            assert f"| {md_text(label)} |" in md
    p, rec = run["rec"]["position"], run["rec"]
    assert f"{p['lat_deg']:.9f}° N" in md and f"{p['lon_deg']:.9f}° E" in md
    assert rec["provenance"]["input_sha256"] in md
    assert "datum as reported by the receiver, not stated" in md
    assert not re.search(r"^\| [a-z0-9]+(\\_[a-z0-9]+)+ \|", md, re.M)  # row labels are words, not keys
    assert md.rstrip().endswith(doc["cautions"][-1])  # cautions in the footer


def test_html_shows_every_section(run: dict[str, Any]) -> None:
    page, doc = run["html"], run["doc"]
    ids = set(re.findall(r'\bid="([^"]+)"', page))
    for sec in facts.sections(doc, doc["receivers"][0]):
        assert any(i == sec.id or i.endswith("-" + sec.id) for i in ids), sec.id
        assert sec.title in page
    assert run["rec"]["provenance"]["input_sha256"] in page and "no limits set" in page
