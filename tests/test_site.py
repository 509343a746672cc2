"""The site record (livefix/site.py): TOML parsing, one-line errors, "not recorded" rows, unknown
fields kept, command-line values over the file, recorded values under the command line, and the
receiver's announcement shown only where the user gave nothing; plus the commands' `--site`.

Expected values are hand-written in the fixtures below; the rules they check are the issue's
(a missing field reads "not recorded", unknown fields are kept and shown, heights above 200 m or
below 0 m are refused).
"""

from __future__ import annotations

import os
import subprocess
import sys
from dataclasses import fields
from pathlib import Path

import pytest

from livefix.site import (
    ANNOUNCED,
    FIELDS,
    KEYS,
    NOT_RECORDED,
    SiteError,
    SiteInfo,
    coerce,
    from_args,
    from_mapping,
    load_site,
    overlay,
    site_name,
)

ROOT = Path(__file__).resolve().parents[1]

FULL = '''
name = "Yard mast 3"
antenna_model = "Patch antenna with ground plane"
antenna_height_m = 1.2346
height_method = "Slant"
height_to = "bottom of mount"
mount = "pole clamp"
receiver_model = "Bench receiver B"
receiver_firmware = "7.1"
operator = "Technician on shift"
notes = """line one
line two"""
'''


def write(tmp_path: Path, text: str, name: str = "site.toml") -> Path:
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def test_fields_table_and_class_agree() -> None:
    # one table names every field once; the dataclass holds exactly those plus extra/announced
    assert {f.name for f in fields(SiteInfo)} == {*KEYS, "extra", "announced"}
    assert len(set(KEYS)) == len(FIELDS) == 10  # the ten fields the issue lists


def test_full_file_reads_every_field(tmp_path: Path) -> None:
    s = load_site(write(tmp_path, FULL))
    assert s.name == "Yard mast 3" and s.operator == "Technician on shift"
    assert s.antenna_height_m == pytest.approx(1.2346)  # as written in FULL
    assert s.height_method == "slant"  # case folded to the accepted word
    rows = dict(s.rows())
    assert rows["Antenna height above the mark"] == "1.235 m"  # 1.2346 m to the millimetre
    assert rows["Antenna height measured to"] == "bottom of mount"
    assert rows["Notes"] == "line one line two"  # one line in a table cell
    assert s.to_json()["notes"] == "line one\nline two"  # the JSON keeps the text as given
    assert NOT_RECORDED not in rows.values()


def test_site_table_form(tmp_path: Path) -> None:
    s = load_site(write(tmp_path, '[site]\nname = "Under a table"\n'))
    assert s.name == "Under a table"


def test_missing_fields_are_not_recorded() -> None:
    rows = SiteInfo().rows()
    assert [label for label, _ in rows] == [label for _, label, _, _ in FIELDS]
    assert all(text == NOT_RECORDED for _, text in rows)  # 10 of 10 missing
    assert SiteInfo().empty


def test_unknown_fields_are_kept_shown_and_warned(tmp_path: Path) -> None:
    s = load_site(write(tmp_path, 'name = "A"\ncable_length_m = 18\ncolour = "grey"\n'))
    assert dict(s.extra) == {"cable_length_m": "18", "colour": "grey"}
    rows = dict(s.rows())
    assert rows["cable_length_m (unknown field)"] == "18" and rows["colour (unknown field)"] == "grey"
    assert len(s.warnings()) == 2 and all("kept" in w for w in s.warnings())
    assert s.to_json()["extra"] == {"cable_length_m": "18", "colour": "grey"}


@pytest.mark.parametrize(("text", "phrase"), [
    ('name = "unterminated\n', "not valid TOML"),
    ("antenna_height_m = \"1.2\"\n", "must be a number"),
    ("antenna_height_m = -0.5\n", "0 m or more"),
    ("antenna_height_m = 250\n", "not plausible"),  # > 200 m: the limit in livefix.site
    ("antenna_height_m = nan\n", "0 m or more"),
    ("antenna_height_m = true\n", "must be a number"),
    ("name = 5\n", "must be text"),
    ('height_method = "diagonal"\n', "vertical, slant"),
])
def test_bad_files_give_one_line(tmp_path: Path, text: str, phrase: str) -> None:
    with pytest.raises(SiteError) as err:
        load_site(write(tmp_path, text))
    msg = str(err.value)
    assert phrase in msg and "\n" not in msg and "site.toml" in msg


def test_missing_file(tmp_path: Path) -> None:
    with pytest.raises(SiteError, match="not found"):
        load_site(tmp_path / "nothing.toml")


def test_height_limits_inclusive() -> None:
    assert from_mapping({"antenna_height_m": 0}).antenna_height_m == 0.0
    assert from_mapping({"antenna_height_m": 200}).antenna_height_m == 200.0


