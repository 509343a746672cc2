"""The program's own entry (`livefix.cli.entry`: the console script and `python -m livefix`): the same
output and exit code as `main()`; sparse collection from the start for a report or comparison, the
default thresholds for everything else (a check may watch a live source for days), and the objects
frozen at the end of a report, comparison or check (the interpreter's last cycle collection then
walks nothing). Expected values: the in-process `main()` output of the same command, and the
thresholds in livefix.batchgc.
"""

from __future__ import annotations

import gc
import subprocess
import sys
from collections.abc import Iterator
from pathlib import Path
from types import ModuleType

import pytest

from livefix import cli
from livefix.batchgc import BATCH_GC_THRESHOLD

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "recordings" / "rooftop-5min.lfr"


@pytest.fixture
def clean_gc() -> Iterator[None]:
    """entry() changes the process's collector: put it back for the tests that follow."""
    old = gc.get_threshold()
    yield
    gc.unfreeze()
    gc.set_threshold(*old)


def _thresholds_seen_by(command: ModuleType, monkeypatch: pytest.MonkeyPatch) -> list[tuple[int, int, int]]:
    """The collector's thresholds when the command's run() starts, one entry per run."""
    seen: list[tuple[int, int, int]] = []
    run = command.run

    def spy(args: object) -> int:
        seen.append(gc.get_threshold())
        return run(args)

    monkeypatch.setattr(command, "run", spy)
    return seen


def test_python_m_livefix_prints_what_main_prints(capsys: pytest.CaptureFixture[str]) -> None:
    assert cli.main(["report", str(DEMO), "--json", "--jobs", "1"]) == 0
    expected = capsys.readouterr().out
    r = subprocess.run([sys.executable, "-m", "livefix", "report", str(DEMO), "--json", "--jobs", "1"],
                       capture_output=True, text=True, cwd=ROOT, timeout=300)
    assert r.returncode == 0, r.stderr
    assert r.stdout == expected and r.stderr == ""


def test_a_batch_command_collects_sparsely_and_freezes_at_the_end(monkeypatch: pytest.MonkeyPatch,
                                                                  capsys: pytest.CaptureFixture[str],
                                                                  clean_gc: None) -> None:
    from livefix.commands import report

    seen = _thresholds_seen_by(report, monkeypatch)
    monkeypatch.setattr(sys, "argv", ["livefix", "report", str(DEMO), "--json", "--jobs", "1"])
    gc.unfreeze()
    assert cli.entry() == 0
    assert seen == [BATCH_GC_THRESHOLD]  # set before the command's imports and run
    assert gc.get_freeze_count() > 0
    assert capsys.readouterr().out.startswith("{")


def test_a_check_keeps_the_default_thresholds_until_its_files_run(monkeypatch: pytest.MonkeyPatch,
                                                                    capsys: pytest.CaptureFixture[str],
                                                                    clean_gc: None) -> None:
    from livefix.commands import check

    gc.unfreeze()
    before = gc.get_threshold()
    seen = _thresholds_seen_by(check, monkeypatch)
    monkeypatch.setattr(sys, "argv", ["livefix", "check", str(DEMO)])
    assert cli.entry() in (0, 1)  # a verdict either way
    assert seen == [before]
    assert gc.get_threshold() == before and gc.get_freeze_count() > 0
    capsys.readouterr()


def test_other_commands_keep_the_collector(monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str],
                                           clean_gc: None) -> None:
    gc.unfreeze()
    before = gc.get_threshold()
    monkeypatch.setattr(sys, "argv", ["livefix"])  # no command: the help and exit code 2
    assert cli.entry() == 2
    assert gc.get_threshold() == before and gc.get_freeze_count() == 0
    assert "COMMAND" in capsys.readouterr().out
