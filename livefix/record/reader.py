"""RecordingReader: streams items back from a .lfr recording (plain, gzip, rotated set) or from
a plain NMEA log. Reads record by record with bounded memory; stops at the first damaged record
and says exactly where, so a crash-truncated file still gives everything up to its last flush.
"""

from __future__ import annotations

import io
import json
import os
import zlib
from collections.abc import Generator, Iterator
from pathlib import Path
from types import ModuleType

from livefix.corepick import built_core, pick_core
from livefix.items import Chunk, Item
from livefix.record import fmt
from livefix.record.plainlog import iter_plain

READ_BLOCK = 65536
SCAN_BLOCK = 262144  # the C scan's read size: ~40 epoch records of a 10 Hz receiver per call
MAX_PAYLOAD = 64 << 20  # a larger length field is damage, not data


class _GunzipRaw(io.RawIOBase):
    """Incremental gunzip that returns whatever decompresses, even from an unfinished stream."""

    def __init__(self, f: io.BufferedReader) -> None:
        self._f = f
        self._d = zlib.decompressobj(16 + zlib.MAX_WBITS)
        self._out = b""
        self.unfinished = False  # stream ended without its gzip trailer (recorder killed)
        self.corrupt: str | None = None
        self._eof = False

    def readable(self) -> bool:
        return True

    def readinto(self, b) -> int:  # noqa: ANN001
        while not self._out and not self._eof:
            raw = self._f.read(READ_BLOCK)
            if not raw:
                self._eof = True
                self.unfinished = not self._d.eof
                break
            try:
                self._out = self._d.decompress(raw)
                while self._d.eof and self._d.unused_data:  # concatenated gzip members
                    rest = self._d.unused_data
                    self._d = zlib.decompressobj(16 + zlib.MAX_WBITS)
                    self._out += self._d.decompress(rest)
            except zlib.error as exc:
                self.corrupt = f"compressed data corrupt ({exc})"
                self._eof = True
        n = min(len(b), len(self._out))
        b[:n] = self._out[:n]
        self._out = self._out[n:]
        return n


def _open_stream(path: Path) -> tuple[io.BufferedReader, _GunzipRaw | None]:
    f = open(path, "rb")  # noqa: SIM115 - closed by the caller
    if f.peek(2)[:2] == fmt.GZIP_MAGIC:
        raw = _GunzipRaw(f)
        return io.BufferedReader(raw, READ_BLOCK), raw
    return f, None


def resolve_parts(path: str | os.PathLike) -> Path:
    """The first file to read: the path itself, or `stem.0001.lfr[.gz]` for a rotated set's base."""
    p = Path(path)
    if p.exists():
        return p
    stem, _ = fmt.split_name(p)
    for suf in (".lfr", ".lfr.gz"):
        cand = fmt.part_path(stem, 1, suf)
        if cand.exists():
            return cand
    raise FileNotFoundError(f"no such file: {p}")


def _next_part(p: Path) -> Path | None:
    m = fmt.PART_RE.match(p.name)
    if not m:
        return None
    stem = p.with_name(m["stem"])
    for suf in (".lfr", ".lfr.gz"):
        cand = fmt.part_path(stem, int(m["num"]) + 1, suf)
        if cand.exists():
            return cand
    return None


def is_recording(path: str | os.PathLike) -> bool:
    """True if the file (or rotated set) starts with a livefix recording header."""
    try:
        f, _ = _open_stream(resolve_parts(path))
    except OSError:
        return False
    with f:
        try:
            return f.read(len(fmt.MAGIC)) == fmt.MAGIC
        except OSError:
            return False