def test_command_line_over_the_file(tmp_path: Path) -> None:
    p = write(tmp_path, FULL)
    s = from_args(str(p), antenna_height="0.5", operator="Second visitor")
    assert s.antenna_height_m == 0.5 and s.operator == "Second visitor" and s.name == "Yard mast 3"
    assert from_args("Roof B").name == "Roof B"  # a plain name, as before the site file
    assert from_args("").empty
    with pytest.raises(SiteError, match="--antenna-height"):
        from_args("Roof B", antenna_height="tall")
    with pytest.raises(SiteError, match="not plausible"):
        from_args("Roof B", antenna_height="350")


def test_control_characters_removed() -> None:
    s = from_mapping({"name": "roof\x1b[2J\x07 A"})
    assert s.name == "roof [2J  A"  # ESC and BEL become spaces


def test_announced_only_where_nothing_given() -> None:
    said = {"receiver_model": "RX-9", "receiver_firmware": "3.2"}
    rows = dict(SiteInfo(receiver_model="Bench unit").with_announced(said).rows())
    assert rows["Receiver model"] == "Bench unit"  # the user's value wins
    assert rows["Receiver firmware"] == f"3.2 {ANNOUNCED}"
    assert ANNOUNCED == "(announced by the receiver)"


def test_json_round_trip_and_coerce() -> None:
    s = SiteInfo(name="N", antenna_height_m=2.0, extra={"k": "v"}, announced={"receiver_model": "M"})
    j = s.to_json()
    assert set(j) == {*KEYS, "extra", "announced"}
    assert from_mapping(j) == s
    assert coerce(j) == s and coerce(s) is s and coerce("Plain") == SiteInfo(name="Plain")
    assert site_name(j) == "N" and site_name("old text") == "old text" and site_name(None) == ""
    damaged = coerce({"name": "D", "antenna_height_m": -1})  # readers never fail on a bad record
    assert damaged.name == "D" and "damaged" in damaged.extra["site record"]


def test_recorded_site_under_the_command_line() -> None:
    recorded = SiteInfo(name="R", operator="First", antenna_height_m=1.0).to_json()
    site, note = overlay(recorded, SiteInfo(operator="Second"))
    assert (site.name, site.operator, site.antenna_height_m) == ("R", "Second", 1.0)
    assert note is not None and "operator" in note
    same, none = overlay(recorded, SiteInfo(operator="First"))
    assert none is None and same.operator == "First"
    assert overlay(None, SiteInfo(name="X")) == (SiteInfo(name="X"), None)  # an old recording
    _, bad = overlay({"antenna_height_m": -3}, SiteInfo())
    assert bad is not None and "damaged" in bad


def test_example_file_reads() -> None:
    s = load_site(ROOT / "docs" / "site.example.toml")
    assert s.name and s.antenna_height_m is not None and not s.extra
    assert s.receiver_firmware is None  # left for the receiver's announcement in the example


# -- the commands -----------------------------------------------------------------------------
def run(*argv: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "livefix", *argv], capture_output=True, text=True,
                          cwd=ROOT, timeout=60, stdin=subprocess.DEVNULL,
                          env={**os.environ, "XDG_CONFIG_HOME": str(ROOT / ".no-config")})


@pytest.mark.parametrize("command", ["report", "check", "record", "watch"])
def test_bad_site_file_exits_2_with_one_line(tmp_path: Path, command: str) -> None:
    bad = write(tmp_path, "antenna_height_m = 1250\n")  # centimetres typed as metres
    rec = ROOT / "recordings" / "rooftop-5min.lfr"
    argv = {"report": ["report", str(rec), "--json"], "check": ["check", str(rec)],
            "record": ["record", "sim:rooftop", "-o", str(tmp_path / "x.lfr")],
            "watch": ["watch", "sim:rooftop"]}[command]
    r = run(*argv, "--site", str(bad))
    assert r.returncode == 2  # could not run (README exit statuses)
    lines = [ln for ln in r.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and "not plausible" in lines[0], r.stderr
    assert not (tmp_path / "x.lfr").exists()  # refused before anything was created


def test_report_keeps_site_and_announcement(tmp_path: Path) -> None:
    import json

    site = write(tmp_path, 'name = "Test roof"\nantenna_height_m = 0.25\nsurprise = "kept"\n')
    r = run("report", str(ROOT / "recordings" / "rooftop-5min.lfr"), "--site", str(site),
            "--operator", "Tester", "-o", str(tmp_path), "--format", "json")
    assert r.returncode == 0, r.stderr
    assert "unknown field 'surprise'" in r.stderr
    meta = json.loads((tmp_path / "report.json").read_text())["meta"]
    assert meta["site"]["name"] == "Test roof" and meta["site"]["antenna_height_m"] == 0.25
    assert meta["site"]["operator"] == "Tester" and meta["site"]["extra"] == {"surprise": "kept"}
    assert meta["site"]["antenna_model"] is None  # not recorded
