"""A file replay knows its position and length (issue 15 item 2: the header shows REPLAY ×N with
position and length): the length comes from the record heads alone, compressed or not."""

from __future__ import annotations

import gzip
import threading
import time
from pathlib import Path

from livefix.sources.file import FileSource, last_record_mono

RECORDINGS = Path(__file__).resolve().parents[2] / "recordings"


def test_length_of_the_demo_recording() -> None:
    # recordings/README.md: 5 minutes of simulated data; the reader's own last item agrees
    from livefix.record.reader import RecordingReader

    items = list(RecordingReader(str(RECORDINGS / "rooftop-5min.lfr")).items())
    assert last_record_mono(str(RECORDINGS / "rooftop-5min.lfr")) == max(i.mono for i in items)


def test_length_of_an_uncompressed_copy_and_a_plain_log(tmp_path: Path) -> None:
    plain_rec = tmp_path / "r.lfr"
    with gzip.open(RECORDINGS / "rooftop-5min.lfr", "rb") as f:
        plain_rec.write_bytes(f.read())
    assert last_record_mono(str(plain_rec)) == last_record_mono(str(RECORDINGS / "rooftop-5min.lfr"))
    log = tmp_path / "x.nmea"
    log.write_bytes(b"$GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,*47\r\n")
    src = FileSource(str(log))
    assert src.length_s is None  # a plain log has no record heads: position only


def test_position_and_length_while_replaying() -> None:
    src = FileSource(str(RECORDINGS / "rooftop-5min.lfr"), speed=None)
    it = src.items(threading.Event())
    for _ in range(50):
        next(it)
    end = time.monotonic() + 5
    while src.length_s is None and time.monotonic() < end:  # scanned on a helper thread
        time.sleep(0.05)
    # 5 min at 10 Hz: last epoch at 299.9 s after the first item (recordings/README.md)
    assert src.length_s is not None and 299.0 <= src.length_s <= 300.5
    assert 0.0 <= src.position_s < src.length_s
