"""The C record scan of a replay (livefix/record/_reccore.c) against the reference,
RecordingReader._part in livefix/record/reader.py: the same items (type, floats by float.hex, payload
bytes), damage text, record count, `clean` and parts, on every repo recording (plain, gzip, rotated),
on recordings of every simulator dialect and of the real-data corpus, on every cut and every flipped
byte of a small recording, on heads only the reference reads, and on seeded random recordings and
damage (bench/fuzz_reader.py, also run by `make fuzz`); and its CRC against zlib.crc32."""

from __future__ import annotations

import gzip
import os
import random
import threading
import zlib
from pathlib import Path

import pytest
from twinkit import CORPUS, CORPUS_FILES, bench_module

from livefix.items import Chunk, LinkEvent, Marker
from livefix.record import fmt, reader
from livefix.record.reader import RecordingReader
from livefix.record.writer import Recorder
from livefix.sim import Scenario, SimReceiver
from livefix.sim.dialects import DIALECTS
from livefix.sources import open_source

core = pytest.importorskip("livefix.record._reccore", reason="livefix.record._reccore is not built (no compiler?)")

FUZZ = bench_module("fuzz_reader")  # the generators and comparison `make fuzz` runs under the sanitizers
RECORDINGS = sorted((Path(__file__).resolve().parents[2] / "recordings").glob("*.lfr"))
BLOCKS = [1, 13, 128, 4096, None]  # read sizes of the scan (None: reader.SCAN_BLOCK)


def same(path: Path, blocks: list[int | None] = BLOCKS, handed: bool | None = None) -> None:
    """Both paths read path alike with each read size; handed: whether the scan must hand back."""
    for block in blocks:
        why, back = FUZZ.compare(path, block)
        assert why is None, why
        if handed is not None:
            assert back is handed, (path.name, block)


def record(path: Path, items: list, **kw) -> Path:  # noqa: ANN003
    rec = Recorder(path, source="test", **kw)
    for it in items:
        rec.write(it)
    rec.close()
    assert rec.error is None
    return path


def test_the_switch(monkeypatch: pytest.MonkeyPatch) -> None:
    p = RECORDINGS[0]
    monkeypatch.delenv("LIVEFIX_PURE", raising=False)
    assert RecordingReader(p)._core is core
    monkeypatch.setenv("LIVEFIX_PURE", "1")
    assert RecordingReader(p)._core is None and RecordingReader(p, native=True)._core is core
    monkeypatch.setattr(reader, "_CORE", None)
    with pytest.raises(RuntimeError, match="not built"):
        RecordingReader(p, native=True)


def test_caps_match_the_python_constants() -> None:
    assert (core.MAX_RECORD_LINE, core.MAX_PAYLOAD) == (fmt.MAX_RECORD_LINE, reader.MAX_PAYLOAD)


@pytest.mark.parametrize("simd", [True, False])
def test_crc_is_zlibs(simd: bool) -> None:
    # the CRC-32 check value of "123456789" (the CRC catalogue's CRC-32/ISO-HDLC entry; from memory)
    assert core.crc32(b"123456789", simd) == 0xCBF43926 == zlib.crc32(b"123456789")
    rnd = random.Random(5)
    for n in [*range(0, 300), 1023, 1024, 6500, 65536, 262145]:
        data = rnd.randbytes(n)
        assert core.crc32(data, simd) == zlib.crc32(data), n
    for data in (b"\x00" * 4096, b"\xff" * 4096, memoryview(b"x" * 100)[3:]):
        assert core.crc32(data, simd) == zlib.crc32(data)


@pytest.mark.parametrize("name", [p.name for p in RECORDINGS])
def test_repo_recordings(name: str, tmp_path: Path) -> None:
    path = RECORDINGS[[p.name for p in RECORDINGS].index(name)]
    same(path, [None, 4096], handed=False)  # whole and clean: the scan reads every record itself
    items = list(RecordingReader(path, native=False).items())[:1500]
    same(record(tmp_path / "z.lfr.gz", items, compress="gzip"), [None, 777], handed=False)
    rec = Recorder(tmp_path / "rot.lfr", rotate_s=20.0)
    for it in items:
        rec.write(it)
    rec.close()
    assert len(rec.paths) > 3
    same(tmp_path / "rot.lfr", [None, 999], handed=False)


