"""`livefix replay --headless`: "satellites seen" counts every satellite ever listed in view, exactly
(issue 13, case 9: it sampled the sky every 200 items and missed short-lived satellites)."""

from __future__ import annotations

from pathlib import Path

from livefix.commands.replay import format_summary, summarize
from livefix.sources.file import FileSource


def cs(body: str) -> str:
    """A sentence with its NMEA 0183 checksum: XOR of the bytes between '$' and '*' (docs/sources.md#checksum)."""
    x = 0
    for b in body.encode():
        x ^= b
    return f"${body}*{x:02X}\r\n"


def test_every_satellite_listed_in_view_is_counted(tmp_path: Path) -> None:
    rows = []
    for i in range(600):
        t = f"{12 + i // 3600:02d}{i // 60 % 60:02d}{i % 60:02d}.00"
        rows.append(cs(f"GPGGA,{t},5000.000,N,01000.000,E,1,04,1.0,100.0,M,45.0,M,,"))
        rows.append(cs("GPGSV,1,1,04,01,40,050,45,02,35,120,44,03,60,200,47,04,25,280,41"))
        once = i == 301  # G06 and R07 are listed for one second only
        rows.append(cs("GLGSV,1,1,02,70,30,200,35,71,20,100,30" if once else "GLGSV,1,1,01,70,30,200,35"))
        if i == 450:
            rows.append(cs("GAGSV,1,1,01,07,20,300,33"))  # one Galileo set, then silent (expires)
        if once:
            rows.append(cs("GPGSV,1,1,04,01,40,050,45,02,35,120,44,03,60,200,47,06,20,100,30"))
    path = tmp_path / "short_lived.nmea"
    path.write_text("".join(rows))
    s = summarize(FileSource(str(path)))
    # hand count of the fixture: G01-G04 and G06, R06 and R07 (NMEA 70/71 = slot + 64), E07
    assert s["satellites"] == {"E": 1, "G": 5, "R": 2}
    assert "satellites seen: E 1, G 5, R 2" in format_summary(s)
