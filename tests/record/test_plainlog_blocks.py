"""Plain logs read a block at a time (issue 17 item 5) give exactly the items of the line-by-line
reference: PlainStamper.feed on every line as repeated readline(CHUNK_MAX) cuts the file.

The reference is the stamper's own per-line path, so these are identity checks: every Chunk and
LinkEvent equal field by field, in the same order, on public logs, the demo recordings, every
simulator dialect and a seeded fuzz of mutated logs, with several block sizes. Fixture sentences
carry the NMEA 0183 checksum (XOR of the bytes between '$' and '*', docs/sources.md#checksum),
computed here by a loop of our own.
"""

from __future__ import annotations

import io
import json
import random
from pathlib import Path

import pytest

from livefix.items import Chunk
from livefix.pipeline import run_items
from livefix.record import linetime, plainblock, plainlog
from livefix.record.linetime import TimeReader, line_time
from livefix.record.plainlog import CHUNK_MAX, PlainStamper, iter_plain
from livefix.record.reader import RecordingReader
from livefix.sim import Scenario, SimReceiver
from livefix.sim.dialects import DIALECTS

ROOT = Path(__file__).resolve().parents[2]
CORPUS = ROOT / ".." / "shared" / "realdata" / "corpus"
CORPUS_FILES = sorted(p for p in CORPUS.glob("*") if p.is_file()) if CORPUS.is_dir() else []
RECORDINGS = sorted((ROOT / "recordings").glob("*.lfr"))
BLOCKS = (7, 100, 4096, 1 << 18)  # tiny blocks cut lines, CR LF pairs and '$...' types across blocks


def nmea(body: bytes, bad: bool = False, end: bytes = b"\r\n") -> bytes:
    cs = 0
    for ch in body:
        cs ^= ch  # NMEA 0183 checksum (docs/sources.md#checksum)
    return b"$%s*%02X%s" % (body, cs ^ (0x5A if bad else 0), end)


def reference(data: bytes, limit: int = CHUNK_MAX) -> tuple[list, PlainStamper]:
    """The per-line reference: feed() on each readline(limit) cut; the items and the stamper."""
    st, out, f = PlainStamper(), [], io.BytesIO(data)
    while line := f.readline(limit):
        out += st.feed(line)
    return out + st.finish(), st


def by_blocks(data: bytes, limit: int = CHUNK_MAX) -> list:
    return list(iter_plain(io.BytesIO(data), limit))


def counters(st: PlainStamper) -> tuple[int, int]:
    return st.time_faults, st.untimed_epochs


def assert_same(data: bytes, limit: int = CHUNK_MAX) -> list:
    ref, st = reference(data, limit)
    bt, got = PlainStamper(), []  # iter_plain's loop, with the stamper at hand for its counters
    for block in linetime.text_blocks(io.BytesIO(data), limit):
        got += bt.feed_lines(block) if type(block) is list else bt.feed_block(block)
    got += bt.finish()
    assert got == ref  # Chunk/LinkEvent are dataclasses: equal type and fields, in the same order
    assert counters(bt) == counters(st)
    assert by_blocks(data, limit) == ref
    assert b"".join(it.data for it in got if type(it) is Chunk) == data  # every byte kept, in order
    return got


