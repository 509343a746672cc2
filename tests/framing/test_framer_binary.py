"""Binary frames interleaved with NMEA (issue 13, item 8): recognised frames are skipped whole and counted
as binary, never as NMEA damage or junk; a `$` starts a sentence wherever it stands, except inside a
recognised frame; a frame whose checksum fails is junk and the framer resyncs.

Fixtures are built in binkit from the published layouts (RTCM 10403.x; the open 0xB5 0x62 layout),
with checksums computed bit by bit there, independently of livefix.binframe.
"""

from __future__ import annotations

import random
from pathlib import Path

import pytest
from binkit import b562, crc24q_bitwise, fletcher8_loop, nmea, rtcm3

from livefix.binframe import B562_MAX, CHECK_BUDGET, RTCM3_MAX, crc24q, fletcher8
from livefix.decode.decoder import Decoder
from livefix.framing import Framer
from livefix.pipeline import Pipeline, run_items
from livefix.sources.base import Chunk, Link, LinkEvent

CORPUS = Path(__file__).resolve().parents[2] / ".." / "shared" / "realdata" / "corpus"

# Invented sentences (an invented site), checksums computed by binkit.nmea.
RMC = nmea("GNRMC,104113.00,A,4530.12345,N,00712.34567,E,0.01,,170423,,,A,V")
GGA = nmea("GNGGA,104113.00,4530.12345,N,00712.34567,E,1,08,0.9,212.3,M,48.1,M,,")
GGA2 = nmea("GNGGA,104114.00,4530.12346,N,00712.34568,E,1,08,0.9,212.4,M,48.1,M,,")
GSA = nmea("GNGSA,A,3,02,05,09,13,17,20,28,30,,,,,1.6,0.9,1.3,1")
GSV = nmea("GPGSV,1,1,04,02,55,040,45,05,30,110,41,09,20,200,38,13,70,300,47,1")
GSV2 = nmea("GLGSV,1,1,02,66,10,179,30,67,52,218,22,1")

# Frames whose payloads hold `$`, CR, LF and a whole NMEA-looking line: none of it is a sentence.
F1 = rtcm3(b"\x43\x50$GPGGA,999999,fake*00\r\n" + bytes(range(0, 256, 3)))
F2 = b562(0x01, 0x07, b"\x00\x24\x0d\x0a$GNGGA" + bytes(80))  # 0x24 = '$'
F3 = b562(0x01, 0x35, b"$" * 17)
F4 = rtcm3(b"")  # zero-length frame
F5 = rtcm3(b"\x3e\xd0$!\r")


def interleaved() -> tuple[bytes, list[bytes], list[bytes]]:
    """(stream, NMEA sentences in order, frames): frames between lines, two frames and then a $GNGGA
    on the same "line" with no newline, and a frame right after a complete sentence's checksum."""
    data = (RMC + b"\r\n" + F1 + GGA + b"\r\n" + F2 + F3 + GGA2 + b"\r\n" + GSA + b"\r\n" + F4
            + GSV + b"\r\n" + GSV2 + F5 + b"\r\n")
    return data, [RMC, GGA, GGA2, GSA, GSV, GSV2], [F1, F2, F3, F4, F5]


def frame_all(data: bytes, cuts: list[int] | None = None) -> tuple[list[bytes], Framer]:
    f = Framer()
    out: list[bytes] = []
    prev = 0
    for cut in sorted(set(cuts or [])) + [len(data)]:
        out += f.feed(data[prev:cut])
        prev = cut
        assert f.buffered <= f.max_buffered
    return out + f.finish(), f


def test_checksum_helpers_match_the_bitwise_definitions() -> None:
    # D3 00 00 47 EA 4B: the zero-length RTCM 3 frame, CRC-24Q 0x47EA4B (from memory; the bitwise
    # implementation from the generator polynomial gives the same)
    assert crc24q_bitwise(b"\xd3\x00\x00") == 0x47EA4B == crc24q(b"\xd3\x00\x00")
    rng = random.Random(7)
    for n in (1, 2, 5, 64, 1023):
        blob = rng.randbytes(n)
        assert crc24q(blob) == crc24q_bitwise(blob)  # RTCM 10403.x CRC-24Q, bit by bit in binkit
        assert fletcher8(blob) == fletcher8_loop(blob)  # 8-bit Fletcher, byte loop in binkit


