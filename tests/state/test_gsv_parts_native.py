"""livefix.state._gsvcore.part_sats, the C twin of gsv._part_sats with prn.user_prn, against the
reference: the same (satellites, unknown numbers) tuples, type-exact, holding the very block values
passed in, for every number of every block, the parts of the real logs and simulator dialects,
and seeded random parts (bench/fuzz_clock.py part_vals)."""

from __future__ import annotations

import random
import threading
from collections.abc import Iterable
from pathlib import Path
from typing import Any

import pytest
from twinkit import CORPUS, CORPUS_FILES, bench_module

from livefix.decode import Rejected
from livefix.decode.decoder import Decoder
from livefix.framing import Framer
from livefix.items import Chunk
from livefix.record.reader import RecordingReader
from livefix.sim import Scenario, SimReceiver
from livefix.sim.dialects import DIALECTS
from livefix.sources import open_source
from livefix.state import gsv
from livefix.state.epoch import TALKER_SYSTEM
from livefix.state.prn import COMBINED_RANGES, NATIVE, OFFSET_BLOCKS, user_prn

core = pytest.importorskip("livefix.state._gsvcore", reason="livefix.state._gsvcore is not built (no compiler?)")
if not hasattr(core, "part_sats"):
    pytest.skip("livefix.state._gsvcore built without part_sats (_gsvcore_parts.c)", allow_module_level=True)

FUZZ = bench_module("fuzz_clock")
RECORDINGS = sorted((Path(__file__).resolve().parents[2] / "recordings").glob("*.lfr"))
BLOCK_FLAT = gsv._BLOCK_FLAT


def shape(x: Any) -> Any:
    """Type-exact form of a result (floats by float.hex), with the ids of the objects it holds."""
    if type(x) is tuple:
        return "tuple", [shape(v) for v in x]
    if type(x) is float:
        return "float", x.hex(), id(x)
    return type(x).__name__, repr(x), id(x) if type(x) is int and not -5 <= x <= 256 else None


def same(system: Any, vals: tuple) -> None:
    try:
        want: Any = shape(gsv._part_sats(system, vals))
    except Exception as e:  # noqa: BLE001 - the reference's error must be the twin's
        want = type(e)
    try:
        got: Any = shape(core.part_sats(system, vals))
    except Exception as e:  # noqa: BLE001
        got = type(e)
    assert got == want, (system, vals)


def test_every_number_of_every_block() -> None:
    # the C tables are copies of prn.py's (NMEA 0183 numbering and receiver blocks, see prn.py)
    systems = [None, *sorted(set(TALKER_SYSTEM.values())), "S", "GG", ""]
    for system in systems:
        for n in range(-3, 1000):
            same(system, (n, 10, 200, 40.5, *[""] * 12))
            got = core.part_sats(system, (n, 1, 2, 3, *[None] * 12))
            m = user_prn(system, n)
            assert got == (((*m, 1, 2, 3),), ()) if m else got == ((), (n,))
    assert len(COMBINED_RANGES) == 8 and set(NATIVE) == set(OFFSET_BLOCKS) | {"I"}  # the tables copied


def _parts(chunks: Iterable[bytes]) -> int:
    """Every GSV part of a stream through the twin and the reference; the number compared."""
    fr, dec, n = Framer(), Decoder(), 0
    for data in chunks:
        for ln in fr.feed(data):
            msg = dec.decode(ln)
            if type(msg) is not Rejected and msg.msg_id == "GSV":
                f = msg.fields
                same(TALKER_SYSTEM.get(msg.talker), tuple(map(f.get, BLOCK_FLAT)))
                n += 1
    return n


@pytest.mark.parametrize("path", RECORDINGS, ids=[p.name for p in RECORDINGS])
def test_recordings(path: Path) -> None:
    assert _parts(it.data for it in RecordingReader(path).items() if type(it) is Chunk) > 100


@pytest.mark.skipif(not CORPUS_FILES, reason="shared/realdata corpus not present (see shared/realdata/SOURCES.md)")
def test_corpus_logs() -> None:
    # shared/realdata/corpus: public logs, sources in shared/realdata/SOURCES.md
    n = sum(_parts(it.data for it in open_source(str(CORPUS / name), speed=None).items(threading.Event())
                   if type(it) is Chunk) for name in CORPUS_FILES)
    assert n > 1000


@pytest.mark.parametrize("dialect", ["clean", *DIALECTS])
def test_simulator_dialects(dialect: str) -> None:
    rx = SimReceiver(Scenario.load("rooftop"), rate_hz=10, seed=1, dialect=dialect)
    _parts(data for _, data in rx.epochs(20.0))


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_random_parts(seed: int) -> None:
    rng = random.Random(seed)
    for _ in range(20000):
        same(*FUZZ.part_vals(rng))


def test_odd_calls_raise() -> None:
    # the assembler hands over a TALKER_SYSTEM value and 16 values; anything else is refused
    for args in [(None,), ("G", ()), ("G", [0] * 16), (5, (0,) * 16)]:
        with pytest.raises((TypeError, ValueError)):
            core.part_sats(*args)


def test_the_comparison_sees_a_difference() -> None:
    vals = (5, 10, 200, 40.5, *[""] * 12)
    ref = gsv._part_sats(None, vals)
    assert shape(ref) != shape(((("G", 5, 10, 200, float("40.5")),), ()))  # another float object
    assert shape(ref) != shape(((("G", 5, 10, 200, 40),), ()))
