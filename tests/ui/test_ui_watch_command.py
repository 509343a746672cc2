"""`livefix watch` command-line checks: every bad input is one clear line and exit status 2,
before any screen opens."""

from __future__ import annotations

from pathlib import Path

import pytest
from uikit import RECORDINGS

from livefix.cli import main
from livefix.commands.watch import needs_ascii, parse_speed

REC = str(RECORDINGS / "rooftop-5min.lfr")


def run(argv: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str]:
    rc = main(argv)
    err = capsys.readouterr().err.strip()
    return rc, err


@pytest.mark.parametrize("argv, needle", [
    (["watch", "/nonexistent/file.lfr"], "no such file"),
    (["watch", "ftp://example.invalid/x"], "unsupported source"),
    (["watch", REC, "--theme", "nosuch"], "unknown theme 'nosuch'"),
    (["watch", REC, "--ref", "46.9,7.6"], "three numbers"),
    (["watch", REC, "--ref", "146.9,7.6,400"], "out of range"),
    (["watch", REC, "--speed", "fast"], "bad --speed"),
    (["watch", REC, "--speed", "-2"], "bad --speed"),
])
def test_bad_arguments_fail_with_one_line(argv: list[str], needle: str,
                                          capsys: pytest.CaptureFixture[str],
                                          monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> None:
    monkeypatch.setenv("XDG_CONFIG_HOME", str(tmp_path))
    rc, err = run(argv, capsys)
    assert rc == 2
    assert len(err.splitlines()) == 1 and needle in err and err.startswith("livefix watch: ")


def test_bad_theme_file_names_file_and_key(capsys: pytest.CaptureFixture[str], tmp_path: Path,
                                           monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("XDG_CONFIG_HOME", str(tmp_path))
    bad = tmp_path / "glow.toml"
    bad.write_text('[base]\nprimary = "#fff"\nforeground = "#fff"\nbackground = "#00"\n', encoding="utf-8")
    rc, err = run(["watch", REC, "--theme", str(bad)], capsys)
    assert rc == 2 and str(bad) in err and "base.background" in err


def test_bad_profile_is_refused(capsys: pytest.CaptureFixture[str], tmp_path: Path,
                                monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("XDG_CONFIG_HOME", str(tmp_path))
    rc, err = run(["watch", REC, "--profile", "no-such-profile"], capsys)
    assert rc == 2 and "no-such-profile" in err and len(err.splitlines()) == 1


@pytest.mark.parametrize("env, expected", [
    ({"LANG": "en_GB.UTF-8"}, False), ({"LANG": "C.utf8"}, False), ({"LC_ALL": "C", "LANG": "x.UTF-8"}, True),
    ({"LC_CTYPE": "de_DE.ISO-8859-1"}, True), ({}, True), ({"LANG": "POSIX"}, True),
])
def test_ascii_follows_the_locale(env: dict[str, str], expected: bool) -> None:
    # POSIX locale precedence LC_ALL > LC_CTYPE > LANG (IEEE Std 1003.1, Base Definitions ch. 8)
    assert needs_ascii(env) is expected


def test_speed_parsing() -> None:
    assert parse_speed("1") == 1.0 and parse_speed("max") is None and parse_speed("0.5") == 0.5


def test_invalid_colour_system_is_dropped_with_a_warning(capsys: pytest.CaptureFixture[str],
                                                         monkeypatch: pytest.MonkeyPatch) -> None:
    import os

    from livefix.commands.watch import _color_setting

    monkeypatch.setenv("TEXTUAL_COLOR_SYSTEM", "sixteen")  # Textual would crash with KeyError
    _color_setting()
    assert "TEXTUAL_COLOR_SYSTEM" not in os.environ
    assert "ignoring TEXTUAL_COLOR_SYSTEM='sixteen'" in capsys.readouterr().err
    monkeypatch.setenv("TEXTUAL_COLOR_SYSTEM", "256")
    _color_setting()
    assert os.environ["TEXTUAL_COLOR_SYSTEM"] == "256"


def test_replay_with_ui_reports_a_bad_file_as_replay(capsys: pytest.CaptureFixture[str]) -> None:
    from livefix.commands import watch as command

    try:
        rc, err = run(["replay", "/nonexistent/run.lfr"], capsys)
    finally:
        command.PROG["name"] = "livefix watch"
    assert rc == 2 and err.startswith("livefix replay: ") and "no such file" in err
