"""Sans-I/O framing: bytes in any split -> complete NMEA sentences (from `$`/`!`, terminator stripped).

Why our own framer: a live stream has idle gaps, partial reads, binary frames and noise from other
protocols on the same port and receivers that exceed the nominal 82-character limit. The framer keeps
a scan position so no byte is searched twice, holds at most one unfinished sentence (bounded by
`max_len`) or one binary frame still arriving (bounded by its format, livefix.binframe), and gives
identical sentences and counters however the input is split.

Rules (consistent for every split):
- A sentence starts at `$` wherever it stands, or at `!` outside a sentence, and ends before CR or LF
  (CR, LF, CRLF and LFCR all work).
- A binary frame whose layout and checksum verify (livefix.binframe: RTCM 3, the 0xB5 0x62 frame) is
  skipped whole and counted as binary, wherever it starts; a `$` inside it starts nothing. One that
  starts inside a sentence ends that sentence (which is returned as-is). A sync byte whose frame
  fails its check (or would overrun binframe.CHECK_BUDGET) is an ordinary byte. Until a plausible
  header's frame has fully arrived, what follows it waits: a stray sync byte can delay the next
  sentences by up to one frame length of stream (1,029 bytes for RTCM 3, 65,543 for 0xB5 0x62).
- Bytes outside sentences and frames other than CR/LF are junk (counted, dropped).
- A `$` inside a sentence starts a new one; the broken one is returned as-is, so the decoder
  counts it as refused (nothing is silently lost). A `!` inside a sentence is data: NMEA reserves it,
  but receivers put it in proprietary fields of sentences whose checksum covers it.
- A sentence longer than `max_len` bytes is dropped and counted once as overlong; its remaining
  bytes up to the next terminator, start character or binary frame are part of it, not junk.
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass
from types import ModuleType

from livefix.binframe import CHECK_BUDGET, FRAME_MAX, SYNC, checksum_ok, frame_size

# Real receivers exceed the nominal 82 characters (docs/sources.md#sentence-length); 512 leaves ample room
# for long proprietary sentences while bounding the buffer (common practice).
MAX_LEN = 512

_START = re.compile(b"[$!" + SYNC + b"]")  # a sentence, or a binary frame's first byte
_IN_LINE = re.compile(b"[\r\n$" + SYNC + b"]")
_OUTSIDE, _INSIDE, _SKIP = 0, 1, 2


def built_core() -> ModuleType | None:
    """The C core (livefix/_native.c) when it was built, else None; tests compare it with the pure
    path even under LIVEFIX_PURE=1 by asking for it explicitly (native=True)."""
    try:
        from livefix import _native
    except ImportError:
        return None
    return _native


def native_core() -> ModuleType | None:
    """The one switch for the default path: the C core when it was built and LIVEFIX_PURE is not
    "1", else None (the pure-Python path, which is the reference)."""
    return None if os.environ.get("LIVEFIX_PURE") == "1" else built_core()


_CORE = built_core()
_NATIVE = native_core()


@dataclass(slots=True)
class FrameCounters:
    bytes: int = 0  # every byte fed
    lines: int = 0  # sentences returned
    junk_bytes: int = 0  # bytes outside any sentence (terminators excluded)
    overlong: int = 0  # sentences dropped for exceeding max_len
    binary_frames: int = 0  # verified binary frames skipped (livefix.binframe)
    binary_bytes: int = 0  # their bytes, sync to checksum


class Framer:
    """Feed bytes, get sentences. Never blocks, never raises on content."""

    def __init__(self, max_len: int = MAX_LEN, native: bool | None = None) -> None:
        """native: split plain blocks with the C core (None: as native_core() says); it hands
        anything unusual back to the scanner below, so the sentences are the same."""
        self.max_len = max_len
        if native is None:
            native = _NATIVE is not None
        elif native and _CORE is None:
            raise RuntimeError("the C core livefix._native is not built")
        self._split = _CORE.split_block if native and _CORE is not None else None
        self.counters = FrameCounters()
        self._buf = bytearray()
        self._pos = 0  # next byte of _buf not yet scanned
        self._start = 0  # start of the open sentence in _buf (state _INSIDE)
        self._state = _OUTSIDE
        self._checked = 0  # bytes of binary frames checksummed so far (binframe.CHECK_BUDGET)

    @property
    def buffered(self) -> int:
        """Bytes held after a feed: an unfinished sentence (at most max_len + 1) and, while a binary
        frame is still arriving, that frame's bytes (less than binframe.FRAME_MAX)."""
        return len(self._buf)

    @property
    def checked_bytes(self) -> int:
        """Bytes of candidate binary frames checksummed so far (at most CHECK_BUDGET per stream byte)."""
        return self._checked

    @property
    def max_buffered(self) -> int:
        """The most `buffered` can be after a feed."""
        return self.max_len + 1 + FRAME_MAX

    def feed(self, data: bytes) -> list[bytes]:
        c = self.counters
        if data.__class__ is bytes and not self._buf and data[-2:] == b"\r\n" and self._state == _OUTSIDE:
            split = self._split
            lines = split(data, self.max_len) if split is not None else self._clean_block(data)
            if lines is not None:
                c.bytes += len(data)
                c.lines += len(lines)
                return lines
        c.bytes += len(data)
        self._buf += data
        return self._scan(False)

    def _frame(self, at: int, final: bool) -> int:
        """Size of the verified binary frame at `at` (counted), 0 if none, MORE to wait for bytes."""
        buf, c = self._buf, self.counters
        size = frame_size(buf, at, final)
        if size <= 0:
            return size
        end = c.bytes - len(buf) + at + size  # stream position of the frame's end
        if self._checked + size > CHECK_BUDGET * end:
            return 0
        self._checked += size
        if not checksum_ok(buf, at, size):
            return 0
        c.binary_frames += 1
        c.binary_bytes += size
        return size

    def _scan(self, final: bool) -> list[bytes]:
        """Scan the buffer from the saved position; `final`: the stream has ended, so a binary frame
        that is still incomplete is not one."""
        c = self.counters
        buf = self._buf
        out: list[bytes] = []
        pos, n, max_len = self._pos, len(buf), self.max_len
        while pos < n:
            if self._state == _INSIDE:
                m = _IN_LINE.search(buf, pos)
                end = m.start() if m else n
                if end - self._start > max_len:  # too long: drop it whether or not it has ended
                    c.overlong += 1
                    self._state, pos = _SKIP, end  # nothing to find before `end`: no rescan
                    continue
                if m is None:
                    pos = n
                    break
                ch = buf[end]
                if ch in b"\r\n":
                    out.append(bytes(buf[self._start:end]))
                    self._state, pos = _OUTSIDE, end + 1
                elif ch in SYNC:
                    size = self._frame(end, final)
                    if size < 0:  # wait here for the rest of the frame
                        pos = end
                        break
                    if size:  # a frame cuts the sentence short: return what came before it
                        out.append(bytes(buf[self._start:end]))
                        self._state = _OUTSIDE
                    pos = end + (size or 1)
                else:  # `$` mid-line: broken sentence returned, a new one opens here
                    out.append(bytes(buf[self._start:end]))
                    self._start, pos = end, end + 1
            elif self._state == _OUTSIDE:
                m = _START.search(buf, pos)
                end = m.start() if m else n
                if end > pos:
                    c.junk_bytes += end - pos - buf.count(b"\r", pos, end) - buf.count(b"\n", pos, end)
                if m is None:
                    pos = n
                    break
                if buf[end] in SYNC:
                    size = self._frame(end, final)
                    if size < 0:
                        pos = end
                        break
                    if not size:
                        c.junk_bytes += 1
                    pos = end + (size or 1)
                else:
                    self._state, self._start, pos = _INSIDE, end, end + 1
            else:  # _SKIP: rest of an overlong line, up to a terminator, a new start or a frame
                m = _IN_LINE.search(buf, pos)
                if m is None:
                    pos = n
                    break
                pos = m.start()
                ch = buf[pos]
                if ch in b"\r\n":
                    self._state, pos = _OUTSIDE, pos + 1
                elif ch in SYNC:
                    size = self._frame(pos, final)
                    if size < 0:
                        break
                    if size:
                        self._state = _OUTSIDE
                    pos += size or 1
                else:
                    self._state, self._start, pos = _INSIDE, pos, pos + 1
        c.lines += len(out)
        # keep only the open sentence or the frame still arriving; everything before is done with
        keep = self._start if self._state == _INSIDE else pos
        if keep:
            del buf[:keep]
            pos -= keep
            self._start = 0
        self._pos = pos
        return out

    def _clean_block(self, data: bytes) -> list[bytes] | None:
        """The usual chunk, whole CRLF-terminated sentences and nothing else, split at C speed;
        None when anything is unusual (the general scanner then gives the same result)."""
        n = data.count(b"\r\n")
        # n CRLFs, n '$' and no other CR or LF: with the chunk starting with '$' and every CRLF but
        # the last followed by '$' (the caller checked it ends in CRLF), each line is exactly one
        # '$...' sentence ('!' inside one is data); ASCII only, so no binary frame starts in it
        if (not n or data.count(b"$") != n or data.count(b"\n") != n or data.count(b"\r") != n
                or data[:1] != b"$" or data.count(b"\n$") != n - 1 or not data.isascii()):
            return None
        lines = data.split(b"\r\n")
        lines.pop()  # after the final CRLF
        if max(map(len, lines)) > self.max_len:
            return None
        return lines

    def finish(self) -> list[bytes]:
        """End of stream: return a final unterminated sentence (if any) and reset."""
        out = self._scan(True) if self._pos < len(self._buf) else []
        if self._state == _INSIDE and len(self._buf) > self._start:
            out.append(bytes(self._buf[self._start:]))
            self.counters.lines += 1
        self.reset()
        return out

    def reset(self) -> None:
        """Forget any partial sentence (counters are kept)."""
        self._buf = bytearray()
        self._pos = self._start = 0
        self._state = _OUTSIDE
