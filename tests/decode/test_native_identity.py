"""The C core (livefix/_native.c) against the pure-Python reference: the same sentences, counters and
decoded values (type-exact), and the same `livefix report --json` bytes, on every demo recording,
every simulator dialect and a sample of the fuzz inputs of bench/fuzz.py (issue 17).

The pure path is itself checked against pynmeagps in test_decode_differential.py, so identity here
carries that reference over to the C core. Skipped when the extension is not built.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from datetime import date, time
from pathlib import Path
from types import ModuleType

import pytest
from twinkit import bench_fuzz

from livefix.checksum import with_checksum, xor_checksum
from livefix.decode import Decoded
from livefix.decode.decoder import Decoder
from livefix.decode.fast import DEFS, GSV_NAMES
from livefix.framing import Framer
from livefix.items import Chunk
from livefix.pipeline import Pipeline
from livefix.record.reader import RecordingReader
from livefix.sim import Scenario, SimReceiver
from livefix.sim.dialects import DIALECTS

ROOT = Path(__file__).resolve().parents[2]
RECORDINGS = sorted((ROOT / "recordings").glob("*.lfr"))
native = pytest.importorskip("livefix._native", reason="the C core livefix._native is not built (no compiler?)")


def _fuzz() -> ModuleType:
    return bench_fuzz()  # bench/fuzz.py: the generators `make fuzz` runs under the sanitizers


FUZZ = _fuzz()
strict_item = FUZZ.strict_item


def line(body: str) -> bytes:
    return with_checksum(body).encode()


def raw_line(body: bytes) -> bytes:
    """'$' + body + '*hh' for any bytes (NMEA 0183 checksum: XOR of the bytes between '$' and '*')."""
    return b"$" + body + b"*%02X" % xor_checksum(body)


def both(chunks: list[bytes]) -> tuple[list, list, tuple, tuple]:
    """(native items, pure items, native counters, pure counters) for a stream of chunks."""
    out = []
    for flag in (True, False):
        fr, dec = Framer(native=flag), Decoder(native=flag)
        items = [strict_item(dec.decode(ln)) for c in chunks for ln in fr.feed(c)]
        items += [strict_item(dec.decode(ln)) for ln in fr.finish()]
        out.append((items, (fr.counters, dec.counters, list(dec.counters.by_type), list(dec.counters.by_talker_type))))
    return out[0][0], out[1][0], out[0][1], out[1][1]


def analysis_json(chunks: list[tuple[float, bytes]], native: bool) -> str:
    """The whole pipeline's analysis snapshot as JSON, with the C core or the pure path."""
    p = Pipeline(source="identity")
    p.framer, p.decoder = Framer(native=native), Decoder(native=native)
    for t, data in chunks:
        p.feed(Chunk(t, 1.7e9 + t, data))
    p.finish()
    snap = p.snapshot().analysis
    assert snap["internal_errors"] == 0
    return json.dumps(snap, sort_keys=True, default=str)


# -- the tables agree ------------------------------------------------------------------------------
def test_field_tables_are_the_pure_paths() -> None:
    for msg_id, defs in DEFS.items():
        assert native.field_names(msg_id) == tuple(n for n, _ in defs), msg_id
    assert native.field_names("GSV") == GSV_NAMES[-1]


# -- hand-written lines: values from outside the code ------------------------------------------------
def test_public_example_gga_decoded_by_the_core() -> None:
    # The public NMEA example GGA (docs/sources.md#example-sentences); lat 48 deg 07.038' = 48 + 7.038/60 (hand
    # arithmetic) = 48.1173, lon 11 deg 31.000' = 11.516666...; rounded to 10 places as pynmeagps does.
    r = native.decode(line("GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,"))
    assert r is not None
    (hdr, talker, msg_id), f = r
    assert (hdr, talker, msg_id) == ("GPGGA", "GP", "GGA")
    assert f["time"] == time(12, 35, 19) and f["lat"] == 48.1173 and f["lon"] == round(11 + 31 / 60, 10)
    assert f["quality"] == 1 and type(f["quality"]) is int and f["numSV"] == 8  # "08" is the integer 8
    assert f["HDOP"] == 0.9 and f["alt"] == 545.4 and f["altUnit"] == "M" and f["diffAge"] == ""
    assert list(f)[-1] == "diffStation"  # 14 fields, pynmeagps order (nmeatypes_get GGA)