def test_interleaved_frames_are_skipped_and_counted_not_damage() -> None:
    data, sentences, frames = interleaved()
    out, f = frame_all(data)
    c = f.counters
    assert out == sentences  # every NMEA sentence recovered, nothing from inside a frame
    # counts by construction of the fixture (5 frames, their lengths summed)
    assert (c.binary_frames, c.binary_bytes) == (5, sum(map(len, frames)))
    assert (c.junk_bytes, c.overlong, c.lines) == (0, 0, 6)
    dec = Decoder()
    for ln in out:
        dec.decode(ln)
    d = dec.counters
    assert (d.decoded, d.malformed, d.bad_checksum, d.unknown) == (6, 0, 0, 0)


def test_interleaved_frames_give_the_same_result_for_any_split() -> None:
    data, _, _ = interleaved()
    ref, f = frame_all(data)
    want = (f.counters.lines, f.counters.junk_bytes, f.counters.binary_frames, f.counters.binary_bytes)
    rng = random.Random(13)
    for cuts in [list(range(len(data)))] + [rng.sample(range(len(data)), k) for k in (1, 2, 5, 40, 200)]:
        out, g = frame_all(data, cuts)
        assert out == ref
        assert (g.counters.lines, g.counters.junk_bytes, g.counters.binary_frames,
                g.counters.binary_bytes) == want


@pytest.mark.parametrize("frame", [F2, F1], ids=["b562", "rtcm3"])
def test_failed_checksum_is_junk_and_the_framer_resyncs(frame: bytes) -> None:
    # one bit flipped in the last checksum byte: the length is no longer trusted
    bad = frame[:-1] + bytes([frame[-1] ^ 0x01])
    # no sentence start or terminator inside, and no sync byte but the first (fixture payloads)
    body = bad.replace(b"$", b"#").replace(b"!", b"#").replace(b"\r", b"R").replace(b"\n", b"N")
    out, f = frame_all(body + GGA + b"\r\n")
    assert out == [GGA]
    assert f.counters.binary_frames == 0
    assert f.counters.junk_bytes == len(body)  # every byte of the refused frame, counted once

    # with its `$` left in, the refused frame's `$` opens a sentence again (resync on text)
    out, f = frame_all(bad + GGA + b"\r\n")
    assert out[-1] == GGA and f.counters.binary_frames == 0


def test_header_beyond_the_format_maximum_is_junk_at_once() -> None:
    # RTCM 3: 6 reserved bits then a 10-bit length (RTCM 10403.x); set reserved bits claim a length
    # above 1023, so the bytes are junk without waiting for more
    f = Framer()
    assert f.feed(b"\xd3\xfc\xff" + GGA + b"\r\n") == [GGA]
    assert (f.counters.junk_bytes, f.counters.binary_frames, f.buffered) == (3, 0, 0)


def test_incomplete_frame_waits_then_becomes_junk_at_end_of_stream() -> None:
    head = b"\xb5\x62\x01\x07\xe8\x03"  # claims 1000 payload bytes that never come
    f = Framer()
    assert f.feed(head + GGA + b"\r\n") == []  # undecidable until 1008 bytes have arrived
    assert f.buffered == len(head) + len(GGA) + 2
    assert f.finish() == [GGA]  # the stream ended: no frame, the text inside is recovered
    assert (f.counters.junk_bytes, f.counters.binary_frames, f.counters.lines) == (len(head), 0, 1)


def test_largest_frames_of_each_layout_are_recognised_and_bounded() -> None:
    rng = random.Random(3)
    big = b562(0x02, 0x15, rng.randbytes(65535))  # 16-bit length field: 65,535 payload bytes
    top = rtcm3(rng.randbytes(1023))  # 10-bit length field: 1,023 payload bytes (RTCM 10403.x)
    assert (len(big), len(top)) == (B562_MAX, RTCM3_MAX)
    data = GGA + b"\r\n" + big + top + GGA2 + b"\r\n"
    out, f = frame_all(data, list(range(0, len(data), 997)))
    assert out == [GGA, GGA2]
    assert (f.counters.binary_frames, f.counters.binary_bytes, f.counters.junk_bytes) == (2, len(big) + len(top), 0)


