"""Start-up checks shared by `record`, `check`, `watch`, `report` and `replay`.

Why: a command that cannot work should say so in one line and exit 2 at once, instead of
retrying for the whole run or printing an empty report. Three questions, asked before a run:
  * does a live source answer at all? (`first_contact`: refused/unknown TCP, missing device)
  * does a file hold any NMEA sentence? (`scan_file`: empty, binary, text but not NMEA)
  * does a live stream that delivers bytes ever deliver a sentence? (`NoNmeaWatch`)
Retrying stays the rule once a source has answered, or when the user asks for it with --wait.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from livefix.contracts import Probed, Source
from livefix.sources.base import Chunk, SourceError

FIRST_CONTACT_S = 4.0  # one start-up attempt, name resolution included (README: "exit 2 within 5 s")
NO_NMEA_S = 5.0  # live bytes but no sentence this long after the first byte -> could not run
NO_NMEA_MIN_BYTES = 256  # ... and at least this much arrived (a few stray bytes are line noise)
# Rule of thumb for "binary": a NUL byte, or more than 30 % of bytes that are neither printable
# ASCII nor CR/LF/TAB (from memory: the share the Perl -B file test uses).
BINARY_SHARE = 0.30
_TEXT = frozenset(range(0x20, 0x7F)) | {0x09, 0x0A, 0x0D}
WAIT_HINT = "--wait keeps trying"


def first_contact(src: Source, *, wait: bool = False, timeout: float = FIRST_CONTACT_S) -> None:
    """Raise SourceError (one line) when a live source cannot be reached now and the user did not
    ask to wait. Sources that are not a live link (files, stdin, sim: not `Probed`) always pass."""
    if wait or not isinstance(src, Probed):
        return
    try:
        src.first_contact(timeout)
    except SourceError as exc:
        src.close()
        raise SourceError(f"{exc}; {WAIT_HINT}") from None


def non_text(data: bytes) -> int:
    """Bytes that are neither printable ASCII nor CR/LF/TAB."""
    return len(data) - sum(1 for b in data if b in _TEXT) if data else 0


def looks_binary(nbytes: int, nontext: int, nul: bool) -> bool:
    return nul or (nbytes > 0 and nontext > BINARY_SHARE * nbytes)


@dataclass(slots=True)
class FileScan:
    """What the beginning of a file holds, up to its first NMEA sentence (or its end)."""

    path: str
    nmea: bool = False
    bytes: int = 0
    nontext: int = 0
    nul: bool = False
    lines: int = 0  # newline characters: text lines as a person counts them
    bad_checksum: int = 0
    binary_frames: int = 0
    records: int = 0  # items of any kind (a recording may hold link events only)
    damage: str | None = None  # a damaged recording: its own summary says where it stopped

    def problem(self) -> str | None:
        """None when the file holds NMEA; otherwise one line saying what it holds instead."""
        if self.nmea or self.damage:
            return None
        if self.bytes == 0:
            if self.records:
                return (f"{self.path} holds no received bytes ({self.records} records, none of them data: "
                        "the source never sent anything)")
            return f"{self.path} is empty"
        what = f"no NMEA sentences in {self.path}: "
        if self.binary_frames:
            return what + (f"{self.bytes} bytes with {self.binary_frames} binary protocol frames "
                           "(a binary protocol, not NMEA 0183)")
        if looks_binary(self.bytes, self.nontext, self.nul):
            return what + f"{self.bytes} bytes of binary data (wrong file, or a binary protocol?)"
        if self.bad_checksum:
            return what + (f"{self.bad_checksum} sentence-shaped lines, every checksum wrong "
                           "(a damaged or altered log?)")
        lines = f"{self.lines} line{'s' if self.lines != 1 else ''}" if self.lines else "one unterminated line"
        return what + f"{self.bytes} bytes of text in {lines}, none of them NMEA (wrong file?)"


def scan_file(path: str) -> FileScan:
    """Read a recording or log until its first NMEA sentence, by the pipeline's own framing and
    decoding rules (a checksum-valid sentence of a known or unknown type). Stops early, so a good
    file costs one chunk; only a file without NMEA is read to its end."""
    from livefix.decode import UNKNOWN, Decoded, Rejected
    from livefix.decode.decoder import Decoder
    from livefix.framing import Framer
    from livefix.record.reader import RecordingReader

    scan = FileScan(path)
    framer, decoder = Framer(), Decoder(line_cache=0)
    try:
        reader = RecordingReader(path)
    except OSError as exc:
        raise SourceError(f"cannot read {path}: {exc.strerror or exc}") from None
    for item in reader.items():
        scan.records += 1
        if type(item) is not Chunk:
            continue
        data = item.data
        scan.bytes += len(data)
        scan.nontext += non_text(data)
        scan.nul = scan.nul or b"\x00" in data
        scan.lines += data.count(b"\n")
        for line in framer.feed(data):
            out = decoder.decode(line)
            if type(out) is Decoded or (type(out) is Rejected and out.reason == UNKNOWN):
                scan.nmea = True
                return scan
    for line in framer.finish():
        out = decoder.decode(line)
        scan.nmea = scan.nmea or type(out) is Decoded or (type(out) is Rejected and out.reason == UNKNOWN)
    scan.damage = reader.damage
    scan.bad_checksum = decoder.counters.bad_checksum
    scan.binary_frames = framer.counters.binary_frames
    return scan


def check_file(src: Source) -> None:
    """Raise SourceError when a file source holds no NMEA sentence; other sources pass."""
    from livefix.sources.file import FileSource

    if not isinstance(src, FileSource):
        return
    problem = scan_file(str(src.path)).problem()
    if problem:
        src.close()
        raise SourceError(problem)


class NoNmeaWatch:
    """A live stream that delivers bytes but no NMEA sentence: one line, once, after `limit_s`
    of stream time since the first byte. Disarms for good at the first sentence, so a receiver
    that later sends junk is the reconnect/relock logic's business, not a start-up failure."""

    def __init__(self, limit_s: float = NO_NMEA_S, hint: str = "not NMEA 0183?") -> None:
        from livefix.sources.link import NmeaCounter

        self.limit_s, self.hint = limit_s, hint
        self._counter = NmeaCounter()
        self.first: float | None = None
        self.bytes = self.nontext = 0
        self.armed = True

    def feed(self, item: Any) -> str | None:
        """Stream items (record): counts every byte and finds sentences itself."""
        if not self.armed or type(item) is not Chunk:
            return None
        data = item.data
        self.nontext += non_text(data)
        return self.step(item.mono, self.bytes + len(data), self._counter.feed(data))

    def step(self, mono: float, nbytes: int, sentences: int) -> str | None:
        """Running totals at stream time `mono` (check: from snapshots, `sentences` = decoded)."""
        if not self.armed or nbytes <= 0:
            return None
        if self.first is None:
            self.first = mono
        self.bytes = nbytes
        if sentences:
            self.armed = False
            return None
        span = mono - self.first
        if nbytes < NO_NMEA_MIN_BYTES or span < self.limit_s:
            return None
        self.armed = False
        kind = " (mostly binary)" if looks_binary(nbytes, self.nontext, False) else ""
        return f"{nbytes} bytes in {span:.0f} s but no NMEA sentence{kind}: {self.hint}"


def no_nmea_watch(src: Source) -> NoNmeaWatch | None:
    """The watch for a live source that can deliver foreign bytes (serial, TCP), else None."""
    if not isinstance(src, Probed):
        return None
    limit_s, hint = src.no_nmea_rule(NO_NMEA_S)
    return NoNmeaWatch(limit_s, hint)
