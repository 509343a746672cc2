"""Every bad input at start: one clear line on stderr and the right exit status, through the real
command line (`python -m livefix` in a subprocess). Exit status 0 pass, 1 fail, 2 could not run
(README "Headless checks"). One row per bad input: argv, expected status, phrase in stderr.

Real parts only: loopback sockets on 127.0.0.1, pseudo-terminals, real files. Each run has a
20 s subprocess timeout while asking for --duration 60s, which proves "no retry for the whole run"
without asserting on wall time.
"""

from __future__ import annotations

import os
import random
import socket
import subprocess
import sys
import threading
import tty
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
TIMEOUT_S = 20.0  # generous bound; every command below asks for 60 s or more


def nmea(body: str, *, good: bool = True) -> bytes:
    """One sentence with its NMEA 0183 checksum (XOR of the bytes between '$' and '*', two
    uppercase hex digits); good=False writes the complement, so the checksum is wrong."""
    cs = 0
    for b in body.encode("ascii"):
        cs ^= b
    return f"${body}*{cs if good else cs ^ 0xFF:02X}\r\n".encode("ascii")


# A fix at 12:35:19 UTC with 8 satellites, hand-written (field layout from NMEA 0183 4.11 GGA/RMC).
GGA = "GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,"
RMC = "GPRMC,123519,A,4807.038,N,01131.000,E,022.4,084.4,230394,003.1,W"


def run(*argv: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "livefix", *argv], capture_output=True, text=True,
                          cwd=ROOT, timeout=TIMEOUT_S, stdin=subprocess.DEVNULL,
                          env={**os.environ, "PYTHONUNBUFFERED": "1", "XDG_CONFIG_HOME": str(ROOT / ".no-config")})


def refused_port() -> int:
    """A loopback port nobody listens on (bound, then closed: the kernel refuses connections)."""
    s = socket.socket()
    s.bind(("127.0.0.1", 0))
    port = s.getsockname()[1]
    s.close()
    return port


# -- feeders: what stands on the other end of the wire during one row -----------------------------
@contextmanager
def tcp_feed(payload: Callable[[int], bytes], once: bool = False) -> Iterator[str]:
    """A loopback server that sends payload(k) for k = 0, 1, ... every 50 ms to each client.
    once: accept one client, send a few sentences, hang up and stop listening."""
    srv = socket.socket()
    srv.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
    srv.bind(("127.0.0.1", 0))
    srv.listen(2)
    srv.settimeout(0.2)
    done = threading.Event()

    def serve() -> None:
        while not done.is_set():
            try:
                conn, _ = srv.accept()
            except OSError:
                continue
            with conn:
                for k in range(5 if once else 400):
                    if done.wait(0.05):
                        break
                    try:
                        conn.sendall(payload(k))
                    except OSError:
                        break
            if once:
                srv.close()
                return

    t = threading.Thread(target=serve, daemon=True)
    t.start()
    try:
        yield f"tcp://127.0.0.1:{srv.getsockname()[1]}"
    finally:
        done.set()
        t.join(5)
        srv.close()


@contextmanager
def pty_feed(payload: Callable[[int], bytes]) -> Iterator[str]:
    """A pseudo-terminal whose far end writes payload(k) every 50 ms (a receiver on a serial line)."""
    m, s = os.openpty()
    tty.setraw(s)
    done = threading.Event()

    def feed() -> None:
        k = 0
        while not done.wait(0.05):
            try:
                os.write(m, payload(k))
            except OSError:
                return
            k += 1

    t = threading.Thread(target=feed, daemon=True)
    t.start()
    try:
        yield os.ttyname(s)
    finally:
        done.set()
        t.join(5)
        os.close(s)
        os.close(m)


def junk(k: int) -> bytes:
    """What a wrong baud rate or a binary protocol looks like: seeded random bytes, no '$'."""
    return random.Random(k).randbytes(200).replace(b"$", b"\xa4")