def test_southern_western_and_date() -> None:
    # S and W make the value negative (NMEA 0183: hemisphere letters); 230394 is 23 March 1994 with
    # the two-digit-year pivot 68 (livefix.timefmt): 94 > 68 -> 1994.
    r = native.decode(line("GPRMC,235959.5,A,3351.000,S,15112.000,W,0.0,,230394,,,A"))
    assert r is not None
    f = r[1]
    assert f["time"] == time(23, 59, 59, 500000)  # .5 s = 500000 microseconds
    assert f["lat"] == -(33 + 51 / 60) and f["lon"] == -(151 + 12 / 60)
    assert f["date"] == date(1994, 3, 23) and f["cog"] == ""
    r = native.decode(line("GNRMC,000000,V,,,,,,,300224,,,N"))  # 30 Feb 2024 does not exist
    assert r is not None and r[1]["date"] == ""


def test_gsv_blocks_and_signal_id() -> None:
    # NMEA 4.11 GSV: 3 header fields, 4 per satellite, then the signal ID (hand count: 2 blocks)
    r = native.decode(line("GAGSV,3,1,09,05,40,083,46,12,17,308,,7"))
    assert r is not None
    f = r[1]
    assert list(f) == ["numMsg", "msgNum", "numSV", "svid_01", "elv_01", "az_01", "cno_01",
                       "svid_02", "elv_02", "az_02", "cno_02", "signalID"]
    assert f["cno_02"] == "" and f["signalID"] == "7" and f["az_01"] == 83


@pytest.mark.parametrize("raw", [
    line("GPGSV,1,1,01,05,40,083,46.5"),  # C/N0 with decimals: the pure path's deliberate rule
    line("GPGGA,1235190,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,"),  # odd time shape
    line("GPGGA,123519,4807.038,N,01131.000,E,1,08,1e1,545.4,M,46.9,M,,"),  # exponent: float() rule
    line("GPGGA,123519,4807.038,N,01131.000,E, 1,08,0.9,545.4,M,46.9,M,,"),  # space: int() rule
    line("GPGGA,123519,0000.000,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,"),  # zero degrees: round()
    line("GPVTG,,T,,M,0.0,N,0.0,K,A") [:-2] + b"00",  # wrong checksum
    line("GPTXT,01,01,02,hello"),  # not a fast type
    line("XXGGA,123519,,,,,0,00,,,M,,M,,"),  # unknown talker
    line("GPZDA,123519,23,03,1994,00,00") + b"\x00",  # embedded NUL after the checksum
    line("GPGSA,A,3," + ",".join(["04"] * 60)),  # over 128 bytes
    line("GPGLL,4807.038,N,01131.000,E,123519,A,A").replace(b"GLL", b"GGA"),  # bad checksum after edit
    raw_line("GPZDA,123519,23,03,1994,00,0\u00e9".encode()),  # non-ASCII in a field, checksum right
])
def test_unusual_lines_go_back_to_the_pure_path(raw: bytes) -> None:
    assert native.decode(raw) is None
    a, b, ca, cb = both([raw + b"\r\n"])
    assert a == b and ca == cb


def test_embedded_nul_in_a_text_field_is_kept_as_text() -> None:
    # a text field is taken as written (pynmeagps CH fields), NUL included; both paths agree
    raw = raw_line(b"GPZDA,123519,23,03,1994,0\x00,00")
    r = native.decode(raw)
    assert r is not None and r[1]["ltzh"] == "0\x00"
    extra = raw_line(b"GPZDA,123519,23,03,1994,00,00,\x00\x00,,")  # fields past the definition: dropped
    r = native.decode(extra)
    assert r is not None and list(r[1]) == ["time", "day", "month", "year", "ltzh", "ltzn"]  # pynmeagps ZDA
    a, b, ca, cb = both([raw + b"\r\n", extra + b"\r\n"])
    assert a == b and ca == cb


