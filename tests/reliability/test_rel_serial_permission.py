"""Permission denied on a serial device, for real although the tests run as root: the monitor runs
in a child process without the DAC override capabilities (util-linux `setpriv`), so a pty slave
with mode 000 refuses it with EACCES. The session shows the error and keeps retrying; when the
mode is restored it opens the device and streams. Skipped with the reason when setpriv is absent."""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import time
import tty

import pytest
from relkit import ENV, GGA, PY, ROOT

CHILD = r"""
import json, sys, time
from livefix.session import Session
from livefix.sources.serial_port import SerialSource
s = Session(SerialSource(sys.argv[1], baud=9600), publish_hz=20).start()
end = time.monotonic() + 20
while time.monotonic() < end:
    snap = s.latest
    if snap is not None:
        texts = [e["text"] for e in snap.analysis["events"]]
        print(json.dumps({"link": snap.link, "decoded": snap.counters.decoded, "texts": texts,
                          "error": snap.error}), flush=True)
        if snap.counters.decoded:
            break
    time.sleep(0.1)
s.stop()
"""


@pytest.mark.skipif(shutil.which("setpriv") is None, reason="util-linux setpriv not installed")
def test_permission_denied_is_shown_then_recovers_when_access_returns() -> None:
    m, sl = os.openpty()
    tty.setraw(sl)
    dev = os.ttyname(sl)
    mode = os.stat(dev).st_mode & 0o777
    caps = "-dac_override,-dac_read_search"
    cmd = ["setpriv", f"--inh-caps={caps}", f"--bounding-set={caps}", PY, "-c", CHILD, dev]
    if os.geteuid() != 0:
        cmd = [PY, "-c", CHILD, dev]  # an ordinary user: file modes apply anyway
    os.chmod(dev, 0)
    child = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, cwd=str(ROOT), env=ENV)
    try:
        denied = restored = None
        wrote = False
        last: dict = {}
        deadline = time.monotonic() + 25
        while time.monotonic() < deadline:
            out = child.stdout.readline()
            if not out:
                break
            last = json.loads(out)
            if denied is None and any("Permission denied" in t for t in last["texts"]):
                denied = last
                os.chmod(dev, 0o600)  # access comes back (the owner's bits apply to root-without-DAC)
                restored = time.monotonic()
            if restored and last["link"] == "streaming" and not wrote:
                os.write(m, GGA + b"\r\n")
                wrote = True
            if last["decoded"]:
                break
        child.wait(15)
    finally:
        if child.poll() is None:
            child.kill()
            child.wait(5)
        os.chmod(dev, mode)
        os.close(sl)
        os.close(m)
    err = child.stderr.read()
    assert denied is not None, (last, err)
    assert denied["link"] in ("lost", "reconnecting", "connecting") and denied["error"] is None
    assert any("reconnecting" in t for t in denied["texts"])
    assert last["decoded"] == 1 and last["error"] is None, (last, err)
