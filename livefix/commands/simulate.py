"""`livefix simulate SCENARIO`: write the simulated receiver to a file, a loopback TCP server or a
pseudo-terminal. Files are written as fast as possible with simulated clocks (reproducible);
the server and the pseudo-terminal run in real time ×speed and accept restart commands."""

from __future__ import annotations

import argparse
import os
import selectors
import socket
import sys
import time
import tty
from collections.abc import Callable, Iterator
from pathlib import Path

from livefix.sim.dialects import DIALECTS
from livefix.sim.receiver import SimReceiver
from livefix.sim.scenario import Scenario, list_scenarios
from livefix.timefmt import parse_duration

PLAIN_SUFFIXES = (".nmea", ".txt", ".log")
CLIENT_BACKLOG_MAX = 512 * 1024  # a client this far behind is dropped, the others go on


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("scenario", help=f"built-in scenario ({', '.join(list_scenarios())}) or a .toml file")
    p.add_argument("--duration", default=None, help="run length, e.g. 90s, 10m, 24h "
                   "(default 10m for -o, endless otherwise)")
    p.add_argument("--rate", type=int, default=10, help="epochs per second, 1-20 (default 10)")
    p.add_argument("--seed", type=int, default=1, help="noise seed (default 1)")
    p.add_argument("--dialect", default=None, metavar="NAME[,NAME...]",
                   help="make the receiver speak like real ones do (a rate dialect overrides --rate): "
                   + ", ".join(DIALECTS))
    p.add_argument("--speed", type=float, default=1.0, help="time factor for --serve/--pty (default 1)")
    out = p.add_mutually_exclusive_group(required=True)
    out.add_argument("-o", "--output", metavar="FILE", help="write FILE (.nmea/.txt/.log plain NMEA, "
                     "else a livefix recording; .gz compresses)")
    out.add_argument("--serve", metavar="[HOST:]PORT", help="TCP server for many clients (default host 127.0.0.1)")
    out.add_argument("--pty", action="store_true", help="open a pseudo-terminal and print its path")


def run(args: argparse.Namespace) -> int:
    sc = Scenario.load(args.scenario)
    rx = SimReceiver(sc, rate_hz=args.rate, seed=args.seed, dialect=args.dialect)
    if args.speed <= 0:
        raise ValueError(f"--speed {args.speed}: must be positive")
    duration = parse_duration(args.duration) if args.duration else None
    if args.output:
        n = write_file(rx, Path(args.output), 600.0 if duration is None else duration)
        dialect = f", dialect {','.join(rx.dialects.names)}" if rx.dialects else ""
        print(f"wrote {args.output}: {n} bytes, {sc.name}, {rx.rate} Hz, seed {args.seed}{dialect}", file=sys.stderr)
        return 0
    if args.serve:
        return serve(rx, args.serve, duration, args.speed)
    return serve_pty(rx, duration, args.speed)


def write_file(rx: SimReceiver, path: Path, duration: float, compress: str | None = None) -> int:
    """Write `duration` seconds as fast as possible; returns payload bytes. Never overwrites.
    Recordings are gzip-compressed when `compress="gzip"` or the name ends in .gz."""
    name = path.name.lower()
    if name.endswith(PLAIN_SUFFIXES):
        total = 0
        with open(path, "xb") as f:
            for _t, data in rx.epochs(duration):
                f.write(data)
                total += len(data)
        return total
    from livefix.record.writer import Recorder
    from livefix.sources.base import Chunk, Link, LinkEvent

    start = rx.start_utc
    rec = Recorder(path, source=f"sim:{rx.sc.name}", compress="gzip" if name.endswith(".gz") else compress,
                   notes=f"simulated receiver: scenario {rx.sc.name}, {rx.rate} Hz, seed {rx.seed}"
                   + (f", dialect {','.join(rx.dialects.names)}" if rx.dialects else ""),
                   start_wall=start)
    total = 0
    try:
        rec.write(LinkEvent(0.0, start, Link.STREAMING, f"simulated receiver, scenario {rx.sc.name}"))
        for t, data in rx.epochs(duration):
            rec.write(Chunk(t, start + t, data))
            total += len(data)
        rec.write(LinkEvent(duration, start + duration, Link.ENDED, "end of simulated run"))
    finally:
        rec.close()
    if rec.error:
        raise OSError(rec.error)
    return total