@pytest.mark.parametrize("dialect", ["clean", *DIALECTS])
def test_simulator_dialects(dialect: str, tmp_path: Path) -> None:
    rx = SimReceiver(Scenario.load("rooftop"), rate_hz=10, seed=3, dialect=dialect)
    items: list = [LinkEvent(0.0, 1.7e9, "streaming", "sim")]
    items += [Chunk(mono, 1.7e9 + mono, chunk) for mono, chunk in rx.epochs(15.0)]
    items.append(Marker(15.5, 1.7e9 + 15.5, f"dialect {dialect}"))
    same(record(tmp_path / "d.lfr", items), [None, 300], handed=False)


@pytest.mark.skipif(not CORPUS_FILES, reason="the real-data corpus is not here")
@pytest.mark.parametrize("name", CORPUS_FILES)
def test_corpus_logs_recorded(name: str, tmp_path: Path) -> None:
    items = list(open_source(str(CORPUS / name), speed=None).items(threading.Event()))
    same(record(tmp_path / "c.lfr", items[:3000]), [None, 500], handed=False)


def small(tmp_path: Path) -> tuple[Path, bytes]:
    items = [LinkEvent(1.0, 2.0, "streaming", "tcp ok"), Marker(1.5, 2.5, "é note")]
    items += [Chunk(2.0 + i / 10, 3.0 + i / 10, b"$GPTXT,%03d*00\r\n" % i) for i in range(6)]
    p = record(tmp_path / "s.lfr", items)
    return p, p.read_bytes()


def test_every_cut(tmp_path: Path) -> None:
    p, data = small(tmp_path)
    q = tmp_path / "cut.lfr"
    for cut in range(len(data) + 1):
        q.write_bytes(data[:cut])
        same(q, [None, 7])
    z = tmp_path / "cut.lfr.gz"
    packed = gzip.compress(data, mtime=0)
    for cut in range(len(packed) + 1):
        z.write_bytes(packed[:cut])
        same(z, [None, 7])


def test_every_flipped_byte(tmp_path: Path) -> None:
    p, data = small(tmp_path)
    q = tmp_path / "flip.lfr"
    for at in range(len(data)):
        for bit in (0, 5):
            b = bytearray(data)
            b[at] ^= 1 << bit
            q.write_bytes(bytes(b))
            same(q, [None, 64])


def test_damage_text_is_the_references(tmp_path: Path) -> None:
    p, data = small(tmp_path)
    at = data.index(b"$GPTXT,002")
    q = tmp_path / "c.lfr"
    q.write_bytes(data[:at + 3] + b"X" + data[at + 4:])
    r = RecordingReader(q, native=True)
    got = list(r.items())
    assert len(got) == 4 and r.records == 4 and not r.clean
    assert r.damage == (f"c.lfr: stopped at record 5, byte offset {data.rindex(b'@D', 0, at)}: "
                        "CRC mismatch (damaged record); 4 records before it are intact")


HEADS_THE_REFERENCE_READS = [  # accepted by _parse_head (float(), int(), int(x, 16)), never written
    b"@D inf 2.0 3 %s\n", b"@D nan 2.0 3 %s\n", b"@D \t1.5 2.0 3 %s\n",
    b"@D 1_0.5 2.0 3 %s\n", b"@D .5 2.0 3 %s\n", b"@D 5. 2.0 3 %s\n", b"@D +2.0 2.0 3 %s\n",
    b"@D 1.0 2.0 +3 %s\n", b"@D 1.0 2.0 0_3 %s\n", b"@D 1.0 2.0 3 0x%s\n",
    b"@D 1.0 2.0 3 %s\r\n", b"@D 1.0 2.0 3 +%s\n", b"@D 1.0 2.0 3 0%s\n",
]


@pytest.mark.parametrize("head", HEADS_THE_REFERENCE_READS)
def test_heads_only_the_reference_reads(head: bytes, tmp_path: Path) -> None:
    p, data = small(tmp_path)
    odd = head % b"%08x" % zlib.crc32(b"abc") + b"abc\n"
    q = tmp_path / "odd.lfr"
    first, rest = data.split(b"\n@", 1)
    end = rest.index(b"\n@E")
    q.write_bytes(first + b"\n@" + rest[:end + 1] + odd + rest[end + 1:])
    same(q, [None, 5], handed=True)
    items = list(RecordingReader(q, native=True).items())
    assert len(items) == 9 and items[-1].data == b"abc"  # read, not damage


