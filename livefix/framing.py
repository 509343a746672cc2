"""Sans-I/O framing: bytes in any split -> complete NMEA sentences (from `$`/`!`, terminator stripped).

Why our own framer: a live stream has idle gaps, partial reads, binary noise from other protocols on
the same port and receivers that exceed the nominal 82-character limit. The framer keeps a scan
position so no byte is searched twice, holds at most one unfinished sentence (bounded by
`max_len`), and gives identical sentences and counters however the input is split.

Rules (consistent for every split):
- A sentence starts at `$` or `!` and ends before CR or LF (CR, LF, CRLF and LFCR all work).
- Bytes outside a sentence other than CR/LF are junk (counted, dropped).
- A `$`/`!` inside a sentence starts a new one; the broken one is returned as-is, so the decoder
  counts it as refused (nothing is silently lost).
- A sentence longer than `max_len` bytes is dropped and counted once as overlong; its remaining
  bytes up to the next terminator or start character are part of it, not junk.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

# Real receivers exceed the nominal 82 characters (shared/REFERENCES.md); 512 leaves ample room
# for long proprietary sentences while bounding the buffer (common practice).
MAX_LEN = 512

_START = re.compile(rb"[$!]")
_IN_LINE = re.compile(rb"[\r\n$!]")
_OUTSIDE, _INSIDE, _SKIP = 0, 1, 2


@dataclass(slots=True)
class FrameCounters:
    bytes: int = 0  # every byte fed
    lines: int = 0  # sentences returned
    junk_bytes: int = 0  # bytes outside any sentence (terminators excluded)
    overlong: int = 0  # sentences dropped for exceeding max_len


class Framer:
    """Feed bytes, get sentences. Never blocks, never raises on content."""

    def __init__(self, max_len: int = MAX_LEN) -> None:
        self.max_len = max_len
        self.counters = FrameCounters()
        self._buf = bytearray()
        self._pos = 0  # next byte of _buf not yet scanned
        self._start = 0  # start of the open sentence in _buf (state _INSIDE)
        self._state = _OUTSIDE

    @property
    def buffered(self) -> int:
        """Bytes held for an unfinished sentence (never more than max_len + 1 after a feed)."""
        return len(self._buf)

    def feed(self, data: bytes) -> list[bytes]:
        c = self.counters
        if data.__class__ is bytes and not self._buf and data[-2:] == b"\r\n" and self._state == _OUTSIDE:
            lines = self._clean_block(data)
            if lines is not None:
                c.bytes += len(data)
                c.lines += len(lines)
                return lines
        c.bytes += len(data)
        buf = self._buf
        buf += data
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
                out.append(bytes(buf[self._start:end]))
                if buf[end] in b"\r\n":
                    self._state, pos = _OUTSIDE, end + 1
                else:  # `$`/`!` mid-line: broken sentence returned, a new one opens here
                    self._start, pos = end, end + 1
            elif self._state == _OUTSIDE:
                m = _START.search(buf, pos)
                end = m.start() if m else n
                if end > pos:
                    c.junk_bytes += end - pos - buf.count(b"\r", pos, end) - buf.count(b"\n", pos, end)
                if m is None:
                    pos = n
                    break
                self._state, self._start, pos = _INSIDE, end, end + 1
            else:  # _SKIP: rest of an overlong line, up to a terminator or a new start
                m = _IN_LINE.search(buf, pos)
                if m is None:
                    pos = n
                    break
                pos = m.start()
                if buf[pos] in b"\r\n":
                    self._state, pos = _OUTSIDE, pos + 1
                else:
                    self._state, self._start, pos = _INSIDE, pos, pos + 1
        c.lines += len(out)
        # keep only the open sentence; everything before it is done with
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
        # n CRLFs, n '$' and no other CR, LF or '!': with the chunk starting with '$' and every CRLF
        # but the last followed by '$' (the caller checked it ends in CRLF), each line is exactly
        # one '$...' sentence
        if (not n or data.count(b"$") != n or data.count(b"\n") != n or data.count(b"\r") != n
                or b"!" in data or data[:1] != b"$" or data.count(b"\n$") != n - 1):
            return None
        lines = data.split(b"\r\n")
        lines.pop()  # after the final CRLF
        if max(map(len, lines)) > self.max_len:
            return None
        return lines

    def finish(self) -> list[bytes]:
        """End of stream: return a final unterminated sentence (if any) and reset."""
        out: list[bytes] = []
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
