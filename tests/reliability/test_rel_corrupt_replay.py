"""Corrupt and truncated recordings replay up to the damage and say where they stopped, through
`livefix replay --headless` and `livefix report --json` run as real subprocesses. The undamaged
original is the reference: what replays must be exactly its leading records."""

from __future__ import annotations

import gzip
import json
import re
from pathlib import Path

import pytest
from relkit import run_cli

from livefix.record.reader import RecordingReader
from livefix.sources.base import Chunk


@pytest.fixture(scope="module")
def original(tmp_path_factory: pytest.TempPathFactory) -> Path:
    d = tmp_path_factory.mktemp("corrupt")
    path = d / "orig.lfr"
    out = run_cli("simulate", "rooftop", "--rate", "20", "--duration", "40s", "-o", str(path))
    assert out.returncode == 0, out.stderr
    return path


def damaged(original: Path, kind: str) -> Path:
    data = original.read_bytes()
    p = original.with_name(f"{kind}.lfr")
    if kind == "truncated":
        p.write_bytes(data[: len(data) // 2])
    elif kind == "flipped":
        b = bytearray(data)
        b[len(b) // 3] ^= 0x55
        p.write_bytes(bytes(b))
    elif kind == "garbage_tail":
        p.write_bytes(data[: len(data) * 2 // 3] + b"\x00\xff" * 500)
    elif kind == "gzip_truncated":
        z = gzip.compress(data)
        p = original.with_name("gzip_truncated.lfr.gz")
        p.write_bytes(z[: len(z) // 2])
    return p


def chunks(path: Path) -> list[Chunk]:
    return [it for it in RecordingReader(path).items() if type(it) is Chunk]


@pytest.mark.parametrize("kind", ["truncated", "flipped", "garbage_tail", "gzip_truncated"])
def test_replay_headless_stops_at_the_damage_and_says_where(original: Path, kind: str) -> None:
    bad = damaged(original, kind)
    out = run_cli("replay", "--headless", str(bad))
    assert out.returncode == 0, out.stderr
    assert "Traceback" not in out.stderr
    dmg = re.search(r"^damage: (.*)$", out.stdout, re.M)
    assert dmg and dmg.group(1) != "none", out.stdout
    if kind != "gzip_truncated":
        assert re.search(r"stopped at record \d+, byte offset \d+", dmg.group(1)), dmg.group(1)
    # what replays is exactly the leading part of the undamaged original
    good, got = chunks(original), chunks(bad)
    assert 0 < len(got) < len(good) and got == good[: len(got)]
    lines = int(re.search(r"^lines: (\d+)", out.stdout, re.M).group(1))
    assert lines == sum(c.data.count(b"\n") for c in got)


def test_report_json_of_a_truncated_recording_names_the_stop(original: Path, tmp_path: Path) -> None:
    bad = damaged(original, "truncated")
    out = run_cli("report", "--json", str(bad))
    assert out.returncode == 0, out.stderr
    snap = json.loads(out.stdout)
    ended = [e for e in snap["events"] if e["kind"] == "link" and e.get("state") == "ended"]
    assert ended and "stopped at record" in ended[-1]["text"] and "intact" in ended[-1]["text"]
    assert snap["stream"]["lines"] == sum(c.data.count(b"\n") for c in chunks(bad))
    out = run_cli("report", str(bad), "-o", str(tmp_path))
    assert out.returncode == 0, out.stderr
    for name in ("report.md", "report.html", "report.json"):
        assert "stopped at record" in (tmp_path / name).read_text()


@pytest.mark.parametrize("content", [b"", b"\x00" * 10_000, b"LFR garbage\n" * 50], ids=["empty", "zeros", "text"])
def test_empty_or_unreadable_files_end_cleanly(tmp_path: Path, content: bytes) -> None:
    p = tmp_path / "odd.lfr"
    p.write_bytes(content)
    for args in (("replay", "--headless", str(p)), ("report", "--json", str(p))):
        out = run_cli(*args)
        assert out.returncode in (0, 2), out.stderr
        assert "Traceback" not in out.stderr
        if out.returncode == 2:
            assert len(out.stderr.strip().splitlines()) == 1  # one clear line
