"""Session: reader + analysis threads, recording, shedding, controls, errors. Real files, our own
in-test Source iterators (not mocks of I/O), real Recorder/RecordingReader/FileSource."""

from __future__ import annotations

import threading
import time
from collections.abc import Iterator
from pathlib import Path

from pynmeagps import calc_checksum

from livefix.pipeline import Snapshot
from livefix.record.reader import RecordingReader
from livefix.session import Session
from livefix.sources.base import Chunk, Item, Link, LinkEvent, Marker, SourceError
from livefix.sources.file import FileSource


def line(body: str) -> bytes:
    return f"${body}*{calc_checksum(body)}".encode()


def epoch_bytes(k: int) -> bytes:
    t = f"09{k // 60 % 60:02d}{k % 60:02d}.00"  # invented site and times
    return b"\r\n".join([line(f"GPGGA,{t},4512.50000,N,00730.00000,E,1,07,1.1,210.0,M,48.0,M,,"),
                         line("GPGSA,A,3,02,05,09,13,17,20,28,,,,,,1.9,1.1,1.5")]) + b"\r\n"


class ListSource:
    """A finite in-memory source; `gate` (optional) holds it before item `hold_at`."""

    finite = True

    def __init__(self, items: list[Item], gate: threading.Event | None = None, hold_at: int = -1,
                 fail_at: int = -1) -> None:
        self.name = "test://list"
        self._items, self._gate, self._hold, self._fail = items, gate, hold_at, fail_at
        self.closed = False
        self.sent: list[bytes] = []

    def items(self, stop: threading.Event) -> Iterator[Item]:
        for i, it in enumerate(self._items):
            if i == self._hold and self._gate is not None:
                while not self._gate.wait(0.05):
                    if stop.is_set():
                        return
            if i == self._fail:
                raise OSError("device vanished")
            if stop.is_set():
                return
            yield it

    def write(self, data: bytes) -> None:
        self.sent.append(data)

    def close(self) -> None:
        self.closed = True


def items(n: int) -> list[Item]:
    out: list[Item] = [LinkEvent(10.0, 1.8e9, Link.STREAMING)]
    out += [Chunk(10.0 + k, 1.8e9 + k, epoch_bytes(k)) for k in range(n)]
    return out


def test_finite_source_runs_to_done_with_final_snapshot(tmp_path: Path) -> None:
    seen: list[Snapshot] = []
    rec = tmp_path / "run.lfr"
    src = ListSource(items(30))
    s = Session(src, record_path=rec, publish_hz=50.0, on_snapshot=seen.append).start()
    assert s.wait(10.0) and s.done
    s.stop()
    snap = s.latest
    assert snap is not None and snap.finished and snap is seen[-1]
    assert snap.counters.lines == 60 and snap.counters.decoded == 60
    assert snap.epoch is not None and snap.epoch.pdop == 1.9
    assert snap.error is None and snap.dropped_chunks == 0 and snap.recording == str(rec)
    assert [x.seq for x in seen] == sorted(x.seq for x in seen)
    assert src.closed
    # the recording holds every item, byte for byte (read back with the real reader)
    back = [it for it in RecordingReader(rec).items()]
    assert [it for it in back if type(it) is Chunk] == [it for it in items(30) if type(it) is Chunk]


def test_controls_apply_in_stream_order(tmp_path: Path) -> None:
    gate = threading.Event()
    src = ListSource(items(20), gate=gate, hold_at=11)
    s = Session(src, publish_hz=0).start()
    deadline = time.monotonic() + 5
    while (s.latest is None or s.latest.counters.lines < 20) and time.monotonic() < deadline:
        time.sleep(0.01)
    rec = tmp_path / "late.lfr"
    s.start_recording(rec)
    m = s.add_marker("mast moved 2 m north")
    s.set_reference(45.2083, 7.5, 258.0)
    s.write(b"$PTEST,RESET*00\r\n")
    gate.set()
    assert s.wait(10.0)
    s.stop()
    assert src.sent == [b"$PTEST,RESET*00\r\n"]
    assert s.reference == (45.2083, 7.5, 258.0)
    assert m.mono == 19.0  # replay-like (finite) source: marker at the last item's stream time
    back = [it for it in RecordingReader(rec).items()]
    chunks = [it for it in back if type(it) is Chunk]
    assert [c.mono for c in chunks] == [10.0 + k for k in range(10, 20)]  # from the next item on
    assert [it.note for it in back if type(it) is Marker] == ["mast moved 2 m north"]
    kinds = [(e["kind"], e.get("text")) for e in s.latest.analysis["events"]]
    assert ("marker", "mast moved 2 m north") in kinds
    assert any(k == "recording" for k, _ in kinds)


def test_slow_analysis_sheds_chunks_but_records_all(tmp_path: Path) -> None:
    def slow(_: Snapshot) -> None:
        time.sleep(0.01)  # a sluggish reader of snapshots holds the analysis thread

    rec = tmp_path / "all.lfr"
    src = ListSource(items(60))
    s = Session(src, record_path=rec, publish_hz=0, on_snapshot=slow, queue_items=2, block_s=0.001)
    s.start()
    assert s.wait(20.0)
    s.stop()
    snap = s.latest
    assert snap.dropped_chunks > 0
    assert snap.counters.bytes + sum(len(epoch_bytes(0)) for _ in range(snap.dropped_chunks)) == \
        sum(len(epoch_bytes(k)) for k in range(60))
    assert sum(type(it) is Chunk for it in RecordingReader(rec).items()) == 60  # nothing lost on disk


def test_source_failure_becomes_error_and_link_event() -> None:
    src = ListSource(items(10), fail_at=5)
    s = Session(src, publish_hz=0).start()
    assert not s.wait(10.0)  # ended, but not by reaching the end of the source
    s.stop()
    snap = s.latest
    assert snap.error is not None and "device vanished" in snap.error
    assert snap.link == Link.LOST and "device vanished" in snap.link_detail
    assert snap.finished and src.closed


def test_callback_errors_do_not_stop_the_session() -> None:
    def broken(_: Snapshot) -> None:
        raise RuntimeError("ui gone")

    s = Session(ListSource(items(5)), publish_hz=0, on_snapshot=broken).start()
    assert s.wait(10.0)
    s.stop()
    assert "ui gone" in s.error and s.latest.counters.lines == 10


def test_stop_ends_an_endless_source() -> None:
    class Endless:
        name, finite = "test://endless", False

        def items(self, stop: threading.Event) -> Iterator[Item]:
            k = 0
            while not stop.wait(0.005):
                yield Chunk(float(k), 1.8e9 + k, epoch_bytes(k % 3600))
                k += 1

        def write(self, data: bytes) -> None:
            raise SourceError("read-only")

        def close(self) -> None:
            pass

    s = Session(Endless(), publish_hz=20.0).start()
    deadline = time.monotonic() + 5
    while s.latest is None and time.monotonic() < deadline:
        time.sleep(0.01)
    s.stop(timeout=5.0)
    assert not s.running and not s.done and s.latest.finished
    assert s.pause() is False  # live sources have no pause


def test_file_source_replay_and_passthrough(tmp_path: Path) -> None:
    log = tmp_path / "bench.nmea"
    log.write_bytes(b"".join(epoch_bytes(k) for k in range(20)))
    src = FileSource(str(log))
    s = Session(src, publish_hz=0)
    assert s.set_speed(None) and s.pause() and s.resume()
    s.start()
    assert s.wait(10.0)
    s.stop()
    assert s.latest.counters.decoded == 40 and s.latest.link == Link.ENDED