# -- real and demo data ------------------------------------------------------------------------------
@pytest.mark.skipif(not CORPUS_FILES, reason="public log corpus ../shared/realdata/corpus is absent")
@pytest.mark.parametrize("path", CORPUS_FILES, ids=lambda p: p.name)
def test_corpus_logs(path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    data = path.read_bytes()
    items = assert_same(data)
    assert items or not data
    monkeypatch.setattr(linetime, "BLOCK", 4096)  # whole vs piecewise: other block edges, same items
    assert by_blocks(data) == items


def recording_bytes(path: Path) -> bytes:
    return b"".join(it.data for it in RecordingReader(path).items() if type(it) is Chunk)


@pytest.mark.parametrize("path", RECORDINGS, ids=lambda p: p.name)
def test_demo_recordings_as_plain_logs(path: Path, tmp_path: Path) -> None:
    plain = tmp_path / "demo.nmea"
    plain.write_bytes(recording_bytes(path))
    with open(plain, "rb") as f:
        got = list(iter_plain(f))
    assert got == reference(plain.read_bytes())[0]
    assert sum(type(it) is Chunk for it in got) > 100  # minutes of 1-10 Hz epochs, one chunk each


def test_whole_vs_piecewise(monkeypatch: pytest.MonkeyPatch) -> None:
    data = recording_bytes(RECORDINGS[0])
    whole = by_blocks(data)
    for block in (100, 4096, 65536):
        monkeypatch.setattr(linetime, "BLOCK", block)
        assert by_blocks(data) == whole, block


@pytest.mark.parametrize("name", ["clean", *sorted(DIALECTS), "default-date,binary,bad-checksum-times"])
def test_simulator_dialects(name: str) -> None:
    rx = SimReceiver(Scenario.load("rooftop"), rate_hz=10, seed=3, dialect=None if name == "clean" else name)
    data = b"".join(d for _, d in rx.epochs(20.0))
    assert_same(data)


def test_report_from_blocks_is_the_reference_report() -> None:
    rx = SimReceiver(Scenario.load("rooftop"), rate_hz=10, seed=4, dialect="empty-time-nofix,zda-late")
    data = b"".join(d for _, d in rx.epochs(30.0))
    out = []
    for items in (reference(data)[0], by_blocks(data)):
        a = run_items(items, source="plain").snapshot().analysis
        assert a["internal_errors"] == 0
        out.append(json.dumps(a, sort_keys=True, default=str))
    assert out[0] == out[1]


# -- hand-made cases ---------------------------------------------------------------------------------
def test_stamp_closes_after_the_line_that_fills_it() -> None:
    gga = nmea(b"GPGGA,101500.00,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,")
    gsv = nmea(b"GPGSV,3,1,12,01,40,083,46,02,17,308,41,12,07,344,39,14,22,228,45")
    n = 2000
    items = assert_same(gga + gsv * n + nmea(b"GPGGA,101501.00,,,,,0,00,,,M,,M,,"))
    sizes = [len(it.data) for it in items if type(it) is Chunk]
    # hand count: both bodies are 64 characters, so each line is 64 + '$' + '*hh' + CR LF = 70 bytes;
    # a stamp closes after the line that brings it to 65536 or more: 70 j >= 65536 first at j = 937
    # (65590 bytes); twice over 1874 lines, then 2001 - 1874 = 127 lines, then the next epoch's GGA
    # (body of 33 characters: 39 bytes)
    assert len(gga) == len(gsv) == 70
    assert sizes == [70 * 937, 70 * 937, 70 * 127, 39]


def test_dollar_inside_a_line_and_a_held_jump() -> None:
    day = b",150626,,,A"
    lines = [nmea(b"GPGGA,101500.00,,,,,1,08,0.9,5.4,M,46.9,M,,"), nmea(b"GPRMC,101500.00,A,,,,,0.0,0.0" + day),
             b"12:00:00 " + nmea(b"GPGGA,101501.00,,,,,1,08,0.9,5.4,M,46.9,M,,"),  # host stamp before '$'
             nmea(b"GPGSA,A,3,04,05,,09,12,,,24,,,,,2.5,1.3,2.1")[:-2] + nmea(b"GPGGA,101502.00,,,,,1,,,,,,,,"),
             nmea(b"GPGGA,131502.00,,,,,1,,,,,,,,"),  # a leap of 3 h: held until the next epochs decide
             nmea(b"GPGSV,1,1,00"), nmea(b"GPGGA,101503.00,,,,,1,,,,,,,,"), nmea(b"GPGSV,1,1,00"),
             nmea(b"GPGGA,101504.00,,,,,1,,,,,,,,")]
    items = assert_same(b"".join(lines))
    assert [it.mono for it in items if type(it) is Chunk] == [0.0, 1.0, 2.0, 3.0, 4.0]  # 1 s apart


# -- the time reader of the block path ---------------------------------------------------------------
def test_time_reader_is_line_time() -> None:
    rng = random.Random(17)
    reader = TimeReader()  # one reader for all lines: its kept fields must never leak a stale value
    bodies = [b"GPGGA,101500.00,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,",
              b"GNRMC,101500.00,A,4807.038,N,01131.000,E,0.0,0.0,150626,,,A", b"GPGLL,4807.038,N,01131.000,E,101500.00,A",
              b"GNGNS,101500.00,4807.038,N,01131.000,E,AN,08,0.9,545.4,46.9,,", b"GPZDA,101500.00,15,06,2026,00,00"]
    n = 0
    for _ in range(6000):
        body = bytearray(rng.choice(bodies))
        for _ in range(rng.randrange(0, 3)):
            i = rng.randrange(len(body) + 1)
            body[i:i + rng.randrange(0, 3)] = bytes(rng.choice(b"0123456789,.-*$ \xb5AZ") for _ in range(rng.randrange(3)))
        line = nmea(bytes(body), bad=rng.random() < 0.1, end=rng.choice([b"\r\n", b"\n", b" \t\r\n", b""]))
        if rng.random() < 0.05:
            line = line.replace(b"*", b"*" + rng.choice([b"g", b"a", b""]), 1)
        expected = line_time(line)
        assert reader.read(line) == expected, line
        n += expected is not None
    assert n > 1000  # most lines still carry a readable time: the comparison is not vacuous


# -- fuzz ---------------------------------------------------------------------------------------------
def hms(t: float) -> bytes:
    t %= 86400
    return b"%02d%02d%05.2f" % (t // 3600, t % 3600 // 60, t % 60)


def fuzz_log(rng: random.Random) -> bytes:
    """A small log with the habits the stamper has rules for, then damaged at random."""
    rate = rng.choice([1.0, 0.2, 0.1])
    t = rng.uniform(0, 86400)
    date = rng.choice([b"150626", b"060180", b"010100", b"311299", b"150606", b""])  # valid, defaults, 1024 weeks early
    out: list[bytes] = []
    restart = None  # (real time, date) while a restarted receiver runs on its default clock
    for _ in range(rng.randrange(1, 30)):
        r = rng.random()
        if r < 0.05:
            t += rng.choice([-3600.0, -rate, 7200.0, 30.0, 86400 - t % 86400 - rate / 2])  # jumps, midnight
        elif r < 0.08 and restart is None:  # a restart: default clock and date, later the real ones
            restart, t, date = (t, date), rng.choice([0.0, 43.0]), rng.choice([b"060180", b"010100"])
        elif r < 0.2 and restart is not None:
            t, date = restart[0] + rng.choice([5.0, 60.0, 600.0]), restart[1]
            restart = None
        tt = b"" if rng.random() < 0.1 else hms(t)  # empty time fields: no fix yet
        talker = rng.choice([b"GP", b"GN", b"GL"])
        if rng.random() < 0.9:
            out.append(nmea(talker + b"GGA," + tt + b",4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,"))
        out.append(nmea(b"GPGSA,A,3,04,05,,09,12,,,24,,,,,2.5,1.3,2.1"))
        if rng.random() < 0.7:
            out.append(nmea(talker + b"RMC," + tt + b",A,4807.038,N,01131.000,E,0.0,0.0," + date + b",,"))
        for k in range(rng.randrange(0, 4)):
            out.append(nmea(b"GPGSV,3,%d,12,01,40,083,46,02,17,308,41" % (k + 1)))
        if rng.random() < 0.3:
            out.append(nmea(b"GPGNS," + tt + b",4807.038,N,01131.000,E,AN,08,0.9,545.4,46.9,,"))
        if rng.random() < 0.3:
            out.append(nmea(b"GPGLL,4807.038,N,01131.000,E," + tt + b",A"))
        if rng.random() < 0.3:
            d = rng.choice([b"15,06,2026", b"06,01,1980", b"01,01,2000", b",,"])
            out.append(nmea(b"GPZDA," + hms(t + rng.choice([0.0, 0.05])) + b"," + d + b",00,00"))
        if rng.random() < 0.03:
            out.append(nmea(talker + b"GGA," + hms(t + 5000) + b",,,,,1,,,,,,,,"))  # one stray leap
        t += rate
    data = bytearray(b"".join(out))
    for _ in range(rng.randrange(0, 6)):
        i = rng.randrange(len(data) + 1)
        kind = rng.randrange(7)
        if kind == 0:
            del data[i:i + rng.randrange(1, 80)]  # a cut
        elif kind == 1:
            data[i:i] = b"\r"  # a lone CR
        elif kind == 2:
            data[i:i] = b"$"  # a '$' inside a line
        elif kind == 3:
            data[i:i] = bytes(rng.randrange(256) for _ in range(rng.randrange(1, 40)))  # binary junk
        elif kind == 4:
            data[i:i] = b"x" * rng.randrange(100, 700)  # long lines: overlong for the small limits
        elif kind == 5 and i < len(data):
            data[i] ^= 1 << rng.randrange(8)  # a flipped bit: a bad checksum
        else:
            data[i:i] = b"\n"
    if rng.random() < 0.2:
        data = data.replace(b"\r\n", b"\n")
    return bytes(data)


def test_fuzz_blocks_equal_the_reference(monkeypatch: pytest.MonkeyPatch) -> None:
    rng = random.Random(2017)
    kinds = set()
    for n in range(3000):
        data = fuzz_log(rng)
        block = rng.choice(BLOCKS)
        limit, chunk_max = rng.choice([(CHUNK_MAX, CHUNK_MAX), (64, 300), (200, 150), (1000, 1000)])
        monkeypatch.setattr(linetime, "BLOCK", block)
        monkeypatch.setattr(plainlog, "CHUNK_MAX", chunk_max)  # small stamps close often
        monkeypatch.setattr(plainblock, "CHUNK_MAX", chunk_max)
        monkeypatch.setattr(plainlog, "HOLD_MAX", rng.choice([1 << 20, 1500]))  # holds that run out
        got = assert_same(data, limit)
        kinds |= {type(it).__name__ + getattr(it, "state", "") for it in got}
        assert n or got
    # the fuzz reaches the stamper's outcomes: chunks, the start, holes and the data coming back
    assert kinds >= {"Chunk", "LinkEventstreaming", "LinkEventstalled"}


def test_fuzz_overlong_lines_at_the_real_limit(monkeypatch: pytest.MonkeyPatch) -> None:
    rng = random.Random(5)
    for block in (4096, 1 << 18):
        monkeypatch.setattr(linetime, "BLOCK", block)
        for _ in range(6):
            parts = [fuzz_log(rng) for _ in range(3)]
            long = b"$GPTXT," + b"y" * rng.choice([CHUNK_MAX - 8, CHUNK_MAX - 7, CHUNK_MAX + 5, 3 * CHUNK_MAX])
            data = parts[0] + long + rng.choice([b"\r\n", b"", b"\r"]) + parts[1] + long[: CHUNK_MAX // 2] + b"\n"
            assert_same(data + parts[2])
