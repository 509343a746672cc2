"""One reference-point parser for every command: the same forms accepted, the same refusal."""

from __future__ import annotations

from pathlib import Path

import pytest

from livefix.cli import main
from livefix.refpoint import parse_ref

REC = str(Path(__file__).resolve().parents[1] / "recordings" / "rooftop-5min.lfr")


@pytest.mark.parametrize("text", ["47.1,8.2,500", "47.1, 8.2, 500", "47.1 8.2 500", " 47.1 ,8.2,500.0 "])
def test_the_accepted_forms_give_the_same_point(text: str) -> None:
    assert parse_ref(text) == (47.1, 8.2, 500.0)  # hand-typed value of the fixture text


@pytest.mark.parametrize("text, words", [
    ("45,200,0", "out of range"),  # longitude beyond 180° (WGS 84 longitudes are within ±180°)
    ("91,0,0", "out of range"),  # latitude beyond the pole
    ("-90.0001,0,0", "out of range"),
    ("0,-180.5,0", "out of range"),
    ("47.1,8.2,-20000", "out of range"),  # below the documented height bound
    ("47.1,8.2", "needs three numbers"),
    ("47.1,8.2,500,1", "needs three numbers"),
    ("47.1,east,500", "not numbers"),
    ("nan,8.2,500", "not numbers"),
    ("47.1,inf,500", "not numbers"),
])
def test_refusals_say_what_is_wrong(text: str, words: str) -> None:
    with pytest.raises(ValueError, match=words):
        parse_ref(text)


def test_the_range_ends_are_accepted() -> None:
    # WGS 84: latitude -90..90, longitude -180..180 degrees, both ends included
    assert parse_ref("90,180,0") == (90.0, 180.0, 0.0)
    assert parse_ref("-90,-180,0") == (-90.0, -180.0, 0.0)


@pytest.mark.parametrize("argv", [
    ["watch", REC, "--ref", "45,200,0"],
    ["report", REC, "--ref", "45,200,0"],
    ["check", REC, "--profile", "commission", "--ref", "45,200,0"],
])
def test_every_command_refuses_a_bad_ref_with_one_message(argv: list[str], capsys: pytest.CaptureFixture[str],
                                                           monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> None:
    monkeypatch.setenv("XDG_CONFIG_HOME", str(tmp_path))
    monkeypatch.chdir(tmp_path)
    assert main(argv) == 2
    err = capsys.readouterr().err.strip()
    with pytest.raises(ValueError) as exc:
        parse_ref("45,200,0")
    # one line: the command name (check adds "could not run"), then the parser's own words
    assert len(err.splitlines()) == 1 and err.startswith(f"livefix {argv[0]}: ")
    assert err.endswith(f": {exc.value}") and "out of range" in err
