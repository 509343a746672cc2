"""`livefix record` and `livefix replay` as real subprocesses: loopback TCP and stdin in, files out,
the summary checked against pynmeagps parsing the same bytes."""

from __future__ import annotations

import json
import os
import socket
import subprocess
import sys
import threading
from collections import Counter

from pynmeagps import NMEAReader

from livefix.record.reader import RecordingReader
from livefix.sources.base import Chunk, Marker


def nmea(body: str) -> bytes:
    cs = 0
    for ch in body.encode():
        cs ^= ch  # NMEA 0183 checksum: XOR between $ and * (docs/sources.md#checksum)
    return f"${body}*{cs:02X}\r\n".encode()


def stream(n: int = 20) -> bytes:
    out = b"\x00\xffboot noise\r\n"
    for i in range(n):
        t = f"1200{i:02d}.00"
        out += nmea(f"GPGGA,{t},4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,")
        out += nmea(f"GPRMC,{t},A,4807.038,N,01131.000,E,0.0,0.0,020125,,,A")
        out += nmea("GPGSA,A,3,04,05,,09,12,,,24,,,,,2.5,1.3,2.1")
        if i == 5:
            out += b"$GPGGA,120005.00,4807.038,N*00\r\n"  # bad checksum
    return out


def livefix(*args: str, stdin: bytes | None = None, timeout: float = 60) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "livefix", *args], input=stdin, capture_output=True,
                          timeout=timeout, cwd=os.getcwd())


def test_record_tcp_for_a_duration_is_byte_exact(tmp_path) -> None:
    data = stream()
    srv = socket.socket()
    srv.bind(("127.0.0.1", 0))
    srv.listen(1)
    srv.settimeout(20)
    done = threading.Event()

    def serve() -> None:
        c, _ = srv.accept()
        c.sendall(data[:100])
        c.sendall(data[100:])
        done.wait(20)
        c.close()

    threading.Thread(target=serve, daemon=True).start()
    out = tmp_path / "site.lfr"
    res = livefix("record", f"tcp://127.0.0.1:{srv.getsockname()[1]}", "-o", str(out), "--duration", "1.5",
                  "--note", "mast top, north")
    done.set()
    srv.close()
    assert res.returncode == 0, res.stderr
    r = RecordingReader(out)
    items = list(r.items())
    assert r.header["source"].startswith("tcp://127.0.0.1:") and r.header["notes"] == "mast top, north"
    assert b"".join(it.data for it in items if type(it) is Chunk) == data
    assert any(type(it) is Marker and it.note == "mast top, north" for it in items)
    assert r.clean and r.damage is None


def test_record_stdin_then_replay_summary_matches_pynmeagps(tmp_path) -> None:
    data = stream(30)
    out = tmp_path / "bench.lfr.gz"
    res = livefix("record", "-", "-o", str(out), "--gzip", stdin=data)
    assert res.returncode == 0, res.stderr
    assert b"".join(it.data for it in RecordingReader(out).items() if type(it) is Chunk) == data
    res = livefix("replay", str(out), "--headless", "--json")
    assert res.returncode == 0, res.stderr
    s = json.loads(res.stdout)
    # reference: pynmeagps parses each line; bad checksums raise, non-NMEA lines give None
    ref, bad = Counter(), 0
    for line in data.split(b"\r\n"):
        if not line.startswith(b"$"):
            continue
        try:
            msg = NMEAReader.parse(line + b"\r\n")
        except Exception:  # noqa: BLE001 - NMEAParseError for the bad checksum
            bad += 1
            continue
        ref[msg.msgID] += 1
    assert s["by_type"] == dict(ref)
    assert s["bad_checksum"] == bad == 1
    assert s["damage"] is None
    if "epochs" in s and s["epochs"] is not None:
        assert s["epochs"] == 30


def test_replay_damaged_recording_reports_where(tmp_path) -> None:
    data = stream(5)
    full = tmp_path / "full.lfr"
    livefix("record", "-", "-o", str(full), stdin=data)
    raw = full.read_bytes()
    cut = tmp_path / "cut.lfr"
    cut.write_bytes(raw[: raw.index(b"@D ") + 20])
    res = livefix("replay", str(cut), "--headless")
    assert res.returncode == 0, res.stderr
    assert b"damage: cut.lfr: stopped at record" in res.stdout and b"truncated" in res.stdout


def test_errors_exit_2_with_one_line(tmp_path) -> None:
    existing = tmp_path / "taken.lfr"
    existing.write_bytes(b"")
    cases = [
        ("record", "tcp://127.0.0.1", "-o", str(tmp_path / "a.lfr")),
        ("record", str(tmp_path / "missing.nmea"), "-o", str(tmp_path / "b.lfr")),
        ("record", "-", "-o", str(existing)),
        ("record", "-", "-o", str(tmp_path / "c.lfr"), "--rotate", "soon"),
        ("replay", str(tmp_path / "missing.lfr"), "--headless"),
        ("replay", str(existing), "--headless", "--speed", "fast"),
    ]
    for args in cases:
        res = livefix(*args, stdin=b"")
        assert res.returncode == 2, (args, res)
        lines = res.stderr.decode().strip().splitlines()
        assert len(lines) == 1 and lines[0].startswith("livefix "), (args, lines)
    assert existing.read_bytes() == b""


def test_replay_summary_counts_the_recorded_end_once(tmp_path) -> None:  # noqa: ANN001
    # issue 15 item 8: a recording that already holds its source's "ended" event must not be counted
    # twice in the summary (the simulator writes exactly one, livefix/commands/simulate.py)
    import subprocess
    import sys

    out = tmp_path / "s.lfr"
    subprocess.run([sys.executable, "-m", "livefix", "simulate", "rooftop", "--duration", "5s", "-o", str(out)],
                   check=True, capture_output=True, timeout=120)
    r = subprocess.run([sys.executable, "-m", "livefix", "replay", "--headless", str(out)],
                       capture_output=True, text=True, timeout=120)
    text = r.stdout + r.stderr
    assert "ended 1" in text and "ended 2" not in text, text
