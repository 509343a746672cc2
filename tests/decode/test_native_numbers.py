"""The C core's short route for decimal fields (livefix/_native_fields.c, plain_double) and the
record it hands to Decoder, against the pure-Python reference.

Short decimals are converted in the core as integer / power of ten (one correctly rounded IEEE
division) instead of through the interpreter's string-to-double routine; the result must be the
very bits float() gives, for every text. Compared bit for bit (float.hex), so 0.0 and -0.0 differ.
Why that holds: IEEE 754 and the fast case of Clinger's reader (docs/sources.md#decimal-text-to-double).
Skipped when the extension is not built.
"""

from __future__ import annotations

import random
import threading

import pytest
from twinkit import CORPUS, CORPUS_FILES, bench_fuzz, bench_module

from livefix.checksum import with_checksum
from livefix.decode import Decoded
from livefix.decode.decoder import Decoder
from livefix.framing import Framer
from livefix.items import Chunk
from livefix.sim import Scenario, SimReceiver
from livefix.sim.dialects import DIALECTS
from livefix.sources import open_source

native = pytest.importorskip("livefix._native", reason="the C core livefix._native is not built (no compiler?)")
strict_item = bench_fuzz().strict_item
NUMBERS = bench_module("fuzz_numbers")  # bench/fuzz_numbers.py: the seeded texts, shared with the fuzz run
Decoder()  # configures the core (talkers, year pivot) as the decoder module does at import


def core_float(text: str) -> float | None:
    """The core's value for `text` as a VTG course (a decimal field), None when it hands the line back."""
    r = native.decode(with_checksum(f"GPVTG,{text},T,,M,0.5,N,0.9,K,A").encode())
    if r is None:
        return None
    v = r[1]["cogt"]
    assert type(v) is float or (text == "" and v == ""), (text, v)  # an empty field stays ""
    return v if text else None


def reference(text: str) -> float | None:
    try:
        return float(text)
    except ValueError:
        return None


def same_bits(a: float | None, b: float | None) -> bool:
    return (a is None) == (b is None) and (a is None or a.hex() == b.hex())


# -- hand-picked values: expected bits from outside the code --------------------------------------
# Bits of the values not checkable by hand (16 digits, 1e-22, 1e-23) are Python float()'s, which
# is correctly rounded (IEEE 754 round to nearest, ties to even).
@pytest.mark.parametrize(("text", "bits"), [
    ("0.1", "0x1.999999999999ap-4"),  # IEEE 754 binary64 nearest to 1/10 (common practice)
    ("9007199254740992", "0x1.0000000000000p+53"),  # 2^53, exact
    ("9007199254740993", "0x1.0000000000000p+53"),  # 2^53 + 1: a tie, rounds to even (IEEE 754)
    ("9007199254740995", "0x1.0000000000002p+53"),  # 2^53 + 3: a tie, rounds to even, upward
    ("900719925474099.3", "0x1.999999999999ap+49"),  # 16 digits, m = 2^53 + 1: the long route
    ("-0", "-0x0.0p+0"),  # float("-0") keeps the sign (Python float())
    ("-.0", "-0x0.0p+0"),
    ("+.5", "0x1.0000000000000p-1"),
    ("5.", "0x1.4000000000000p+2"),
    ("0.0000000000000000000001", "0x1.e392010175ee6p-74"),  # 22 decimals, the last short case: 1e-22
    ("0.00000000000000000000001", "0x1.82db34012b251p-77"),  # 23 decimals: the long route
    ("00000000000000000000000000012.5", "0x1.9000000000000p+3"),  # leading zeros do not count
    ("1" * 40 + ".5", "0x1.a1f41ba74c421p+129"),  # 41 digits: the long route
    ("563.250", "0x1.19a0000000000p+9"),  # an altitude from the 10 Hz recording; 563.25 = 2253/4
])
def test_known_bits(text: str, bits: str) -> None:
    assert reference(text).hex() == bits  # the reference itself, against the hex written by hand
    assert core_float(text).hex() == bits


@pytest.mark.parametrize("text", ["nan", "inf", "-inf", "1e5", "1E5", "1_0", " 1", "1 ", "1.2.3", "+", "-", ".",
                                  "0x10", "1" * 64, "1" * 40 + "..5"])
def test_other_texts_go_back_to_the_pure_path(text: str) -> None:
    # float() accepts some of these (nan, inf, exponents, underscores, spaces); the core hands every
    # one back, so the pure path's float() decides (Python float() rules)
    assert core_float(text) is None
    raw = with_checksum(f"GPVTG,{text},T,,M,0.5,N,0.9,K,A").encode()
    assert strict_item(Decoder(native=True).decode(raw)) == strict_item(Decoder(native=False).decode(raw))