def test_strict_comparison_can_fail() -> None:
    """The comparison used below tells 1 from 1.0 and 0.0 from -0.0 (plain == would not)."""
    one = Decoded("GP", "GGA", {"quality": 1})
    assert strict_item(one) != strict_item(Decoded("GP", "GGA", {"quality": 1.0}))
    assert strict_item(Decoded("GP", "GGA", {"lat": 0.0})) != strict_item(Decoded("GP", "GGA", {"lat": -0.0}))


# -- whole streams ----------------------------------------------------------------------------------
@pytest.mark.parametrize("path", RECORDINGS, ids=lambda p: p.name)
def test_recordings_decode_identically(path: Path) -> None:
    chunks = [it.data for it in RecordingReader(path).items() if type(it) is Chunk]
    a, b, ca, cb = both(chunks)
    assert len(a) > 10_000  # a demo recording is minutes of 1-10 Hz data
    assert a == b and ca == cb


@pytest.mark.parametrize("name", sorted(DIALECTS))
def test_dialects_decode_and_analyse_identically(name: str) -> None:
    rx = SimReceiver(Scenario.load("rooftop"), rate_hz=1, seed=1, dialect=None if name == "clean" else name)
    epochs = list(rx.epochs(90.0))
    a, b, ca, cb = both([data for _, data in epochs])
    assert a and a == b and ca == cb
    assert analysis_json(epochs, True) == analysis_json(epochs, False)


def test_fuzz_sample_agrees() -> None:
    # 20,000 inputs of bench/fuzz.py (random bytes, mutated sentences with valid checksums, embedded
    # NULs, overlong lines, plain blocks); `make fuzz` runs a million under the sanitizers
    n, bad, examples = FUZZ.native_diff(20_000, seed=7)
    assert n == 20_000 and bad == 0, examples


def test_fuzz_stream_report_agrees() -> None:
    """The fuzz stream of bench/fuzz.py through the whole pipeline both ways: the same analysis."""
    import random

    rng = random.Random(11)
    base = FUZZ.BASE + FUZZ.sim_base()
    chunks = [(1.0 + n * 0.002, FUZZ.one_input(rng, base)) for n in range(5000)]
    assert analysis_json(chunks, True) == analysis_json(chunks, False)


def test_plain_block_split_matches_the_scanner() -> None:
    good = line("GPGGA,123519,,,,,0,00,,,M,,M,,") + b"\r\n"
    for data in (good * 3, good + b"$GPZDA\r", good + b"\n" + good, good.replace(b"$", b"\xb5", 1) + good,
                 good[:-2] + b"$" + good, b"$" + b"A" * 600 + b"\r\n"):
        if data.endswith(b"\r\n"):
            assert (native.split_block(data, 512) is None) == (Framer(native=False)._clean_block(data) is None)
        a, b, ca, cb = both([data])
        assert a == b and ca == cb
    assert native.split_block(good * 3, 512) == [good[:-2]] * 3


# -- the command itself ---------------------------------------------------------------------------
@pytest.mark.parametrize("path", RECORDINGS, ids=lambda p: p.name)
def test_report_json_is_byte_identical(path: Path) -> None:
    out = []
    for pure in ("0", "1"):
        env = dict(os.environ, LIVEFIX_PURE=pure)
        r = subprocess.run([sys.executable, "-m", "livefix", "report", str(path), "--json"], env=env,
                           capture_output=True, timeout=300, cwd=ROOT)
        assert r.returncode == 0, r.stderr[-2000:]
        out.append(r.stdout)
    assert json.loads(out[0])["internal_errors"] == 0
    assert out[0] == out[1]
