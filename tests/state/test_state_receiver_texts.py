"""Distinct receiver texts (livefix/state/texts.py): a start-up banner faster than the TXT cap is
kept whole; memory stays bounded (first 20 distinct, 120 characters each, control characters out)."""

from __future__ import annotations

from pynmeagps import calc_checksum

from livefix.decode.decoder import Decoder
from livefix.state.model import StateModel
from livefix.state.texts import MAX_CHARS, MAX_TEXTS, ReceiverTexts, clean_text


def _txt(text: str, n: int = 1, k: int = 1) -> bytes:
    # NMEA 0183 4.10 TXT: total, number, text identifier (02 notice), text; checksum via pynmeagps
    body = f"GPTXT,{n:02d},{k:02d},02,{text}"
    return f"${body}*{calc_checksum(body)}".encode()


def test_banner_burst_passes_the_cap() -> None:
    banner = ["MODEL TEST-RX A", "FW 1.2.3", "HW REV C", "BUILD 2026-01-02", "ANTENNA OK"]
    dec, st = Decoder(), StateModel()
    for k, text in enumerate(banner, 1):  # all within 10 ms of stream time
        st.on_sentence(dec.decode(_txt(text, len(banner), k)), 5.0 + k * 0.002, 1.7e9)
    firsts = [e for e in st.drain_events() if e.kind == "note" and e.data.get("first")]
    assert [e.data["receiver_text"] for e in firsts] == banner  # 5 of 5, in order
    assert st.txt_suppressed == 0


def test_bounded_first_distinct() -> None:
    t = ReceiverTexts()
    got = [t.add(f"status {i}") for i in range(MAX_TEXTS + 10)]
    assert got[:MAX_TEXTS] == [f"status {i}" for i in range(MAX_TEXTS)]
    assert got[MAX_TEXTS:] == [None] * 10 and len(t.texts) == MAX_TEXTS == 20  # the bound
    t2 = ReceiverTexts()
    assert t2.add("same") == "same" and t2.add("same") is None and t2.add("  same ") is None


def test_clean_text() -> None:
    assert clean_text("A\x1b[2JB\x07C\tD") == "A [2JB C D"  # ESC, BEL and TAB become spaces, folded
    assert len(clean_text("Y" * 500)) == MAX_CHARS == 120
    assert clean_text("\x00\x01") == ""


def test_many_distinct_texts_then_capped() -> None:
    """After MAX_TEXTS first sights, new texts go back under the rate cap (flood protection)."""
    dec, st = Decoder(), StateModel()
    for i in range(100):  # one hundred distinct texts in 1 s
        st.on_sentence(dec.decode(_txt(f"counter {i}")), 10.0 + i * 0.01, 1.7e9)
    notes = [e for e in st.drain_events() if e.kind == "note"]
    assert sum(1 for e in notes if e.data.get("first")) == MAX_TEXTS
    assert len(notes) == MAX_TEXTS  # the cap (TXT_PER_S) was already used up by the first sights
    assert st.txt_suppressed == 100 - MAX_TEXTS
