"""The sim as a Source and the `livefix simulate` command: files, loopback TCP server, pseudo-terminal."""

from __future__ import annotations

import os
import re
import select
import socket
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest
import serial

from livefix.cli import main
from livefix.record.reader import RecordingReader
from livefix.sim import Scenario, SimReceiver
from livefix.sources import Chunk, Link, LinkEvent, SourceError, open_source
from livefix.sources.sim import SimSource

ROOT = Path(__file__).resolve().parents[2]


def test_fast_source_uses_simulated_clocks():
    src = SimSource("soak", rate_hz=10, speed=0, seed=1, duration=300)
    items = list(src.items(threading.Event()))
    assert isinstance(items[0], LinkEvent) and items[0].state == Link.STREAMING
    assert isinstance(items[-1], LinkEvent) and items[-1].state == Link.ENDED and items[-1].mono == 300
    chunks = [i for i in items if isinstance(i, Chunk)]
    start = Scenario.load("soak").start_utc
    assert all(c.wall == pytest.approx(start + c.mono) for c in chunks)
    ref = b"".join(d for _t, d in SimReceiver(Scenario.load("soak"), 10, seed=1).epochs(300))
    assert b"".join(c.data for c in chunks) == ref  # lossless and deterministic
    gaps = [b.mono - a.mono for a, b in zip(chunks, chunks[1:], strict=False)]
    assert max(gaps) == pytest.approx(8.1)  # the scripted 8 s stall shows as a gap in stream time


def test_open_source_sim_and_errors():
    src = open_source("sim:rooftop", speed=0)
    assert src.name == "sim:rooftop" and not src.finite
    with pytest.raises(SourceError, match="unknown scenario"):
        open_source("sim:nowhere")
    with pytest.raises(SourceError, match="needs a scenario"):
        open_source("sim:")


def test_live_source_paces_and_takes_restart_commands():
    src = SimSource("rooftop", rate_hz=10, speed=40.0, seed=1, duration=40)
    stop = threading.Event()
    acks, monos = 0, []
    for item in src.items(stop):
        if isinstance(item, Chunk):
            monos.append(item.mono)
            if len(monos) == 300:  # 30 s simulated
                src.write(b"$PLFX,RESET,WARM\r\n")
            acks += item.data.count(b"$PLFX,ACK,RESET,WARM")
    assert acks == 1 and monos == sorted(monos)
    stop.set()


def test_stop_ends_a_live_source_promptly():
    src = SimSource("rooftop", rate_hz=1, speed=1.0)
    stop = threading.Event()
    it = src.items(stop)
    next(it)
    stop.set()
    assert list(it) == []  # returns at once when stop is set, without waiting for the next epoch


def test_simulate_writes_plain_and_recording(tmp_path, capsys):
    plain, rec = tmp_path / "a.nmea", tmp_path / "a.lfr"
    assert main(["simulate", "building", "--duration", "45s", "--rate", "5", "-o", str(plain)]) == 0
    assert main(["simulate", "building", "--duration", "45s", "--rate", "5", "-o", str(rec)]) == 0
    r = RecordingReader(rec)
    items = list(r.items())
    assert r.damage is None and r.header["source"] == "sim:building"
    assert b"".join(i.data for i in items if isinstance(i, Chunk)) == plain.read_bytes()
    assert main(["simulate", "building", "--duration", "5s", "-o", str(plain)]) == 2  # never overwrites
    assert "livefix simulate:" in capsys.readouterr().err
    assert main(["simulate", "building", "--rate", "99", "-o", str(tmp_path / "b.nmea")]) == 2


def _spawn(*args: str) -> tuple[subprocess.Popen, str]:
    p = subprocess.Popen([sys.executable, "-m", "livefix", "simulate", *args], cwd=ROOT,
                         stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    ready, _, _ = select.select([p.stdout], [], [], 30)
    assert ready, "simulator did not start"
    return p, p.stdout.readline().strip()


def _read_until(read, needle: bytes, limit_s: float = 30.0) -> bytes:  # noqa: ANN001
    got = b""
    end = time.monotonic() + limit_s  # a bound only; nothing asserts on speed
    while needle not in got and time.monotonic() < end:
        got += read()
    return got


def test_serve_many_clients_and_commands():
    p, line = _spawn("rooftop", "--serve", "127.0.0.1:0", "--speed", "10", "--duration", "10m")
    try:
        port = int(re.search(r"tcp://127\.0\.0\.1:(\d+)", line).group(1))
        a = socket.create_connection(("127.0.0.1", port), timeout=10)
        b = socket.create_connection(("127.0.0.1", port), timeout=10)
        assert b"$GNGGA" in _read_until(lambda: a.recv(4096), b"$GNGGA")
        assert b"$GNGGA" in _read_until(lambda: b.recv(4096), b"$GNGGA")
        b.sendall(b"$PLFX,RESET,HOT\r\n")
        assert b"$PLFX,ACK,RESET,HOT" in _read_until(lambda: a.recv(4096), b"$PLFX,ACK,RESET,HOT")
        a.close()
        b.close()
    finally:
        p.terminate()
        p.wait(10)


def test_pty_serves_a_serial_reader():
    p, line = _spawn("soak", "--pty", "--speed", "10", "--duration", "10m")
    try:
        path = line.rsplit(" on ", 1)[1]
        assert os.path.exists(path)
        port = serial.Serial(path, timeout=0.5)
        assert b"GGA" in _read_until(lambda: port.read(4096), b"GGA")
        port.write(b"$PLFX,RESET,COLD\r\n")
        assert b"$PLFX,ACK,RESET,COLD" in _read_until(lambda: port.read(4096), b"$PLFX,ACK,RESET,COLD")
        port.close()
    finally:
        p.terminate()
        p.wait(10)