def test_seeded_decimals_bit_exact() -> None:
    rng = random.Random(20261205)
    short = 0
    for _ in range(60_000):
        t = NUMBERS.decimal_text(rng)
        got, want = core_float(t), reference(t)
        if got is None:
            # handed back: only texts outside the plain form (or beyond MAX_NUM characters)
            assert want is None or not all(c in "0123456789.+-" for c in t) or len(t.lstrip("+-")) > 62, t
        else:
            assert same_bits(got, want), (t, got, want)
            short += 1
    assert short > 40_000  # most texts took the core's route, so the comparison above means something


def test_fuzz_run_of_the_bench_agrees() -> None:
    # the differential bench/fuzz_numbers.py runs under the sanitizers, on a sample
    n, took, bad, examples = NUMBERS.decimal_diff(20_000, seed=5)
    assert n == 20_000 and took > 10_000 and bad == 0, examples


def test_same_bits_can_fail() -> None:
    assert not same_bits(0.0, -0.0) and not same_bits(0.1, 0.1 + 2**-56 * 2) and not same_bits(None, 1.0)


# -- whole lines, both paths ------------------------------------------------------------------------
def both(lines: list[bytes]) -> None:
    dn, dp = Decoder(native=True), Decoder(native=False)
    for ln in lines:
        a, b = dn.decode(ln), dp.decode(ln)
        assert strict_item(a) == strict_item(b), ln
        assert type(a) is type(b) and type(getattr(a, "fields", None)) is type(getattr(b, "fields", None)), ln
    assert dn.counters == dp.counters


def test_seeded_positions_both_paths() -> None:
    # (d)ddmm.mmmm positions at 0-8 decimals of minutes, both hemispheres, in GGA, RMC and GNS
    rng = random.Random(3)
    lines = []
    for _ in range(20_000):
        lat = f"{rng.randint(0, 89):02d}{rng.randint(0, 59):02d}.{rng.randint(0, 10**8 - 1):08d}"[:rng.randint(5, 13)]
        lon = f"{rng.randint(0, 179):03d}{rng.randint(0, 59):02d}.{rng.randint(0, 10**8 - 1):08d}"[:rng.randint(6, 14)]
        ns, ew = rng.choice("NS"), rng.choice("EW")
        alt = f"{rng.uniform(-500, 9000):.{rng.randint(0, 4)}f}"
        body = rng.choice([
            f"GNGGA,083500.00,{lat},{ns},{lon},{ew},4,27,0.56,{alt},M,49.1,M,1.0,0042",
            f"GNRMC,083500.00,A,{lat},{ns},{lon},{ew},0.006,84.1,120526,,,R,S",
            f"GNGNS,083500.00,{lat},{ns},{lon},{ew},RR,27,0.56,{alt},49.1,1.0,0042,V",
        ])
        lines.append(with_checksum(body).encode())
    both(lines)


def test_odd_arguments() -> None:
    good = with_checksum("GPVTG,1.5,T,,M,0.5,N,0.9,K,A").encode()
    for arg in (None, 1, 1.5, float("nan"), "x", good.decode(), bytearray(good), memoryview(good), (), b""):
        assert native.decode(arg) is None  # not exactly bytes: the pure path decides
    both([bytearray(good), memoryview(good), good])


@pytest.mark.parametrize("name", sorted(DIALECTS))
def test_dialects_both_paths(name: str) -> None:
    rx = SimReceiver(Scenario.load("rooftop"), rate_hz=10, seed=2, dialect=name)
    fr = Framer(native=False)
    both([ln for _, data in rx.epochs(20.0) for ln in fr.feed(data)])


@pytest.mark.skipif(not CORPUS_FILES, reason="shared/realdata corpus not present (see shared/realdata/SOURCES.md)")
@pytest.mark.parametrize("name", CORPUS_FILES)
def test_corpus_logs_both_paths(name: str) -> None:
    # shared/realdata/corpus/<name>: a public log, source in shared/realdata/SOURCES.md
    fr = Framer(native=False)
    chunks = [it.data for it in open_source(str(CORPUS / name), speed=None).items(threading.Event())
              if type(it) is Chunk]
    lines = [ln for c in chunks for ln in fr.feed(c)] + fr.finish()
    assert lines
    both(lines)


def test_record_is_a_plain_decoded() -> None:
    # the core's make() builds the Decoded the pure path builds with its slot setters
    raw = with_checksum("GNGGA,083500.00,4654.427409,N,00737.094074,E,4,27,0.56,563.248,M,49.1,M,1.0,0042").encode()
    a, b = Decoder(native=True).decode(raw), Decoder(native=False).decode(raw)
    assert type(a) is Decoded and a == b
    assert (a.talker, a.msg_id, a.proprietary) == ("GN", "GGA", False) and type(a.fields) is dict
    with pytest.raises(AttributeError):  # frozen dataclass: FrozenInstanceError is an AttributeError
        a.talker = "GP"  # type: ignore[misc]

