"""Framer: same sentences and counters for any split; terminators, noise, over-long lines, caps."""

from __future__ import annotations

from binkit import b562, nmea, rtcm3
from hypothesis import given, settings
from hypothesis import strategies as st

from livefix.decode import Decoded
from livefix.decode.decoder import Decoder
from livefix.framing import MAX_LEN, Framer

# Public example sentences (docs/sources.md#example-sentences).
GGA = b"$GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,*47"
RMC = b"$GPRMC,123519,A,4807.038,N,01131.000,E,022.4,084.4,230394,003.1,W*6A"
GSA = b"$GPGSA,A,3,04,05,,09,12,,,24,,,,,2.5,1.3,2.1*39"
GSV = b"$GPGSV,2,1,08,01,40,083,46,02,17,308,41,12,07,344,39,14,22,228,45*75"
PUBLIC = (GGA, RMC, GSA, GSV)


def whole(data: bytes, max_len: int = MAX_LEN) -> tuple[list[bytes], tuple]:
    f = Framer(max_len)
    out = f.feed(data) + f.finish()
    c = f.counters
    return out, (c.bytes, c.lines, c.junk_bytes, c.overlong, c.binary_frames, c.binary_bytes)


def split(data: bytes, cuts: list[int], max_len: int = MAX_LEN) -> tuple[list[bytes], tuple]:
    f = Framer(max_len)
    out: list[bytes] = []
    prev = 0
    for cut in sorted(set(cuts)) + [len(data)]:
        out += f.feed(data[prev:cut])
        prev = cut
        # the buffer never holds more than one capped sentence and one binary frame still arriving
        assert f.buffered <= f.max_buffered
    out += f.finish()
    c = f.counters
    return out, (c.bytes, c.lines, c.junk_bytes, c.overlong, c.binary_frames, c.binary_bytes)


def bytewise(data: bytes, max_len: int = MAX_LEN) -> tuple[list[bytes], tuple]:
    return split(data, list(range(len(data))), max_len)


def test_every_terminator_style() -> None:
    # CR LF is the NMEA 0183 terminator (docs/sources.md#line-ending); bare CR, bare LF and LF CR are common practice
    for term in (b"\r\n", b"\n", b"\r", b"\n\r"):
        data = term.join(PUBLIC) + term
        out, counters = whole(data)
        assert out == list(PUBLIC)
        assert counters == (len(data), 4, 0, 0, 0, 0)
        assert bytewise(data) == (out, counters)


def test_binary_noise_between_sentences_is_junk() -> None:
    noise = bytes(range(0x80, 0x100)) + b"\x00\xb5\x62\x01\x07"  # non-ASCII, no $ or !
    data = noise + GGA + b"\r\n" + noise + RMC + b"\r\n"
    out, counters = whole(data)
    assert out == [GGA, RMC]
    assert counters[2] == 2 * len(noise)
    assert bytewise(data) == (out, counters)


def test_dollar_mid_line_returns_the_broken_part() -> None:
    data = GGA[:30] + RMC + b"\r\n"  # a line cut short by a new sentence
    out, counters = whole(data)
    assert out == [GGA[:30], RMC]
    assert counters[1:] == (2, 0, 0, 0, 0)
    assert bytewise(data) == (out, counters)


def test_overlong_line_dropped_and_counted() -> None:
    # nominal 82 chars, real receivers send longer lines (docs/sources.md#sentence-length): 86 must pass, 600 must not
    long86 = b"$GPGGA," + b"1" * 79
    huge = b"$GPXXX," + b"9" * 600
    data = long86 + b"\r\n" + huge + b"\r\n" + GGA + b"\r\n" + huge + GSA + b"\r\n"
    out, counters = whole(data)
    assert out == [long86, GGA, GSA]
    assert counters[1:] == (3, 0, 2, 0, 0)
    assert bytewise(data) == (out, counters)


def test_partial_line_held_then_flushed_by_finish() -> None:
    f = Framer()
    assert f.feed(GGA[:20]) == []
    assert f.feed(GGA[20:]) == []  # no terminator yet
    assert f.finish() == [GGA]
    assert f.finish() == []


def test_aivdm_style_bang_start() -> None:
    line = b"!XXTST,1,2,3*00"  # "!" opens a sentence too (IEC 61162-1 encapsulation), invented body
    out, _ = whole(line + b"\r\n" + GGA + b"\r\n")
    assert out == [line, GGA]


def test_bang_inside_a_sentence_is_data() -> None:
    # NMEA reserves '!', but receivers put it in text and proprietary fields and checksum it with the
    # rest (a real log does so in every proprietary traffic sentence: see shared/realdata/SOURCES.md,
    # pysandbox_2020-10-04_20-24.nmea); splitting there turned each valid line into two refused ones
    txt = nmea("GPTXT,01,01,02,ANTENNA SHORT!")  # invented text, checksum computed by binkit.nmea
    prop = nmea("PXYZA,2,170,444,82,1,A1B2C3!TAG_A1B2C3,244,,29,,1")  # invented proprietary body
    bang = b"!XXTST,1,2,3*00"  # '!' still opens a sentence outside one (IEC 61162-1 encapsulation)
    data = txt + b"\r\n" + prop + b"\r\n" + bang + b"\r\n"
    out, counters = whole(data)
    assert out == [txt, prop, bang]
    assert counters[1:] == (3, 0, 0, 0, 0)
    assert bytewise(data) == (out, counters)
    d = Decoder()
    assert isinstance(d.decode(txt), Decoded)  # whole line, checksum valid (NMEA 0183 XOR)


def test_buffer_bounded_on_endless_garbage_without_terminator() -> None:
    f = Framer(max_len=64)
    for _ in range(200):
        f.feed(b"$" + b"A" * 1000)
        assert f.buffered <= 65
    assert f.counters.overlong == 200


# Binary frames (built in binkit from the RTCM 10403.x and 0xB5 0x62 layouts) with `$`, CR and LF in
# their payloads, a frame with a wrong checksum, and bare sync bytes and headers cut short.
FRAMES = [rtcm3(b"$GPGGA,\r\n" + bytes(range(40))), b562(0x01, 0x07, b"x$y\r\n!" * 5), rtcm3(b""),
          b562(0x0A, 0x04, b"")]
BROKEN = [b562(0x01, 0x07, b"$GP")[:-1] + b"\x00", b"\xd3", b"\xd3\x00", b"\xb5", b"\xb5\x62\x01\x02\x05",
          b"\xd3\xfc\x00"]
pieces = st.lists(st.sampled_from([*PUBLIC, b"\r\n", b"\n", b"\r", b"$", b"!", b"*", b"\x00\xff",
                                   b"junk", b"$GP" + b"x" * 100, *FRAMES, *BROKEN]), max_size=30)


@settings(max_examples=150, deadline=None)
@given(pieces, st.lists(st.integers(min_value=0, max_value=4000), max_size=40))
def test_any_split_gives_identical_output(parts: list[bytes], cuts: list[int]) -> None:
    data = b"".join(parts)
    ref = whole(data, max_len=64)
    assert split(data, [c for c in cuts if c <= len(data)], max_len=64) == ref
    assert bytewise(data, max_len=64) == ref
    # nothing is lost: every byte is in a sentence, a terminator, junk, a binary frame or an overlong line
    out, (nbytes, lines, junk, _over, nframes, nbin) = ref
    assert nbytes == len(data) and lines == len(out)
    assert junk + nbin + sum(map(len, out)) <= nbytes
    # frames are found only where whole ones were placed (a checksum does not match by chance here)
    assert nframes <= sum(p in FRAMES for p in parts)
