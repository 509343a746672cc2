"""Builders for the conformance fixtures: NMEA sentences with their checksums, binary frames, and
a run of the public pipeline (the same source and Pipeline as `livefix report`) that keeps every
epoch and event. All fixture content is invented."""

from __future__ import annotations

import re
import threading
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from livefix.analysis.config import AnalysisConfig
from livefix.analysis.engine import Analyzer
from livefix.pipeline import Pipeline
from livefix.sources import open_source
from livefix.sources.base import Chunk


def nmea(body: str) -> bytes:
    """'$' + body + '*' + checksum + CRLF. NMEA 0183: the checksum is the XOR of every byte between
    '$' and '*', written as two upper-case hex digits."""
    x = 0
    for b in body.encode():
        x ^= b
    return f"${body}*{x:02X}\r\n".encode()


def hms(t: float) -> str:
    h, rem = divmod(t, 3600)
    m, s = divmod(rem, 60)
    return f"{int(h):02d}{int(m):02d}{s:05.2f}"


T0 = 12 * 3600.0  # 12:00:00 UTC
POS = "4807.0380,N,01131.0000,E"  # an invented place


def gga(t: float, q: int = 1, talker: str = "GP", alt: str = "101.5", sep: str = "45.2") -> bytes:
    return nmea(f"{talker}GGA,{hms(t)},{POS},{q},08,0.9,{alt},M,{sep},M,,")


def rmc(t: float, date: str = "150326", status: str = "A", mode: str = "A", talker: str = "GP") -> bytes:
    return nmea(f"{talker}RMC,{hms(t)},{status},{POS},0.0,0.0,{date},,,{mode}")


def gsa(ids: list[str], talker: str = "GN", sysid: str | None = None) -> bytes:
    cells = (ids + [""] * 12)[:12]
    tail = f",{sysid}" if sysid is not None else ""
    return nmea(f"{talker}GSA,A,3,{','.join(cells)},1.8,0.9,1.5{tail}")


def gsv(talker: str, total: int, part: int, in_view: int, sats: list[tuple[str, int, int, int]],
        signal: str | None = None) -> bytes:
    cells = ",".join(f"{n},{el:02d},{az:03d},{cn0:02d}" for n, el, az, cn0 in sats)
    tail = f",{signal}" if signal is not None else ""
    return nmea(f"{talker}GSV,{total},{part},{in_view:02d},{cells}{tail}")


@dataclass
class Run:
    epochs: list
    events: list
    analysis: dict[str, Any]


class Recorder:
    """The real Analyzer, keeping a copy of every epoch and event the pipeline hands it."""

    def __init__(self) -> None:
        self.real = Analyzer(AnalysisConfig())
        self.epochs: list = []
        self.events: list = []

    def on_epoch(self, ep) -> None:
        self.epochs.append(ep)
        self.real.on_epoch(ep)

    def on_event(self, ev) -> None:
        self.events.append(ev)
        self.real.on_event(ev)

    def __getattr__(self, name: str) -> Any:
        return getattr(self.real, name)


def _finish(p: Pipeline, rec: Recorder) -> Run:
    p.finish()
    snap = p.snapshot()
    assert snap.analysis["internal_errors"] == 0  # livefix's own errors stay zero (brief)
    return Run(rec.epochs, rec.events, snap.analysis)


def run_plain(tmp_path: Path, lines: list[bytes], name: str = "fixture.nmea") -> Run:
    """A plain NMEA log file through the same source and pipeline as `livefix report`."""
    path = tmp_path / name
    path.write_bytes(b"".join(lines))
    src = open_source(str(path), speed=None)
    rec = Recorder()
    p = Pipeline(AnalysisConfig(), src.name, analyzer=rec)
    for item in src.items(threading.Event()):
        p.feed(item)
    src.close()
    return _finish(p, rec)


def run_live(lines: list[bytes], wall0: float, step_s: float = 0.05) -> Run:
    """Lines as a live source delivers them: one chunk each, stamped by the host clock."""
    rec = Recorder()
    p = Pipeline(AnalysisConfig(), "fixture", analyzer=rec)
    for i, raw in enumerate(lines):
        p.feed(Chunk(100.0 + i * step_s, wall0 + i * step_s, raw))
    return _finish(p, rec)


def bursts(n: int, make, t0: float = T0, dt_s: float = 1.0) -> list[bytes]:
    out: list[bytes] = []
    for k in range(n):
        out += make(t0 + k * dt_s)
    return out


_ISO = re.compile(r"^(\d{4}-\d{2}-\d{2})T")


def iso_dates(node) -> set[str]:
    """Every date of an ISO 8601 date-time anywhere in a snapshot."""
    if isinstance(node, dict):
        return set().union(set(), *(iso_dates(v) for v in node.values()))
    if isinstance(node, list):
        return set().union(set(), *(iso_dates(v) for v in node))
    if isinstance(node, str) and (m := _ISO.match(node)):
        return {m.group(1)}
    return set()


def used(run: Run) -> set[tuple[str, int]]:
    return set(run.epochs[-1].used_prns)


def seen(run: Run) -> set[tuple[str, int, str]]:
    return {(s.system, s.prn, s.signal) for s in run.epochs[-1].sats}


def crc24q(data: bytes) -> int:
    """CRC-24Q of RTCM 10403 (polynomial 0x1864CFB, initial value 0; from memory)."""
    crc = 0
    for b in data:
        crc ^= b << 16
        for _ in range(8):
            crc <<= 1
            if crc & 0x1000000:
                crc ^= 0x1864CFB
    return crc & 0xFFFFFF


def rtcm3(payload: bytes) -> bytes:
    """RTCM 10403 transport frame: 0xD3, 6 reserved zero bits + 10-bit length, payload, CRC-24Q."""
    head = bytes([0xD3, len(payload) >> 8 & 0x03, len(payload) & 0xFF])
    crc = crc24q(head + payload)
    return head + payload + crc.to_bytes(3, "big")


def b562_frame(cls: int, mid: int, payload: bytes) -> bytes:
    """0xB5 0x62 frame: class, id, little-endian length, payload, 8-bit Fletcher sum (common practice)."""
    body = bytes([cls, mid]) + len(payload).to_bytes(2, "little") + payload
    a = b = 0
    for x in body:
        a = (a + x) & 0xFF
        b = (b + a) & 0xFF
    return b"\xb5\x62" + body + bytes([a, b])
