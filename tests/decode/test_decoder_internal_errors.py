"""livefix's own decoder errors are counted apart from malformed input, logged with their traceback,
and reach the snapshot and the reports ("livefix internal errors: N — please report")."""

from __future__ import annotations

import logging

import pytest

from livefix.checksum import with_checksum
from livefix.decode import INTERNAL, MALFORMED, Rejected
from livefix.decode.decoder import Decoder
from livefix.items import Chunk
from livefix.pipeline import Pipeline
from livefix.report.document import ReceiverRun, build_report
from livefix.report.markdown import render_markdown

TXT = (with_checksum("GPTXT,01,01,02,ANTENNA OK") + "\r\n").encode()  # not a fast-path type


class BrokenDecoder(Decoder):
    """A deliberate fault inside livefix: the general path raises on every line."""

    def _decode(self, line: bytes):  # noqa: ANN202
        raise RuntimeError("deliberate fault")


def test_an_internal_error_is_not_a_malformed_line(caplog: pytest.LogCaptureFixture) -> None:
    dec = BrokenDecoder()
    with caplog.at_level(logging.ERROR, logger="livefix"):
        got = dec.decode(TXT.rstrip(b"\r\n"))
    assert isinstance(got, Rejected) and got.reason == INTERNAL  # not MALFORMED
    c = dec.counters
    # hand count: one line in, one internal error, nothing refused as bad input
    assert (c.internal_errors, c.malformed, c.bad_checksum, c.unknown) == (1, 0, 0, 0)
    assert c.last_internal_error == "Decoder.decode: RuntimeError: deliberate fault"
    # logged with its traceback, naming the place that raised
    rec = [r for r in caplog.records if r.name == "livefix"]
    assert len(rec) == 1 and rec[0].exc_info is not None
    assert "deliberate fault" in caplog.text and "Traceback" in caplog.text and "_decode" in caplog.text


def test_bad_input_is_still_malformed_and_not_internal() -> None:
    dec = Decoder()
    got = dec.decode(b"$GPGGA,1,2,3")  # no '*hh': a cut line (NMEA 0183 requires the checksum here)
    assert isinstance(got, Rejected) and got.reason != INTERNAL
    assert dec.counters.malformed == 1 and dec.counters.internal_errors == 0
    assert MALFORMED != INTERNAL


def test_the_count_reaches_the_snapshot_and_the_report(caplog: pytest.LogCaptureFixture) -> None:
    p = Pipeline()
    p.decoder = BrokenDecoder()
    with caplog.at_level(logging.CRITICAL, logger="livefix"):
        for k in range(3):
            p.feed(Chunk(float(k), 1.7e9 + k, TXT))
        p.finish()
    snap = p.snapshot()
    assert snap.counters.internal_errors == 3 and snap.counters.malformed == 0  # three lines fed
    assert snap.analysis["internal_errors"] == 3
    assert p.analyzer.internal_errors == 0  # the analysis itself raised nothing
    doc = build_report([ReceiverRun(name="rx", source="test", analysis=snap.analysis)])
    assert "livefix internal errors | 3 — please report" in render_markdown(doc)


def test_a_clean_run_reports_zero() -> None:
    p = Pipeline()
    for k in range(3):
        p.feed(Chunk(float(k), 1.7e9 + k, TXT))
    p.finish()
    snap = p.snapshot()
    assert snap.counters.internal_errors == 0 and snap.analysis["internal_errors"] == 0
    doc = build_report([ReceiverRun(name="rx", source="test", analysis=snap.analysis)])
    md = render_markdown(doc)
    assert "livefix internal errors | 0 |" in md and "please report" not in md