@pytest.fixture(scope="module")
def files(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    d = tmp_path_factory.mktemp("bad-input")
    out = {
        "empty": b"",
        "binary": random.Random(15).randbytes(2000).replace(b"$", b"\xa4"),  # 2000 bytes by construction
        "text": b"hello\nthis is a shopping list\n",  # 2 lines (hand count)
        "badsum": b"".join(nmea(GGA, good=False) for _ in range(3)),  # 3 lines, every checksum wrong
        "mixed": random.Random(7).randbytes(300).replace(b"$", b"\xa4") + b"\r\n" + nmea(GGA) + nmea(RMC),
    }
    paths = {}
    for name, data in out.items():
        p = d / f"{name}.log"
        p.write_bytes(data)
        paths[name] = p
    prof = d / "unknown-metric.toml"
    prof.write_text('[profile]\nname = "x"\n[[threshold]]\nname = "a"\nmetric = "no_such.metric"\n'
                    'op = "<="\nlimit = 1\n', encoding="utf-8")
    paths["unknown_metric"] = prof
    prof = d / "unknown-key.toml"
    prof.write_text('[profile]\nname = "x"\n[[threshold]]\nname = "a"\nmetric = "fix.longest_outage_s"\n'
                    'op = "<="\nlimit = 1\ncolour = "red"\n', encoding="utf-8")
    paths["unknown_key"] = prof
    prof = d / "unknown-unit.toml"
    prof.write_text('[profile]\nname = "x"\n[[threshold]]\nname = "a"\nmetric = "fix.longest_outage_s"\n'
                    'op = "<="\nlimit = 1\nunit = "furlongs"\n', encoding="utf-8")
    paths["unknown_unit"] = prof
    from livefix.record.writer import Recorder
    from livefix.sources.base import Link, LinkEvent

    rec = d / "no-data.lfr"  # a recording of a source that never sent a byte: link events only
    r = Recorder(rec, source="tcp://127.0.0.1:1")
    for i, state in enumerate((Link.CONNECTING, Link.LOST, Link.RECONNECTING)):
        r.write(LinkEvent(10.0 + i, 1.7e9 + i, state, "refused"))
    r.close()
    paths["no_data_rec"] = rec
    return paths


# (id, argv with {placeholders}, feeder, expected exit status, phrase expected in stderr)
# Placeholders: {refused} a refused loopback port, {missing} a device path that does not exist,
# {src} the feeder's address, {FILE:name} a fixture file, {out} a fresh output path.
ROWS = [
    ("record-tcp-refused", "record tcp://127.0.0.1:{refused} -o {out} --duration 60s", None, 2, "connection refused"),
    ("record-tcp-unknown-host", "record tcp://no-such-host.invalid:5000 -o {out} --duration 60s", None, 2,
     "cannot resolve no-such-host.invalid"),
    ("check-tcp-refused", "check tcp://127.0.0.1:{refused} --duration 60s", None, 2, "connection refused"),
    ("check-tcp-unknown-host", "check tcp://no-such-host.invalid:5000 --duration 60s", None, 2,
     "cannot resolve no-such-host.invalid"),
    ("watch-tcp-refused", "watch tcp://127.0.0.1:{refused}", None, 2, "connection refused"),
    ("watch-tcp-unknown-host", "watch tcp://no-such-host.invalid:5000", None, 2, "cannot resolve"),
    ("record-dev-missing", "record /dev/livefix-no-such-tty -o {out} --duration 60s", None, 2, "no such device"),
    ("record-serial-missing", "record serial:{missing} -o {out} --duration 60s", None, 2,
     "No such file or directory"),  # os.strerror(ENOENT), POSIX wording
    ("check-serial-missing", "check serial:{missing} --duration 60s", None, 2, "No such file or directory"),
    ("watch-serial-missing", "watch serial:{missing}", None, 2, "No such file or directory"),
    ("report-binary", "report {FILE:binary} --json", None, 2, "2000 bytes of binary data"),
    ("report-empty", "report {FILE:empty} --json", None, 2, "is empty"),
    ("report-text", "report {FILE:text} --json", None, 2, "text in 2 lines, none of them NMEA"),
    ("report-bad-checksums", "report {FILE:badsum} --json", None, 2, "3 sentence-shaped lines, every checksum wrong"),
    ("report-link-events-only", "report {FILE:no_data_rec} --json", None, 2, "holds no received bytes"),
    ("check-binary", "check {FILE:binary}", None, 2, "2000 bytes of binary data"),
    ("check-empty", "check {FILE:empty}", None, 2, "is empty"),
    ("replay-binary", "replay --headless {FILE:binary}", None, 2, "2000 bytes of binary data"),
    ("replay-empty", "replay --headless {FILE:empty}", None, 2, "is empty"),
    ("replay-ui-binary", "replay {FILE:binary}", None, 2, "no NMEA sentences"),
    ("profile-unknown-key", "report {FILE:mixed} --json --profile {FILE:unknown_key}", None, 2, "unknown key 'colour'"),
    ("profile-unknown-metric", "report {FILE:mixed} --json --profile {FILE:unknown_metric}", None, 2,
     "no_such.metric"),
    ("profile-unknown-unit", "report {FILE:mixed} --json --profile {FILE:unknown_unit}", None, 2, "furlongs"),
    # live bytes that never hold a sentence: named after NO_NMEA_S (5 s) of stream time
    ("record-tcp-binary", "record {src} -o {out} --duration 60s", ("tcp", junk), 2, "wrong port, or a binary protocol?"),
    ("check-tcp-binary", "check {src} --duration 60s", ("tcp", junk), 2, "but no NMEA sentence"),
    ("record-pty-wrong-baud", "record {src} --baud 9600 -o {out} --duration 60s", ("pty", junk), 2, "wrong baud rate?"),
    # still fine: NMEA after junk, --wait, and a source that answered once and then went away
    ("report-nmea-with-junk", "report {FILE:mixed} --json", None, 0, ""),
    ("replay-nmea-with-junk", "replay --headless {FILE:mixed}", None, 0, ""),
    ("record-wait-keeps-trying", "record tcp://127.0.0.1:{refused} -o {out} --duration 2s --wait", None, 0,
     "link reconnecting"),
    ("record-lost-after-connect-retries", "record {src} -o {out} --duration 3s", ("tcp-once", lambda k: nmea(GGA)),
     0, "link reconnecting"),
]


def _expand(argv: str, files: dict[str, Path], tmp: Path, src: str) -> list[str]:
    out = []
    for word in argv.split():
        if word.startswith("{FILE:"):
            out.append(str(files[word[6:-1]]))
            continue
        out.append(word.format(refused=refused_port(), missing=tmp / "ttyNOPE", out=tmp / "out.lfr", src=src))
    return out


@contextmanager
def _feeder(spec: tuple[str, Callable[[int], bytes]] | None) -> Iterator[str]:
    if spec is None:
        yield ""
    elif spec[0] == "pty":
        with pty_feed(spec[1]) as dev:
            yield dev
    else:
        with tcp_feed(spec[1], once=spec[0] == "tcp-once") as addr:
            yield addr


@pytest.mark.parametrize("rid, argv, feeder, status, phrase", ROWS, ids=[
    r.values[0] if hasattr(r, "values") else r[0] for r in ROWS])
def test_bad_input_row(rid: str, argv: str, feeder, status: int, phrase: str,  # noqa: ANN001
                       files: dict[str, Path], tmp_path: Path) -> None:
    with _feeder(feeder) as src:
        proc = run(*_expand(argv, files, tmp_path, src))
    err = proc.stderr
    assert proc.returncode == status, (rid, proc.returncode, err[-800:])
    assert phrase in err, (rid, err[-800:])
    if status == 2:
        verb = argv.split()[0]
        last = [ln for ln in err.splitlines() if ln.startswith(f"livefix {verb}:")]
        assert len(last) == 1, err[-800:]  # exactly one line names the trouble
        assert "Traceback" not in err
    if argv.startswith("watch") or argv.startswith("replay {"):
        assert "\x1b[" not in proc.stdout  # the screen never opened


def test_nmea_after_junk_still_reports(files: dict[str, Path]) -> None:
    """A log with NMEA plus junk works as before: both sentences decoded (2, by construction)."""
    import json

    proc = run("report", str(files["mixed"]), "--json")
    assert proc.returncode == 0, proc.stderr
    analysis = json.loads(proc.stdout)
    assert analysis["internal_errors"] == 0
    stream = analysis["stream"]
    assert stream["by_type"] == {"GGA": 1, "RMC": 1}  # the fixture's two good sentences
    assert stream["junk_bytes"] > 0  # the junk is counted, not silently dropped
