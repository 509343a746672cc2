"""Feeding a plain log's stamper a block at a time: Python work only where a line can matter.

At 10 Hz about 3 lines in 19 carry a time (GGA, RMC, ZDA); the rest only join the current stamp,
as does a line of junk or of other sentences after a host-stamp prefix. feed_block finds the lines
that can matter with one compiled scan of the block (linetime.HOT) and copies the runs between them
into the stamp as whole slices, so the bytes are split into lines once (by the framer), not twice.
The items are exactly those of PlainStamper.feed on each line cut by readline(CHUNK_MAX): same
chunks, same boundaries, same link events, in the same order.
"""

from __future__ import annotations

from livefix.items import Item
from livefix.record.linetime import HOT, TIMED_KINDS, TimeReader, wrap_step

CHUNK_MAX = 65536  # a stamp's bytes go out once they reach this, at the end of that line


class BlockFeed:
    """The block path of livefix.record.plainlog.PlainStamper, a mixin: it drives the stamper's
    own steps (feed, _piece, _timed, _close_seg, _release, _date, _zda_date) and state, calling
    feed for any line it does not settle itself."""

    _seg: bytearray
    _jump: object | None
    _ready: list
    _keys: set[bytes]
    _last_tod: float | None
    _fix_times: bool
    _reader: TimeReader

    def feed_lines(self, lines: list[bytes]) -> list[Item]:
        """feed() for each line, the same items: a line that cannot carry a time (one sentence, not
        of a timed type) only joins the current stamp, so nothing else is done for it then."""
        out: list[Item] = []
        seg, timed, free = self._seg, TIMED_KINDS, self._jump is None
        for line in lines:
            if free and (line[3:6] not in timed or line[:1] != b"$") and line.find(b"$", 1) < 0:
                seg += line
                if len(seg) >= CHUNK_MAX:
                    self._close_seg()
                    out += self._release()
            else:
                out += self.feed(line)
                free = self._jump is None
        return out

    def feed_block(self, data: bytes) -> list[Item]:
        """feed_lines(data's lines), the same items, for a block of whole lines that each end in LF,
        as readline hands them out (none longer than its limit: linetime.text_blocks)."""
        out: list[Item] = []
        seg, n = self._seg, len(data)
        pos = self._held(data, 0, out)
        for m in HOT.finditer(data):
            i = m.start()
            if i < pos:
                continue  # in a line already fed
            start = data.rfind(b"\n", pos, i) + 1 or pos  # of the line holding the timed sentence
            if start > pos:  # free lines before it
                if len(seg) + start - pos < CHUNK_MAX:
                    seg += data[pos:start]
                else:
                    self._free(data, pos, start, out)
            pos = data.find(b"\n", i) + 1
            if start == i and data.find(b"$", i + 1, pos) < 0:  # the line is that one sentence
                self._timed_line(data[i:pos], out)
            else:
                out += self.feed(data[start:pos])
            pos = self._held(data, pos, out)
        if pos < n:
            self._free(data, pos, n, out)
        return out

    def _held(self, data: bytes, pos: int, out: list[Item]) -> int:
        """While a jump is held every line goes through feed (it may decide the jump): the lines
        from `pos` until it is decided or the block ends. Returns where the free path resumes."""
        while self._jump is not None and pos < len(data):
            end = data.find(b"\n", pos) + 1
            out += self.feed(data[pos:end])
            pos = end
        return pos

    def _free(self, data: bytes, a: int, b: int, out: list[Item]) -> None:
        """Lines data[a:b] that cannot carry a time join the stamp; as in feed_lines, the stamp
        goes out right after the line that brings it to CHUNK_MAX."""
        seg = self._seg
        room = max(CHUNK_MAX - len(seg), 1)  # a full stamp has always gone out already
        while b - a >= room:
            end = data.find(b"\n", a + room - 1, b) + 1
            seg += data[a:end]
            self._close_seg()
            out += self._release()
            a, room = end, CHUNK_MAX
        seg += data[a:b]

    def _timed_line(self, p: bytes, out: list[Item]) -> None:
        """feed(p) for one sentence of a timed type, no jump held: the steps of _piece, with the
        two commonest outcomes (a sentence that only joins the stamp, a fix sentence of the current
        epoch) done here; any other timed fix sentence goes to the stamper's own _timed."""
        t = self._reader.read(p)
        if t is None or (not t.fix and self._fix_times):
            self._seg += p
            if t is not None and t.date is not None:
                self._zda_date(t)
        elif not t.fix or t.tod is None:
            self._piece(p, t, parsed=True)
        else:  # what _piece does with a timed fix sentence
            self._fix_times = True
            last = self._last_tod
            if last is None or (t.tod != last and wrap_step(t.tod - last) != 0):
                self._timed(p, t)
            else:  # _timed with a zero step: the current epoch
                self._keys.add(t.key)
                self._seg += p
                if t.date is not None:
                    self._date(t.date, t.tod)
        if len(self._seg) >= CHUNK_MAX:
            self._close_seg()
        if self._ready:  # _release does nothing while nothing waits
            out += self._release()
