"""Serial source through real pseudo-terminals: streaming, unplug/re-plug, auto-baud, bad paths."""

from __future__ import annotations

import os
import subprocess
import sys
import threading
import time
import tty

import pytest
from srckit import state_is, take

from livefix.sources import SourceError, open_source
from livefix.sources.base import Chunk, Link, LinkEvent
from livefix.sources.serial_port import SerialSource

# Public example sentences with correct checksums (a public NMEA example page,
# docs/sources.md#example-sentences; checksums recomputed there).
GGA = b"$GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,*47\r\n"
RMC = b"$GPRMC,123519,A,4807.038,N,01131.000,E,022.4,084.4,230394,003.1,W*6A\r\n"
BAD = b"$GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,*00\r\n"


def new_pty() -> tuple[int, int]:
    m, s = os.openpty()
    tty.setraw(s)
    return m, s


def link_to(path: str, target: str) -> None:
    tmp = path + ".new"
    os.symlink(target, tmp)
    os.replace(tmp, path)


def test_unplug_and_replug_through_pty(tmp_path) -> None:
    dev = str(tmp_path / "gnss0")
    m1, s1 = new_pty()
    link_to(dev, os.ttyname(s1))
    src = open_source(dev, baud=9600)
    assert isinstance(src, SerialSource)
    stop = threading.Event()
    guard = threading.Timer(20, stop.set)
    guard.start()
    seen: list = []
    try:
        gen = src.items(stop)
        take(gen, state_is(Link.STREAMING), sink=seen)
        os.write(m1, GGA)
        take(gen, lambda it: type(it) is Chunk and it.data.endswith(b"\n"), sink=seen)
        # unplug: the device goes away under the open port
        os.close(s1)
        os.close(m1)
        lost = take(gen, state_is(Link.LOST), sink=seen)
        assert lost.detail  # carries the OS error text
        take(gen, state_is(Link.RECONNECTING), sink=seen)
        # re-plug as a different pty behind the same path
        m2, s2 = new_pty()
        link_to(dev, os.ttyname(s2))
        n_streaming = sum(1 for it in seen if type(it) is LinkEvent and it.state == Link.STREAMING)
        take(gen, lambda it: type(it) is LinkEvent and it.state == Link.STREAMING, sink=seen)
        assert n_streaming == 1
        os.write(m2, RMC)
        got = b""
        while not got.endswith(RMC):
            got += take(gen, lambda it: type(it) is Chunk, sink=seen).data
        assert got == RMC
        src.write(b"$PXXX,RESET*00\r\n")  # bytes reach the device side
        assert os.read(m2, 100).startswith(b"$PXXX")
        gen.close()
        os.close(s2)
        os.close(m2)
    finally:
        stop.set()
        guard.cancel()
    data = b"".join(it.data for it in seen if type(it) is Chunk)
    assert data == GGA + RMC  # every byte delivered, in order, nothing doubled


def test_autobaud_locks_on_first_rate_with_valid_checksums(tmp_path) -> None:
    m, s = new_pty()
    src = SerialSource(os.ttyname(s), baud="auto", probe_s=0.3)
    stop = threading.Event()
    guard = threading.Timer(20, stop.set)
    guard.start()
    seen: list = []
    written = b""
    try:
        gen = src.items(stop)
        for item in gen:
            seen.append(item)
            if type(item) is LinkEvent and item.detail.startswith("probing"):
                # garbage and bad checksums while probing 4800 and 9600; valid lines at 19200
                if "19200" in item.detail:
                    out = b"\x00\xfe~noise\r\n" + GGA + RMC + GGA
                else:
                    out = b"\xff\x13garbage" + BAD + BAD + BAD
                os.write(m, out)
                written += out
            if type(item) is LinkEvent and item.state == Link.STREAMING:
                break
        # drain whatever is still in flight so the byte comparison is complete
        data = b"".join(it.data for it in seen if type(it) is Chunk)
        while len(data) < len(written):
            data += take(gen, lambda it: type(it) is Chunk).data
        gen.close()
    finally:
        stop.set()
        guard.cancel()
        os.close(s)
        os.close(m)
    assert src.locked_baud == 19200
    assert seen[-1].detail.endswith("locked at 19200 baud")
    assert data == written  # probing bytes are received bytes: all delivered for the recorder


