"""An exception inside one statistic is livefix's own error: counted, logged with its traceback
(a bounded number of times), and the other statistics go on."""

from __future__ import annotations

import logging

import pytest

from livefix import faults
from livefix.analysis.engine import Analyzer
from livefix.pipeline import StreamCounters
from livefix.state.epoch import Epoch

T0 = 1.7e9


def broken_stage(ep: Epoch) -> None:
    raise ZeroDivisionError("deliberate fault")


def test_a_failing_stage_is_counted_logged_and_the_rest_runs(caplog: pytest.LogCaptureFixture) -> None:
    a = Analyzer()
    a._epoch_stages = (broken_stage, *a._epoch_stages)  # a deliberate fault ahead of the real stages
    n = faults.FULL_LOGS + 5
    with caplog.at_level(logging.ERROR, logger="livefix"):
        for k in range(n):
            a.on_epoch(Epoch(mono=float(k), wall=T0 + k, utc=T0 + k, quality=1, lat=47.0, lon=8.0, h=500.0))
    snap = a.snapshot(StreamCounters())
    assert a.internal_errors == n == snap["internal_errors"]  # one per epoch fed (hand count)
    assert snap["last_error"] == "broken_stage: ZeroDivisionError: deliberate fault"
    logged = [r for r in caplog.records if r.name == "livefix"]
    # livefix.faults: the first FULL_LOGS in full, then every EVERY-th (none more below 1000)
    assert len(logged) == faults.FULL_LOGS and all(r.exc_info for r in logged)
    assert "Traceback" in caplog.text and "broken_stage" in caplog.text
    assert snap["fix"]["epochs"] == n  # the statistics after the broken stage still saw every epoch


def test_the_decoder_count_adds_to_the_snapshot() -> None:
    snap = Analyzer().snapshot(StreamCounters(internal_errors=2, last_internal_error="Decoder.decode: X: y"))
    assert snap["internal_errors"] == 2 and snap["last_error"] == "Decoder.decode: X: y"


def test_report_words() -> None:
    assert faults.report_line(0) == "0"
    assert faults.report_line(4) == "4 — please report"
