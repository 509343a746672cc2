"""`livefix compare` through the real command line (livefix.cli.main, real files): the documents it
writes, report JSON input giving the same answer as the recording, and one clear line with exit
status 2 for every input it cannot read (README "Headless checks": 2 = could not run)."""

from __future__ import annotations

import json
import re
import subprocess
import sys
from pathlib import Path
from typing import Any

import pytest

from livefix.cli import main

ROOT = Path(__file__).resolve().parents[2]
ROOFTOP = str(ROOT / "recordings" / "rooftop-5min.lfr")
BUILDING = str(ROOT / "recordings" / "building-5min.lfr")


def nmea(body: str) -> bytes:
    """One sentence with its NMEA 0183 checksum (XOR of the bytes between '$' and '*')."""
    cs = 0
    for b in body.encode("ascii"):
        cs ^= b
    return f"${body}*{cs:02X}\r\n".encode("ascii")


def _compare_json(capsys: pytest.CaptureFixture[str], *args: str) -> dict[str, Any]:
    capsys.readouterr()
    assert main(["compare", "--json", *args]) == 0
    return json.loads(capsys.readouterr().out)


def _answer(doc: dict[str, Any]) -> tuple[Any, ...]:
    return (doc["recommendation"]["spot"], doc["recommendation"]["text"],
            [(f["key"], f["values"], f["outcome"], f["best"], f["why"]) for f in doc["figures"]])


def test_writes_table_json_markdown_and_html(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    out = tmp_path / "out"
    assert main(["compare", ROOFTOP, BUILDING, "-o", str(out)]) == 0
    printed = capsys.readouterr().out
    assert "rooftop-5min is the better spot" in printed
    assert "Share of the common sky obstructed" in printed and "Session length" in printed
    doc = json.loads((out / "compare.json").read_text(encoding="utf-8"))
    assert doc["format"] == "livefix-compare/1"
    assert doc["recommendation"]["spot"] == "rooftop-5min"
    assert [s["internal_errors"] for s in doc["sessions"]] == [0, 0]
    res = next(f for f in doc["figures"] if f["key"] == "cn0_residual_db")
    assert len(res["detail"][0]["bands"]) >= 5  # per-band residuals are in the JSON
    md = (out / "compare.md").read_text(encoding="utf-8")
    assert md.startswith("# Comparison of candidate spots") and "rooftop" in md.splitlines()[2]  # advice first
    assert "weak evidence" in md.lower()
    html = (out / "compare.html").read_text(encoding="utf-8")
    # self-contained: one inline SVG, no script, nothing fetched (namespace URIs are only names)
    assert html.count("<svg") == 1 and "<script" not in html
    assert not re.search(r"""(src|href)\s*=\s*["']?https?:|url\(\s*["']?https?:|@import""", html)
    assert "rooftop-5min: 0 % of the common sky obstructed" in html  # the plot legend names each spot


def test_report_json_gives_the_same_answer(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    for name, rec in (("roof", ROOFTOP), ("wall", BUILDING)):
        assert main(["report", rec, "--format", "json", "-o", str(tmp_path / name)]) == 0
    report = json.loads((tmp_path / "wall" / "report.json").read_text(encoding="utf-8"))
    assert report["format"].startswith("livefix-report/")  # /1 or /2: both carry receivers[0].analysis
    names = ["--name", "rooftop", "--name", "building"]
    from_rec = _compare_json(capsys, ROOFTOP, BUILDING, *names)
    from_json = _compare_json(capsys, str(tmp_path / "roof" / "report.json"), str(tmp_path / "wall" / "report.json"),
                              *names)
    assert _answer(from_json) == _answer(from_rec)
    assert [s["kind"] for s in from_json["sessions"]] == ["report JSON", "report JSON"]
    # the snapshot that `report --json` prints is read as well, and one of each mixes
    (tmp_path / "wall.json").write_text(json.dumps(report["receivers"][0]["analysis"]), encoding="utf-8")
    mixed = _compare_json(capsys, ROOFTOP, str(tmp_path / "wall.json"), *names)
    assert _answer(mixed) == _answer(from_rec)


def test_plain_nmea_logs(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    for s in ("rooftop", "building"):
        assert main(["simulate", s, "--duration", "90s", "--rate", "1", "-o", str(tmp_path / f"{s}.nmea")]) == 0
    doc = _compare_json(capsys, str(tmp_path / "rooftop.nmea"), str(tmp_path / "building.nmea"))
    assert [s["kind"] for s in doc["sessions"]] == ["NMEA log", "NMEA log"]
    assert [s["duration_s"] for s in doc["sessions"]] == [pytest.approx(89, abs=1.5)] * 2  # 90 epochs at 1 Hz
    assert all(s["weak_evidence"] for s in doc["sessions"])


@pytest.mark.parametrize("content, phrase", [
    (None, "no such file"),
    (b"{ not json", "not valid JSON"),
    (b'{"format": "something-else"}', "neither a livefix report"),
    (b'{"format": "livefix-report/2", "receivers": []}', "without receivers[0].analysis"),
    (bytes(range(256)) * 8, ""),  # no NMEA at all: the probe says what the file holds
])
def test_unreadable_input_is_one_line_and_exit_2(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                                 content: bytes | None, phrase: str) -> None:
    bad = tmp_path / "bad.json"
    if content is not None:
        bad.write_bytes(content)
    out = tmp_path / "out"
    capsys.readouterr()
    assert main(["compare", ROOFTOP, str(bad), "-o", str(out)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("livefix compare: ") and phrase in err[0]
    assert not out.exists()  # nothing written
    if content is not None:
        assert bad.read_bytes() == content  # the input is left as it was


def test_one_session_is_not_a_comparison(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["compare", ROOFTOP]) == 2
    assert "two or more" in capsys.readouterr().err


def test_command_line_subprocess(tmp_path: Path) -> None:
    """The installed entry point: exit status and the one line, as a user sees them."""
    good = tmp_path / "ok.nmea"
    good.write_bytes(nmea("GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,"))
    p = subprocess.run([sys.executable, "-m", "livefix", "compare", str(good), str(tmp_path / "missing.lfr")],
                       capture_output=True, text=True, timeout=60, cwd=tmp_path)
    assert p.returncode == 2
    assert p.stderr.strip() == f"livefix compare: {tmp_path / 'missing.lfr'}: no such file"
