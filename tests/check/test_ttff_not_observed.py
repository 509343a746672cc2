"""A session that begins with a fix never saw the receiver acquire: its TTFF is null in JSON, "not
measured" in a check (never a pass) and in reports, "not observed" on the screen, never 0 s.

Fixture: hand-written NMEA (checksums computed by `_nmea`, NMEA 0183: XOR between '$' and '*')
written to a plain log and run through `livefix check` / `livefix report` as a user would.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

from livefix.ui.stability import lines


def _nmea(body: str) -> bytes:
    cs = 0
    for ch in body.encode():
        cs ^= ch
    return f"${body}*{cs:02X}\r\n".encode()


def _log(tmp_path: Path, nofix_first: int) -> Path:
    out = bytearray()
    for i in range(60):
        hms = f"1200{i:02d}"
        if i < nofix_first:
            out += _nmea(f"GPGGA,{hms},,,,,0,00,,,,,,,") + _nmea(f"GPRMC,{hms},V,,,,,,,200526,,,N")
        else:
            out += _nmea(f"GPGGA,{hms},4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,")
            out += _nmea(f"GPRMC,{hms},A,4807.038,N,01131.000,E,0.0,0.0,200526,,,A")
    p = tmp_path / f"bench-{nofix_first}.nmea"
    p.write_bytes(bytes(out))
    return p


PROFILE = """
[profile]
name = "ttff-only"
[[threshold]]
name = "ttff"
metric = "fix.ttff_s"
op = "<="
limit = 60
unit = "s"
source = "common practice"
"""


def _livefix(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "livefix", *args], capture_output=True, text=True, timeout=120)


def test_check_and_reports_say_not_measured(tmp_path: Path) -> None:
    prof = tmp_path / "ttff.toml"
    prof.write_text(PROFILE)
    log = _log(tmp_path, nofix_first=0)
    out = tmp_path / "out"
    r = _livefix("check", str(log), "--profile", str(prof), "--report", str(out))
    assert r.returncode == 1, r.stdout + r.stderr  # not observed is never a pass
    doc = json.loads((out / "report.json").read_text())
    rx = doc["receivers"][0]
    assert rx["analysis"]["fix"]["ttff_s"] is None
    res = rx["results"][0]
    assert res["measured"] is None and not res["passed"] and res["note"].startswith("not measured")
    md = (out / "report.md").read_text()
    # the threshold's row, by its name "ttff" (it shows the catalogue label, not the path); whether
    # Markdown escapes '(' is the renderer's business, so the check strips backslashes
    ttff_rows = [ln.replace("\\", "") for ln in md.splitlines() if "| ttff |" in ln]
    assert ttff_rows and all("not measured (not observed" in ln and "| 0" not in ln for ln in ttff_rows), ttff_rows
    assert "not measured" in (out / "junit.xml").read_text()
    # the screen: "not observed", not a dash that could be read as "still waiting"
    assert dict(lines(rx["analysis"]))["TTFF"].startswith("not observed")


def test_check_passes_when_the_acquisition_was_seen(tmp_path: Path) -> None:
    prof = tmp_path / "ttff.toml"
    prof.write_text(PROFILE)
    r = _livefix("check", str(_log(tmp_path, nofix_first=25)), "--profile", str(prof), "--report", str(tmp_path / "o"))
    assert r.returncode == 0, r.stdout + r.stderr
    rx = json.loads((tmp_path / "o" / "report.json").read_text())["receivers"][0]
    # fixture: 25 no-fix epochs at 1 s from 12:00:00, first fix at 12:00:25 -> 25 s
    assert rx["analysis"]["fix"]["ttff_s"] == 25.0 and rx["results"][0]["passed"]
    assert dict(lines(rx["analysis"]))["TTFF"].startswith("25 s")