def test_kinds_fmt_decode_reads(tmp_path: Path) -> None:
    """Every kind but D and E goes through fmt.decode, as in the reference: L, M, and unknown kinds
    (a newer writer's) counted but not delivered; none of it is a hand-back."""
    q = tmp_path / "k.lfr"
    body = [fmt.record(k, 1.0 + i, 2.0 + i, pl) for i, (k, pl) in enumerate(
        [("L", b"lost read error: EIO"), ("L", b"\xff x"), ("M", b"\xc3 note"), ("X", b"future"),
         ("~", b""), ("D", b"$GP\r\n")])]
    q.write_bytes(fmt.header_line({"source": "t"}) + b"".join(body) + fmt.end_record(9.0, 9.0, "closed"))
    same(q, [None, 1], handed=False)
    r = RecordingReader(q, native=True)
    got = list(r.items())
    assert [type(x).__name__ for x in got] == ["LinkEvent", "LinkEvent", "Marker", "Chunk"]
    assert r.records == 6 and r.clean and got[1].state == "\ufffd" and got[1].detail == "x"


def test_big_payload_across_blocks(tmp_path: Path) -> None:
    data = random.Random(2).randbytes(3 * reader.SCAN_BLOCK + 5)
    q = record(tmp_path / "big.lfr", [Chunk(1.0, 2.0, data), Chunk(1.5, 2.5, b"x")])
    same(q, [None, 1000], handed=False)
    assert [len(c.data) for c in RecordingReader(q, native=True).items()] == [len(data), 1]


def test_scan_arguments() -> None:
    slots = reader._CHUNK_SLOTS
    assert core.scan(b"", 0, slots, fmt.decode) == ([], 0, 0, core.SCAN_MORE, 0)
    with pytest.raises(TypeError):
        core.scan(bytearray(b"@"), 0, slots, fmt.decode)
    with pytest.raises(ValueError):
        core.scan(b"abc", 4, slots, fmt.decode)
    with pytest.raises(ValueError):
        core.scan(b"abc", -1, slots, fmt.decode)
    for bad in [(), (Chunk.mono, Chunk.mono, Chunk.data), (Chunk.mono, Chunk.wall), (LinkEvent.mono, LinkEvent.wall,
                LinkEvent.state), (Chunk.mono, Chunk.wall, Chunk.data, Chunk.data), [Chunk.mono, Chunk.wall, Chunk.data],
                (Chunk.mono, Chunk.wall, Marker.note)]:
        with pytest.raises(TypeError):
            core.scan(b"", 0, bad, fmt.decode)
    rec = fmt.record("D", 1.0, 2.0, b"abc") + fmt.record("L", 1.0, 2.0, b"x")

    def boom(*a: object) -> None:
        raise KeyError("from decode")

    with pytest.raises(KeyError, match="from decode"):  # an error of decode comes through
        core.scan(rec, 0, slots, boom)
    items, pos, n, status, need = core.scan(rec + b"@D 1.0 2.0 10 00000000\nabc", 0, slots, fmt.decode)
    assert (items, pos, n, status, need) == ([Chunk(1.0, 2.0, b"abc"), LinkEvent(1.0, 2.0, "x", "")], len(rec), 2,
                                             core.SCAN_MORE, 34)
    assert core.scan(rec + b"@D 1.0 2.0 1 00000000\nab", 0, slots, fmt.decode)[1:4] == (len(rec), 2, core.SCAN_ODD)
    assert core.scan(rec + b"@D " + b"1" * 200, 0, slots, fmt.decode)[1:4] == (len(rec), 2, core.SCAN_ODD)
    assert core.scan(rec + b"@D " + b"1" * 100, 0, slots, fmt.decode)[1:4] == (len(rec), 2, core.SCAN_MORE)


@pytest.mark.parametrize("seed", range(int(os.environ.get("LIVEFIX_FUZZ_SEEDS", "4"))))
def test_random_recordings_and_damage(seed: int) -> None:
    n, handed, bad, examples = FUZZ.diff(400, seed)
    assert bad == 0, examples
    assert 0 < handed < n  # both the scan's own path and its hand-backs were compared
