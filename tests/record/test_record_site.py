"""The site record in a recording's header (docs/recording.md `site`): it survives the round
trip, rotation and gzip; a recording made before the key existed still reads (site None); and a
report of a recording keeps the recorded site, with the command line's values on top and a note.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

from livefix.record.fmt import MAGIC
from livefix.record.reader import RecordingReader
from livefix.record.writer import Recorder
from livefix.site import SiteInfo, from_mapping
from livefix.sources.base import Chunk

ROOT = Path(__file__).resolve().parents[2]


def nmea(body: str) -> bytes:
    """One sentence with its NMEA 0183 checksum (XOR of the bytes between '$' and '*')."""
    cs = 0
    for b in body.encode("ascii"):
        cs ^= b
    return f"${body}*{cs:02X}\r\n".encode("ascii")


# a hand-written fix (field layout from NMEA 0183 4.11 GGA/RMC): 12:35:19 UTC, 23 March 1994
FIX = (nmea("GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,")
       + nmea("GPRMC,123519,A,4807.038,N,01131.000,E,000.0,084.4,230394,003.1,W"))

SITE = SiteInfo(name="Test mast", antenna_height_m=1.5, height_method="vertical", operator="Day crew",
                notes="two\nlines", extra={"cable_m": "12"})


def test_site_round_trip(tmp_path: Path) -> None:
    p = tmp_path / "s.lfr"
    rec = Recorder(p, source="test", site=SITE.to_json())
    rec.write(Chunk(1.0, 1.7e9, FIX))
    rec.close()
    r = RecordingReader(p)
    assert r.site == SITE.to_json()
    assert from_mapping(r.site) == SITE  # every field, unknown keys included
    assert list(r.items()) == [Chunk(1.0, 1.7e9, FIX)]  # the records are untouched
    assert p.read_bytes().startswith(MAGIC)  # `format` still first (docs/recording.md, the header line)


def test_site_in_every_rotated_gzip_part(tmp_path: Path) -> None:
    rec = Recorder(tmp_path / "rot.lfr", source="test", compress="gzip", rotate_s=1.0, site=SITE.to_json())
    for k in range(4):
        rec.write(Chunk(float(k), 1.7e9 + k, FIX))
    rec.close()
    assert len(rec.paths) >= 2
    for part in rec.paths:  # each part is a complete recording with its own header (docs/recording.md)
        assert RecordingReader(part).site == SITE.to_json()


def test_no_site_keeps_the_old_header(tmp_path: Path) -> None:
    p = tmp_path / "n.lfr"
    Recorder(p, source="test").close()
    head = json.loads(p.read_bytes().split(b"\n", 1)[0])
    assert "site" not in head and RecordingReader(p).site is None


def test_old_recording_without_site_reads(tmp_path: Path) -> None:
    """A version 1 file as written before `site` existed (header keys of docs/recording.md, written by hand)."""
    import zlib

    head = {"format": "livefix-recording", "version": 1, "source": "stdin", "start_wall": 1.7e9,
            "start_utc": "2023-11-14T22:13:20.000Z", "livefix": "0.0.9", "notes": "", "part": 1,
            "rotate_s": None, "compress": None}
    rec = f"@D 1.0 1700000000.0 {len(FIX)} {zlib.crc32(FIX):08x}\n".encode() + FIX + b"\n"
    p = tmp_path / "old.lfr"
    p.write_bytes(json.dumps(head).encode() + b"\n" + rec)
    r = RecordingReader(p)
    assert r.site is None and list(r.items()) == [Chunk(1.0, 1.7e9, FIX)] and r.damage is None


def test_plain_log_has_no_site(tmp_path: Path) -> None:
    p = tmp_path / "plain.nmea"
    p.write_bytes(FIX)
    assert RecordingReader(p).site is None


def test_report_of_a_recording_keeps_its_site(tmp_path: Path) -> None:
    p = tmp_path / "r.lfr"
    rec = Recorder(p, source="test", site=SITE.to_json())
    for k in range(3):
        rec.write(Chunk(float(k), 1.7e9 + k, FIX))
    rec.close()
    env = {**os.environ, "XDG_CONFIG_HOME": str(tmp_path)}
    out = tmp_path / "out"
    r = subprocess.run([sys.executable, "-m", "livefix", "report", str(p), "--operator", "Night crew", "-o",
                        str(out), "--format", "json"], capture_output=True, text=True, timeout=60, env=env,
                       cwd=ROOT)
    assert r.returncode == 0, r.stderr
    assert "override the recorded ones: operator" in r.stderr
    rep = json.loads((out / "report.json").read_text())
    site = rep["meta"]["site"]
    assert site["name"] == "Test mast" and site["antenna_height_m"] == 1.5  # from the header
    assert site["operator"] == "Night crew"  # the command line wins
    assert site["extra"] == {"cable_m": "12"}
    assert "operator" in rep["meta"]["notes"]
    assert rep["receivers"][0]["analysis"]["internal_errors"] == 0


def test_headless_replay_shows_the_recorded_site(tmp_path: Path) -> None:
    p = tmp_path / "h.lfr"
    rec = Recorder(p, source="test", site=SITE.to_json())
    rec.write(Chunk(1.0, 1.7e9, FIX))
    rec.close()
    r = subprocess.run([sys.executable, "-m", "livefix", "replay", str(p), "--headless"], capture_output=True,
                       text=True, timeout=60, cwd=ROOT, env={**os.environ, "XDG_CONFIG_HOME": str(tmp_path)})
    assert r.returncode == 0, r.stderr
    line = next(ln for ln in r.stdout.splitlines() if ln.startswith("site record: "))
    assert "Site: Test mast" in line and "Antenna height above the mark: 1.500 m" in line  # SITE above
    assert "Notes: two lines" in line and "not recorded" not in line