@pytest.mark.parametrize("header", [b"\xd3\x03\xff", b"\xb5\x62\x01\x01\xff\xff"], ids=["rtcm3", "b562"])
def test_overlapping_long_headers_cost_bounded_work(header: bytes) -> None:
    # every header claims the longest frame of its layout, and each starts inside the previous one:
    # testing each in full would cost a frame's length per byte received
    hostile = header * (6000 // len(header))
    tail = b"".join(s + b"\r\n" for s in (GGA, GSA, GSV)) * 20 + F2 + F1 + GGA2 + b"\r\n"
    out, f = frame_all(hostile + tail, list(range(0, len(hostile) + len(tail), 1500)))
    assert f.checked_bytes <= CHECK_BUDGET * f.counters.bytes  # the documented bound
    assert f.counters.junk_bytes == len(hostile)  # no frame in it: all junk (no CR/LF in the pattern)
    assert out == [GGA, GSA, GSV] * 20 + [GGA2]
    assert f.counters.binary_frames == 2  # once the stream has moved on, real frames are found again
    small = header * 40 + F2 + GGA + b"\r\n"
    (out1, f1), (out2, f2) = frame_all(small, list(range(len(small)))), frame_all(small)
    assert out1 == out2 == [GGA] and f1.counters == f2.counters and f1.checked_bytes == f2.checked_bytes


def test_clean_text_chunks_still_take_the_fast_path_result() -> None:
    data = b"".join(s + b"\r\n" for s in (RMC, GGA, GSA, GSV))
    out, f = frame_all(data)
    assert out == [RMC, GGA, GSA, GSV] and f.counters.binary_frames == 0 and f.buffered == 0


def test_pipeline_reports_binary_apart_from_malformed() -> None:
    data, sentences, frames = interleaved()
    p = Pipeline(source="test")
    p.feed(LinkEvent(0.0, 1.7e9, Link.STREAMING, "test"))
    for k in range(0, len(data), 37):  # odd chunk size: frames split across chunks
        p.feed(Chunk(k / 1000, 1.7e9 + k / 1000, data[k:k + 37]))
    p.finish()
    snap = p.snapshot()
    st = snap.analysis["stream"]
    assert (st["malformed"], st["bad_checksum"], st["junk_bytes"]) == (0, 0, 0)
    assert (st["binary_frames"], st["binary_bytes"]) == (len(frames), sum(map(len, frames)))
    assert st["lines"] == len(sentences)
    assert snap.analysis["internal_errors"] == 0


def _corpus(name: str) -> bytes:
    path = CORPUS / name
    if not path.is_file():
        pytest.skip(f"real-receiver corpus not present at {CORPUS} (see shared/realdata/SOURCES.md)")
    return path.read_bytes()


@pytest.mark.parametrize(("name", "frames"), [
    # 160 binary frames between the NMEA lines: shared/realdata/SOURCES.md
    ("pyubx2_2023-4-17_82912_serial-COM3.ubx", 160),
    # two frames before each of the two $GNGGA lines, read off the file's hex dump
    ("pynmeagps_pygpsdata-mixed.log", 4),
])
def test_real_logs_with_binary_frames(name: str, frames: int) -> None:
    import re

    from livefix.record.plainlog import iter_plain

    data = _corpus(name)
    # every NMEA sentence in the file, found by pattern ('$', 5 letters, printable text, '*hh' CRLF)
    want = len(re.findall(rb"\$[A-Z]{5},[ -~]*?\*[0-9A-F]{2}\r\n", data))
    with open(CORPUS / name, "rb") as fh:
        p = run_items(iter_plain(fh), source=name)
    snap = p.snapshot()
    st = snap.analysis["stream"]
    assert (st["malformed"], st["bad_checksum"], st["junk_bytes"], st["overlong"]) == (0, 0, 0, 0)
    assert st["binary_frames"] == frames
    assert st["lines"] == want and p.counters().decoded == want
    assert snap.analysis["internal_errors"] == 0


def test_plain_log_lines_after_binary_keep_their_time() -> None:
    """A plain log (no host stamps) paced by the receiver times: the $GNGGA that follows two frames on
    the same line must still give its time, so 104113 -> 104114 is 1.0 s (hand arithmetic)."""
    import io

    from livefix.record.plainlog import iter_plain

    data, sentences, frames = interleaved()
    p = run_items(iter_plain(io.BytesIO(data)), source="plain")
    snap = p.snapshot()
    st = snap.analysis["stream"]
    assert st["duration_s"] == 1.0 and st["epochs"] == 2  # GGA times 10:41:13 and 10:41:14
    assert (st["malformed"], st["binary_frames"], st["lines"]) == (0, len(frames), len(sentences))
    assert snap.analysis["internal_errors"] == 0
