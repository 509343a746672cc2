"""Recording format: byte-exact round trip, gzip, rotation, damaged and truncated tails, write errors."""

from __future__ import annotations

import gzip
import os
import random

import pytest

from livefix.record.reader import RecordingReader, is_recording
from livefix.record.writer import Recorder
from livefix.sources.base import Chunk, LinkEvent, Marker


def sample_items(n: int = 300, seed: int = 7) -> list:
    rnd = random.Random(seed)
    out: list = [LinkEvent(10.0, 1.7e9, "connecting", "tcp://127.0.0.1:1"),
                 LinkEvent(10.1, 1.7e9 + 0.1, "streaming", "")]
    mono, wall = 10.123456789, 1.7e9 + 0.123456789
    for i in range(n):
        mono += rnd.random() * 0.2
        wall += rnd.random() * 0.2
        kind = rnd.random()
        if kind < 0.03:
            out.append(Marker(mono, wall, f"moved antenna {i}\nsecond line é"))
        elif kind < 0.05:
            out.append(LinkEvent(mono, wall, "stalled", "no bytes for 2.1 s"))
        else:  # any bytes at all: NMEA, binary noise, bare CR, '@' and newlines that look like records
            out.append(Chunk(mono, wall, bytes(rnd.randrange(256) for _ in range(rnd.randrange(0, 300)))))
    out.append(Chunk(mono + 1, wall + 1, b"\n@D 1 2 3 00000000\n$GPGGA,,*00\r\n"))
    return out


def write_all(path, items, **kw) -> Recorder:  # noqa: ANN001
    rec = Recorder(path, source="test", notes="roof, north side", **kw)
    for it in items:
        rec.write(it)
    rec.close()
    assert rec.error is None
    return rec


def test_round_trip_is_exact(tmp_path) -> None:
    items = sample_items()
    p = tmp_path / "a.lfr"
    write_all(p, items)
    r = RecordingReader(p)
    assert r.header["format"] == "livefix-recording" and r.header["notes"] == "roof, north side"
    assert list(r.items()) == items  # data byte-exact, times exact (repr), notes and details intact
    assert r.damage is None and r.clean
    assert is_recording(p)


def test_gzip_round_trip_and_standard_gunzip(tmp_path) -> None:
    items = sample_items(seed=3)
    plain, packed = tmp_path / "p.lfr", tmp_path / "p.lfr.gz"
    write_all(plain, items)
    write_all(packed, items, compress="gzip")
    r = RecordingReader(packed)
    assert list(r.items()) == items and r.damage is None
    # the compressed file is ordinary gzip (RFC 1952): Python's gzip module reads the same records
    a, b = gzip.decompress(packed.read_bytes()).split(b"\n", 1), plain.read_bytes().split(b"\n", 1)
    assert a[1].rsplit(b"@E ", 1)[0] == b[1].rsplit(b"@E ", 1)[0]


def test_truncated_tail_reads_whole_records_and_says_where(tmp_path) -> None:
    items = [Chunk(1.0 + i, 2.0 + i, b"$GPTXT,%03d*00\r\n" % i) for i in range(20)]
    p = tmp_path / "t.lfr"
    write_all(p, items)
    data = p.read_bytes()
    offsets = [i for i in range(len(data)) if data.startswith(b"@D ", i)]
    cut = offsets[12] + 30  # inside record 13 (its header line is whole, payload cut)
    q = tmp_path / "cut.lfr"
    q.write_bytes(data[:cut])
    r = RecordingReader(q)
    assert list(r.items()) == items[:12]
    assert r.damage == (f"cut.lfr: stopped at record 13, byte offset {offsets[12]}: truncated record; "
                        "12 records before it are intact")
    # cut inside a record header line
    q.write_bytes(data[: offsets[5] + 4])
    r = RecordingReader(q)
    assert list(r.items()) == items[:5] and "record 6" in r.damage and "truncated" in r.damage


def test_flipped_byte_is_caught_by_crc(tmp_path) -> None:
    items = [Chunk(1.0 + i, 2.0 + i, b"$GPTXT,%03d*00\r\n" % i) for i in range(5)]
    p = tmp_path / "c.lfr"
    write_all(p, items)
    data = bytearray(p.read_bytes())
    at = data.index(b"$GPTXT,002")
    data[at + 8] ^= 0x01
    p.write_bytes(bytes(data))
    r = RecordingReader(p)
    assert list(r.items()) == items[:2] and "record 3" in r.damage and "CRC" in r.damage


def test_truncated_gzip_reads_up_to_last_flush(tmp_path) -> None:
    items = [Chunk(1.0 + i, 2.0 + i, b"$GPTXT,%03d*00\r\n" % i) for i in range(50)]
    p = tmp_path / "g.lfr.gz"
    rec = Recorder(p, compress="gzip")
    for it in items[:30]:
        rec.write(it)
    rec.flush()  # a sync flush point, as the flusher makes every half second
    size = p.stat().st_size
    for it in items[30:]:
        rec.write(it)
    rec.close()
    q = tmp_path / "g2.lfr.gz"
    q.write_bytes(p.read_bytes()[: size + 7])  # killed a little after the flush
    r = RecordingReader(q)
    got = list(r.items())
    assert got == items[:30]
    assert r.damage is None and not r.clean  # whole records only; no end record = not closed


def test_rotation_into_numbered_parts_read_back_in_order(tmp_path) -> None:
    items = [Chunk(float(i), 1.7e9 + i, b"$GPTXT,%03d*00\r\n" % i) for i in range(36)]
    base = tmp_path / "soak.lfr"
    rec = write_all(base, items, rotate_s=10.0)
    names = [p.name for p in rec.paths]
    assert names == ["soak.0001.lfr", "soak.0002.lfr", "soak.0003.lfr", "soak.0004.lfr"]
    assert not base.exists()
    for p in rec.paths:
        assert is_recording(p)
    for start in (base, rec.paths[0]):
        r = RecordingReader(start)
        assert list(r.items()) == items and r.damage is None
        assert [p.name for p in r.paths] == names
    # given a later part, reading starts there
    r = RecordingReader(rec.paths[2])
    assert list(r.items()) == items[20:]
    # gzip + rotation
    rec = write_all(tmp_path / "z.lfr", items, rotate_s=10.0, compress="gzip")
    assert rec.paths[0].name == "z.0001.lfr.gz"
    assert list(RecordingReader(tmp_path / "z.lfr").items()) == items


def test_existing_file_is_never_overwritten(tmp_path) -> None:
    p = tmp_path / "x.lfr"
    p.write_bytes(b"keep me")
    with pytest.raises(FileExistsError):
        Recorder(p)
    assert p.read_bytes() == b"keep me"


def test_disk_full_sets_error_and_never_raises() -> None:
    if not os.path.exists("/dev/full"):
        pytest.skip("no /dev/full")
    rec = Recorder("/dev/full", exclusive=False)  # every write fails with ENOSPC (Linux null(4))
    rec.write(Chunk(1.0, 2.0, b"x" * 10))
    rec.flush()
    rec.close()
    assert rec.error and "No space left on device" in rec.error


def test_plain_log_is_not_a_recording(tmp_path) -> None:
    p = tmp_path / "log.nmea"
    p.write_bytes(b"$GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,*47\r\n")
    assert not is_recording(p)
    r = RecordingReader(p)
    assert r.header["format"] == "nmea-log"
    assert b"".join(it.data for it in r.items() if type(it) is Chunk) == p.read_bytes()