def _paced(rx: SimReceiver, duration: float | None, speed: float,
           wait: Callable[[float], None]) -> Iterator[bytes]:
    """Epoch bytes at real time ×speed; `wait(seconds)` sleeps while serving I/O."""
    t0 = time.monotonic()
    for t, data in rx.epochs(duration):
        while (delay := t0 + t / speed - time.monotonic()) > 0:
            wait(delay)
        yield data


def _parse_hostport(text: str) -> tuple[str, int]:
    host, _, port = text.rpartition(":")
    host = host.strip("[]") or "127.0.0.1"
    try:
        num = int(port)
    except ValueError:
        raise ValueError(f"--serve {text!r}: use PORT or HOST:PORT") from None
    if not 0 <= num <= 65535:
        raise ValueError(f"--serve {text!r}: port out of range")
    return host, num


def serve(rx: SimReceiver, where: str, duration: float | None, speed: float) -> int:
    """One thread, one selector: accept clients, broadcast epochs, read restart commands."""
    host, port = _parse_hostport(where)
    srv = socket.create_server((host, port), family=socket.AF_INET6 if ":" in host else socket.AF_INET)
    srv.setblocking(False)
    sel = selectors.DefaultSelector()
    sel.register(srv, selectors.EVENT_READ, None)
    clients: dict[socket.socket, bytearray] = {}
    bound = srv.getsockname()
    print(f"serving sim:{rx.sc.name} on tcp://{bound[0]}:{bound[1]}", flush=True)

    def drop(c: socket.socket) -> None:
        clients.pop(c, None)
        sel.unregister(c)
        c.close()

    def pump(c: socket.socket) -> None:
        buf = clients[c]
        try:
            sent = c.send(buf)
            del buf[:sent]
        except BlockingIOError:
            pass
        except OSError:
            drop(c)
            return
        if len(buf) > CLIENT_BACKLOG_MAX:
            drop(c)

    def wait(timeout: float) -> None:
        for key, _ev in sel.select(timeout):
            if key.fileobj is srv:
                try:
                    c, _addr = srv.accept()
                except OSError:
                    continue
                c.setblocking(False)
                clients[c] = bytearray()
                sel.register(c, selectors.EVENT_READ, "client")
                continue
            c = key.fileobj
            try:
                data = c.recv(4096)
            except BlockingIOError:
                continue
            except OSError:
                data = b""
            if not data:
                drop(c)
            else:
                rx.command(data)

    try:
        for data in _paced(rx, duration, speed, wait):
            for c in list(clients):
                clients[c] += data
                pump(c)
    finally:
        for c in list(clients):
            drop(c)
        sel.close()
        srv.close()
    return 0


def serve_pty(rx: SimReceiver, duration: float | None, speed: float) -> int:
    """Write to a pseudo-terminal at real time; what the reader writes back may be a command."""
    master, slave = os.openpty()
    tty.setraw(slave)
    os.set_blocking(master, False)
    print(f"sim:{rx.sc.name} on {os.ttyname(slave)}", flush=True)
    sel = selectors.DefaultSelector()
    sel.register(master, selectors.EVENT_READ)
    dropped = 0

    def wait(timeout: float) -> None:
        if sel.select(timeout):
            try:
                rx.command(os.read(master, 4096))
            except (BlockingIOError, OSError):
                time.sleep(min(timeout, 0.05))

    try:
        for data in _paced(rx, duration, speed, wait):
            try:
                os.write(master, data)
            except BlockingIOError:  # nobody reads: the terminal buffer is full
                dropped += len(data)
    finally:
        sel.close()
        os.close(slave)
        os.close(master)
    if dropped:
        print(f"dropped {dropped} bytes nobody read", file=sys.stderr)
    return 0