class RecordingReader:
    def __init__(self, path: str | os.PathLike, native: bool | None = None) -> None:
        """Opens the first file and reads its header; raises OSError if it cannot be read.
        native: records scanned in C (livefix.record._reccore; None: when built and LIVEFIX_PURE is
        not "1"; True: it or RuntimeError; False: _part, the reference)."""
        self._core = pick_core(_CORE, native, _MISSING)
        self.first = resolve_parts(path)
        if self.first.is_dir():
            raise IsADirectoryError(f"{self.first} is a directory, not a recording")
        self.recording = is_recording(self.first)
        self.paths: list[Path] = [self.first]
        self.damage: str | None = None
        self.records = 0
        self.clean = False  # the last file ended with an end record
        self.header: dict = {"format": "nmea-log", "source": str(self.first)}
        if self.recording:
            f, _ = _open_stream(self.first)
            with f:
                line = f.readline(fmt.MAX_HEADER_LINE)
            try:
                self.header = json.loads(line)
            except (ValueError, UnicodeDecodeError):
                self.header = {"format": fmt.FORMAT_NAME}
                self.damage = f"{self.first}: header line is damaged"
        else:
            with open(self.first, "rb"):
                pass

    @property
    def site(self) -> dict | None:
        """The site record the recorder kept (livefix.site JSON), None for plain logs and for
        recordings made before the header had one."""
        site = self.header.get("site")
        return site if isinstance(site, dict) else None

    def items(self) -> Iterator[Item]:
        """Every recorded item in order, across rotated parts; sets `damage` on a bad tail."""
        if not self.recording:
            f, _ = _open_stream(self.first)
            with f:
                yield from iter_plain(f)
            return
        if self.damage:
            return
        part = self._part if self._core is None else self._part_scan
        p: Path | None = self.first
        while p is not None:
            ok = yield from part(p)
            if not ok:
                return
            p = _next_part(p)
            if p is not None:
                self.paths.append(p)

    def _part(self, path: Path) -> Iterator[Item]:
        f, gz = _open_stream(path)
        self.clean = False
        with f:
            head = f.readline(fmt.MAX_HEADER_LINE)
            if not head.startswith(fmt.MAGIC) or not head.endswith(b"\n"):
                self.damage = f"{path}: not a livefix recording or header damaged"
                return False
            pos = len(head)
            where = " of the uncompressed data" if gz else ""
            while True:
                start = pos
                line = f.readline(fmt.MAX_RECORD_LINE)
                if not line:
                    if gz is not None and gz.corrupt:
                        return self._stop(path, start, where, gz.corrupt)
                    return True
                pos += len(line)
                parsed = _parse_head(line)
                if parsed is None:
                    why = "truncated record" if not line.endswith(b"\n") else "damaged record header"
                    return self._stop(path, start, where, why, gz)
                kind, mono, wall, n, crc = parsed
                payload = f.read(n)
                end = f.read(1)
                pos += len(payload) + len(end)
                if len(payload) < n or not end:
                    return self._stop(path, start, where, "truncated record", gz)
                if end != b"\n" or zlib.crc32(payload) != crc:
                    return self._stop(path, start, where, "CRC mismatch (damaged record)")
                if kind == fmt.END:
                    self.clean = True
                    return True
                item = fmt.decode(kind, mono, wall, payload)
                self.records += 1
                if item is not None:
                    yield item

    def _part_scan(self, path: Path) -> Generator[Item, None, bool]:
        """_part with the records scanned in C a block at a time (the same items, counts and damage
        text). Where the scan is not sure (damage, an unusual head, a gzip stream cut short) the
        reference reads this part again from its start and goes on after the items already given,
        so every message is the reference's own."""
        core = self._core
        assert core is not None
        records0, given = self.records, 0
        f, gz = _open_stream(path)
        with f:
            head = f.readline(fmt.MAX_HEADER_LINE)
            if head.startswith(fmt.MAGIC) and head.endswith(b"\n"):
                self.clean = False
                scan, decode, more = core.scan, fmt.decode, core.SCAN_MORE
                buf, pos, need = b"", 0, 0
                while True:
                    block = f.read(max(SCAN_BLOCK, need - (len(buf) - pos)))
                    if not block:
                        if pos == len(buf) and not (gz is not None and gz.corrupt):
                            return True  # as the reference: the file ends after a whole record
                        break
                    buf = buf[pos:] + block if pos < len(buf) else block
                    items, pos, n, status, need = scan(buf, 0, _CHUNK_SLOTS, decode)
                    self.records += n
                    given += len(items)
                    yield from items
                    if status == core.SCAN_END:
                        self.clean = True
                        return True
                    if status != more:
                        break
        self.records = records0
        return (yield from _after(self._part(path), given))

    def _stop(self, path: Path, offset: int, where: str, why: str, gz: _GunzipRaw | None = None) -> bool:
        if gz is not None and gz.corrupt and gz.corrupt not in why:
            why += f" ({gz.corrupt})"
        self.damage = (f"{path.name}: stopped at record {self.records + 1}, byte offset {offset}{where}: "
                       f"{why}; {self.records} records before it are intact")
        return False


def _parse_head(line: bytes) -> tuple[str, float, float, int, int] | None:
    if not line.endswith(b"\n") or line[:1] != b"@":
        return None
    parts = line[1:-1].split(b" ")
    if len(parts) != 5 or len(parts[0]) != 1:
        return None
    try:
        out = (parts[0].decode("ascii"), float(parts[1]), float(parts[2]), int(parts[3]),
               int(parts[4], 16))
    except (ValueError, UnicodeDecodeError):
        return None
    return out if 0 <= out[3] <= MAX_PAYLOAD else None


def _after(gen: Generator[Item, None, bool], given: int) -> Generator[Item, None, bool]:
    """gen's items after its first `given` (delivered already), and its return value."""
    for _ in range(given):
        try:
            next(gen)
        except StopIteration as stop:
            return stop.value
    return (yield from gen)


_CHUNK_SLOTS = (Chunk.mono, Chunk.wall, Chunk.data)  # the C scan makes Chunks slot by slot, as make()
_MISSING = "the C core livefix.record._reccore is not built"


def _built_core() -> ModuleType | None:
    return built_core("livefix.record._reccore", ("MAX_RECORD_LINE", "MAX_PAYLOAD"),
                      (fmt.MAX_RECORD_LINE, MAX_PAYLOAD))


_CORE = _built_core()