def test_nonexistent_device_fails_fast_but_serial_prefix_waits(tmp_path) -> None:
    missing = str(tmp_path / "ttyNOPE")
    with pytest.raises(SourceError, match="no such device"):
        open_source("/dev/livefix-no-such-tty")
    src = open_source("serial:" + missing, baud=4800)
    assert "No such file" in (src.probe() or "")
    stop = threading.Event()
    gen = src.items(stop)
    assert next(gen).state == Link.CONNECTING
    lost = next(gen)
    assert lost.state == Link.LOST and "No such file" in lost.detail
    assert next(gen).state == Link.RECONNECTING
    stop.set()
    assert list(gen) == []  # stop ends the backoff wait at once


def test_bad_baud_is_a_clear_error() -> None:
    with pytest.raises(SourceError, match="bad baud"):
        SerialSource("/dev/null", baud="fast")


def test_permission_denied_is_reported_and_retried(tmp_path) -> None:
    dev = tmp_path / "locked"
    dev.write_bytes(b"")
    dev.chmod(0)
    tmp_path.chmod(0o755)
    code = (
        "import threading,sys\n"
        "from livefix.sources.serial_port import SerialSource\n"
        f"s=SerialSource({str(dev)!r}, baud=9600)\n"
        "print(s.probe())\n"
        "g=s.items(threading.Event()); next(g); print(next(g).detail); print(next(g).state)\n"
    )
    if os.geteuid() == 0:
        # root ignores file modes: run the check as an unprivileged user when that is possible
        try:
            out = subprocess.run([sys.executable, "-c", code], user=65534, capture_output=True,
                                 text=True, timeout=30, cwd=os.getcwd())
        except (PermissionError, OSError) as exc:
            pytest.skip(f"cannot drop privileges here: {exc}")
        if "No module named" in out.stderr or "Permission denied: '/" in out.stderr[:200]:
            pytest.skip("the unprivileged user cannot run this interpreter")
    else:
        out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=30)
    lines = out.stdout.splitlines()
    assert out.returncode == 0, out.stderr
    assert "Permission denied" in lines[0]
    assert "Permission denied" in lines[1]
    assert lines[2] == Link.RECONNECTING


def test_autobaud_probes_again_when_the_receiver_changes_rate(tmp_path) -> None:
    """Locked at one rate, then only undecodable bytes (what a rate change looks like on the wire):
    the source says so and probes again instead of counting junk for ever."""
    m, s = new_pty()
    src = SerialSource(os.ttyname(s), baud="auto", probe_s=0.3, relock_s=0.6)
    stop = threading.Event()
    guard = threading.Timer(20, stop.set)
    guard.start()
    try:
        gen = src.items(stop)
        probes = 0
        for item in gen:
            if type(item) is LinkEvent and item.detail.startswith("probing"):
                probes += 1
                os.write(m, GGA + RMC + GGA)  # the first rate tried locks
            if type(item) is LinkEvent and item.state == Link.STREAMING:
                break
        noise = bytes(range(128, 256)) * 8  # 1 KiB with no line of valid NMEA
        end = time.monotonic() + 10
        relocked = None
        os.write(m, noise)
        for item in gen:
            if type(item) is LinkEvent and "probing again" in item.detail:
                relocked = item
                break
            if type(item) is Chunk:
                os.write(m, noise)  # keep the noise coming while the source reads
            assert time.monotonic() < end
        gen.close()
    finally:
        stop.set()
        guard.cancel()
        os.close(s)
        os.close(m)
    assert relocked is not None and relocked.state == Link.CONNECTING
