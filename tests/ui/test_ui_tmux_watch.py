"""End to end: `livefix watch <recording>` in a detached tmux session with a basic and a
256-colour TERM; the figures read off the captured pane agree with a headless pipeline run."""

from __future__ import annotations

import re
import shutil
import subprocess
import sys
import time
import uuid
from pathlib import Path

import pytest
from uikit import RECORDINGS, ROOT

from livefix.pipeline import run_items
from livefix.record.reader import RecordingReader
from livefix.ui.status import sat_counts

pytestmark = [pytest.mark.skipif(shutil.which("tmux") is None, reason="tmux not installed"),
              pytest.mark.timeout(20)]

REC = RECORDINGS / "rooftop-5min.lfr"


def tmux(sock: str, *args: str) -> str:
    """tmux on a server of this test's own (-L): no race with another test's server exiting."""
    return subprocess.run(["tmux", "-L", sock, *args], capture_output=True, text=True, timeout=5).stdout


@pytest.fixture(scope="module")
def expected() -> tuple[str, str]:
    snap = run_items(RecordingReader(str(REC)).items(), source=str(REC)).snapshot()
    counts = sat_counts(snap)
    tot = "/".join(str(sum(c[i] for c in counts.values())) for i in range(3))
    return tot, f"{snap.analysis['fix']['ttff_s']:.0f} s"


@pytest.mark.parametrize("term", ["xterm", "xterm-256color"])
def test_watch_in_tmux_shows_the_recordings_figures(term: str, expected: tuple[str, str],
                                                   tmp_path: Path) -> None:
    name = f"lf-{uuid.uuid4().hex[:8]}"
    # COLUMNS/LINES from the test runner would override the pane size inside Textual
    env = f"env -u COLUMNS -u LINES TERM={term} LANG=C.UTF-8 XDG_CONFIG_HOME={tmp_path}"
    cmd = f"cd {ROOT} && {env} {sys.executable} -m livefix watch {REC} --speed max; sleep 20"
    tmux(name, "new-session", "-d", "-s", name, "-x", "160", "-y", "50", cmd)
    try:
        deadline, pane = time.monotonic() + 12, ""
        while time.monotonic() < deadline:
            time.sleep(0.3)
            pane = tmux(name, "capture-pane", "-p", "-t", name)
            if "END OF DATA" in pane and "TTFF" in pane:
                time.sleep(0.5)  # one more repaint after the end of the data
                pane = tmux(name, "capture-pane", "-p", "-t", name)
                break
        assert "END OF DATA" in pane, pane
        tot, ttff = expected
        assert f"used/trk/view {tot}" in pane  # issue 15 status wording
        assert re.search(rf"TTFF\s+{re.escape(ttff)}", pane)
        assert "RTK FIXED" in pane and "Satellites" in pane
        styled = tmux(name, "capture-pane", "-p", "-e", "-t", name)
        # TERM=xterm is a 16-colour terminal (Textual picks "standard"); *-256color gets 38;5;N
        assert ("38;5;" in styled) is (term == "xterm-256color")
        tmux(name, "send-keys", "-t", name, "q")
        deadline = time.monotonic() + 5
        while time.monotonic() < deadline and "livefix" in tmux(name, "list-panes", "-t", name, "-F",
                                                               "#{pane_current_command}"):
            time.sleep(0.2)
    finally:
        tmux(name, "kill-server")
