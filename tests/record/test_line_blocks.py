"""text_blocks cuts a file exactly as repeated readline(limit) does (the contract of
io.BufferedReader.readline: up to and including LF, at most `limit` bytes), block by block."""

from __future__ import annotations

import io
import random

import pytest

from livefix.record import linetime
from livefix.record.linetime import text_blocks


def by_readline(data: bytes, limit: int) -> list[bytes]:
    f, out = io.BytesIO(data), []
    while line := f.readline(limit):
        out.append(line)
    return out


def by_blocks(data: bytes, limit: int) -> list[bytes]:
    """text_blocks' lines: a whole block is split after each LF (it holds complete lines only)."""
    out = []
    for block in text_blocks(io.BytesIO(data), limit):
        if type(block) is bytes:
            assert block.endswith(b"\n") and max(map(len, block.split(b"\n"))) < limit  # no line to cut
            out += [ln + b"\n" for ln in block.split(b"\n")[:-1]]
        else:
            out += block
    return out


@pytest.mark.parametrize("block", [7, 64, 1 << 18])
def test_same_lines_as_readline(block: int, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(linetime, "BLOCK", block)  # small blocks: lines and CRLF pairs cut across blocks
    rng = random.Random(5)
    parts = [b"$GPGGA,1*00\r\n", b"\r", b"\n", b"\r\n", b"x" * 90, b"$", b"\x00", b"\n\n", b"\xb5b"]
    for _ in range(200):
        data = b"".join(rng.choice(parts) for _ in range(rng.randrange(0, 60)))
        for limit in (5, 16, 100, 65536):
            assert by_blocks(data, limit) == by_readline(data, limit), (data, limit)


def test_hand_example() -> None:
    # hand-cut: LF ends a line and is kept; a lone CR does not end one; a 10-byte line with limit 4
    # comes out as 4 + 4 + 2 bytes; the last line keeps no terminator it did not have
    data = b"ab\r\ncd\ref\n0123456789\nxyz"
    assert by_blocks(data, 4) == [b"ab\r\n", b"cd\re", b"f\n", b"0123", b"4567", b"89\n", b"xyz"]
    assert by_blocks(data, 100) == [b"ab\r\n", b"cd\ref\n", b"0123456789\n", b"xyz"]


@pytest.mark.parametrize("block", [7, 100, 1 << 18])
def test_text_blocks_find_every_line_to_cut(block: int, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(linetime, "BLOCK", block)
    rng = random.Random(9)
    for _ in range(300):  # lines of every length around the limit, anywhere in the block
        limit = rng.choice([6, 7, 64, 100])
        data = b"".join(b"a" * rng.randrange(0, 2 * limit + 2) + rng.choice([b"\n", b"\r\n", b"\r"])
                        for _ in range(rng.randrange(1, 30)))
        assert by_blocks(data, limit) == by_readline(data, limit), (data, limit)


def test_text_blocks_hand_example() -> None:
    # the same cuts as test_hand_example; with limit 100 the three complete lines come as one block
    data = b"ab\r\ncd\ref\n0123456789\nxyz"
    assert by_blocks(data, 4) == [b"ab\r\n", b"cd\re", b"f\n", b"0123", b"4567", b"89\n", b"xyz"]
    assert list(text_blocks(io.BytesIO(data), 100)) == [b"ab\r\ncd\ref\n0123456789\n", [b"xyz"]]
