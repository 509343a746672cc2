"""The one NMEA 0183 checksum, and the places that used to keep their own copy."""

from __future__ import annotations

import pytest
from hypothesis import given
from hypothesis import strategies as st
from pynmeagps import calc_checksum

from livefix.check.profile import restart_sentence
from livefix.checksum import checksum_hex, sentence_ok, with_checksum, xor_checksum
from livefix.sim import nmea
from livefix.sources.link import nmea_ok

# Public example sentence with its published checksum (docs/sources.md#example-sentences)
GGA = "$GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,*47"


def test_published_example() -> None:
    body = GGA[1:GGA.index("*")]
    assert checksum_hex(body) == "47"  # docs/sources.md#example-sentences: the example's stated checksum
    assert with_checksum(body) == GGA
    assert sentence_ok(GGA.encode() + b"\r\n") and nmea_ok(GGA.encode())


@given(st.text(alphabet=st.characters(min_codepoint=32, max_codepoint=126, blacklist_characters="$*!"),
               min_size=2, max_size=300))  # $, *, hh and two characters: the shortest line accepted
def test_every_user_agrees_with_the_reference(body: str) -> None:
    ref = calc_checksum(body)  # reference: pynmeagps calc_checksum (XOR between '$' and '*')
    assert checksum_hex(body) == ref == nmea.checksum(body)
    assert f"{xor_checksum(body.encode()):02X}" == ref
    assert restart_sentence("$" + body) == f"${body}*{ref}\r\n".encode()
    assert sentence_ok(f"${body}*{ref}".encode()) and sentence_ok(f"!{body}*{ref.lower()}".encode())


@pytest.mark.parametrize("line", [
    b"$GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,*48",  # one off the published 47
    b"$GPGGA,123519*4",  # one hex digit
    b"$GPGGA,123519*ZZ",  # not hex
    b"GPGGA,123519*47",  # no start character
    b"$*00",  # shorter than the shortest frame
])
def test_refused_lines(line: bytes) -> None:
    assert not sentence_ok(line)


def test_xor16_table_is_the_xor_of_both_bytes() -> None:
    # XOR16 is built by doubling and bytes.translate (start-up); its definition, entry by entry:
    # the XOR of the two bytes of a 16-bit value (NMEA 0183's checksum is a bytewise XOR)
    from livefix.checksum import XOR16

    assert len(XOR16) == 65536
    assert all(XOR16[i] == (i >> 8) ^ (i & 255) for i in range(65536))
