"""Shared helpers for the reliability tests: NMEA building, simulator bytes, loopback servers.

Everything here is real I/O (loopback sockets on 127.0.0.1, files, subprocesses); nothing of our
own is mocked. Loops are bounded by counts or deadlines.
"""

from __future__ import annotations

import functools
import os
import socket
import subprocess
import sys
import threading
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
PY = sys.executable
ENV = {**os.environ, "PYTHONPATH": str(ROOT)}

# Public example sentences (docs/sources.md#example-sentences).
GGA = b"$GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,*47"
RMC = b"$GPRMC,123519,A,4807.038,N,01131.000,E,022.4,084.4,230394,003.1,W*6A"
GSV = b"$GPGSV,2,1,08,01,40,083,46,02,17,308,41,12,07,344,39,14,22,228,45*75"


def cs(body: str) -> int:
    """NMEA 0183 checksum: XOR of the characters between '$' and '*'."""
    x = 0
    for ch in body.encode("utf-8"):
        x ^= ch
    return x


def line(body: str) -> bytes:
    """'GPGGA,...' -> b'$GPGGA,...*hh' (no terminator)."""
    return f"${body}*{cs(body):02X}".encode()


@functools.lru_cache(maxsize=4)
def sim_epochs(rate_hz: float = 20, seconds: float = 120, seed: int = 1) -> tuple[tuple[float, bytes], ...]:
    """(t, bytes) per epoch from our simulator (invented site), deterministic for a seed."""
    from livefix.sim.receiver import SimReceiver
    from livefix.sim.scenario import Scenario

    rx = SimReceiver(Scenario.load("rooftop"), rate_hz=rate_hz, seed=seed)
    return tuple(rx.epochs(seconds))


@functools.lru_cache(maxsize=1)
def sim_lines() -> tuple[bytes, ...]:
    """Distinct valid sentences of a steady simulated run (fix, all sentence types)."""
    out: list[bytes] = []
    for _, data in sim_epochs(20, 110)[2000:2040]:
        out += [ln for ln in data.split(b"\r\n") if ln]
    return tuple(dict.fromkeys(out))


def listener() -> socket.socket:
    srv = socket.socket()
    srv.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
    srv.bind(("127.0.0.1", 0))
    srv.listen(8)
    srv.settimeout(10)
    return srv


def free_port() -> int:
    s = socket.socket()
    s.bind(("127.0.0.1", 0))
    port = s.getsockname()[1]
    s.close()
    return port


class PacedServer:
    """A loopback server that sends simulator epochs at their times to each accepted client,
    keeping a log of (host monotonic time after send, total bytes sent) per connection."""

    def __init__(self, epochs: tuple[tuple[float, bytes], ...]) -> None:
        self.epochs = epochs
        self.srv = listener()
        self.port = self.srv.getsockname()[1]
        self.stop = threading.Event()
        self.conns: list[tuple[bytearray, list[tuple[float, int]]]] = []
        self.accepted = threading.Event()
        self._thr = threading.Thread(target=self._run, daemon=True)
        self._thr.start()

    def _run(self) -> None:
        self.srv.settimeout(0.2)
        while not self.stop.is_set():
            try:
                c, _ = self.srv.accept()
            except OSError:
                continue
            sent, log = bytearray(), []
            self.conns.append((sent, log))
            threading.Thread(target=self._pump, args=(c, sent, log), daemon=True).start()
            self.accepted.set()

    def _pump(self, c: socket.socket, sent: bytearray, log: list[tuple[float, int]]) -> None:
        t0 = time.monotonic()
        try:
            for t, data in self.epochs:
                delay = t0 + t - time.monotonic()
                if delay > 0 and self.stop.wait(delay):
                    break
                c.sendall(data)
                sent += data
                log.append((time.monotonic(), len(sent)))
        except OSError:
            pass
        finally:
            c.close()

    def close(self) -> None:
        self.stop.set()
        self.srv.close()
        self._thr.join(2)


def run_cli(*args: str, timeout: float = 60, **kw) -> subprocess.CompletedProcess:  # noqa: ANN003
    return subprocess.run([PY, "-m", "livefix", *args], capture_output=True, text=True, timeout=timeout,
                          cwd=str(ROOT), env=ENV, **kw)
