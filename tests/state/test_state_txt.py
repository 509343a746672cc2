"""Receiver TXT sentences become rate-limited, length-capped "note" events (stream text is data)."""

from pynmeagps import calc_checksum

from livefix.decode.decoder import Decoder
from livefix.state.model import TXT_MAX, TXT_PER_S, StateModel


def _txt(text: str) -> bytes:
    body = f"GPTXT,01,01,02,{text}"
    return f"${body}*{calc_checksum(body)}".encode()  # NMEA 0183 checksum via pynmeagps


def test_txt_is_a_note_event_capped_and_rate_limited() -> None:
    # Issue 16: the first sight of each distinct text (up to livefix.state.texts.MAX_TEXTS per
    # session) passes the cap, so a start-up banner is kept; repeats stay under TXT_PER_S a second.
    # (Before, ten distinct texts in one second gave TXT_PER_S events; now they are ten first sights.)
    dec, st = Decoder(), StateModel()
    for i in range(10):  # ten repeats of one text within one second of stream time
        st.on_sentence(dec.decode(_txt("ANTENNA OK " + "X" * 200)), 100.0 + i * 0.05, 1e9)
    notes = [e for e in st.drain_events() if e.kind == "note"]
    # the first is a first sight (counted in the second's window), then one more repeat is allowed
    assert len(notes) == TXT_PER_S and st.txt_suppressed == 10 - TXT_PER_S
    assert notes[0].text.startswith("receiver text: ANTENNA OK X")
    assert len(notes[1].text) <= len("receiver text: ") + TXT_MAX
    st.on_sentence(dec.decode(_txt("ANTENNA OPEN")), 102.0, 1e9)  # a new second: shown again
    assert [e.text for e in st.drain_events()] == ["receiver text: ANTENNA OPEN"]
