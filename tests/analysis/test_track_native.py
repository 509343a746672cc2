"""Track._settle in C (track_settle, livefix/analysis/_epochcore_track.c) against the reference, the
Python code of livefix/analysis/track.py: after every batch the whole state of the track and of its
five accumulators (moments, both histograms, block means, Allan history, ring; type-exact and bit-exact
through bench/fuzz_epochcore.py's Exact), and the figures a report reads from them.

Inputs: the tracks of whole Analyzers over the simulator dialects (the C position step settles full
batches with the twin), odd states the C code must hand back unchanged, and seeded random row streams
(bench/fuzz_track.py, what `make fuzz` runs under the sanitizers: heights missing, repeated positions,
block boundaries, odd values, batches past the C bound, Allan decimation). Skipped when not built.
"""

from __future__ import annotations

import json
import math
import random
from types import ModuleType
from typing import Any

import pytest
from twinkit import bench_module, sim_epochs

from livefix.analysis import track
from livefix.analysis.engine import Analyzer
from livefix.analysis.track import BATCH, Track

core = pytest.importorskip("livefix.analysis._epochcore", reason="livefix.analysis._epochcore is not built")
if not hasattr(core, "track_settle"):
    pytest.skip("livefix.analysis._epochcore was built without the track settle", allow_module_level=True)


def _fuzz() -> ModuleType:
    return bench_module("fuzz_track")  # the generators `make fuzz` runs under the sanitizers


FUZZ = _fuzz()


def test_core_is_configured() -> None:
    assert track._CORE is core
    with pytest.raises(TypeError):  # a class attribute over an instance-dict name it reads
        core.configure_track(Track, track.Moments3, type("H", (), {"bins": {}}), *track._CONFIGURE[3:])
    with pytest.raises(ValueError):
        core.configure_track(*track._CONFIGURE[:6], 3, *track._CONFIGURE[7:])  # hypot not callable
    assert core.track_settle(object()) is False  # not a Track: the Python code's
    assert core.track_settle(Track()) is True  # nothing waiting: nothing to do, as the reference
    assert track.load_core("configure_track", *track._CONFIGURE) is core


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_random_row_streams(seed: int) -> None:
    batches, handed, bad, examples = FUZZ.diff(500, seed, odd=0.02)
    assert bad == 0, examples
    assert 0 < handed < batches // 10  # the batches past the C bound only


def _settled_pair(rows: list[tuple]) -> tuple[Track, Track]:
    c, p = Track(), Track()
    for t in (c, p):
        for row in rows:
            t.add(*row) if len(t._pend) < BATCH - 1 else t._pend.append(row)
    return c, p


ODD_STATES: list[tuple[str, Any]] = [
    ("an int in a row", lambda t: t._pend.__setitem__(3, (t._pend[3][0], 1, *t._pend[3][2:]))),
    ("a short row", lambda t: t._pend.__setitem__(0, t._pend[0][:3])),
    ("rows in a tuple", lambda t: setattr(t, "_pend", tuple(t._pend))),
    ("one histogram twice", lambda t: setattr(t, "_hist_v", t._hist_r)),
    ("a float count", lambda t: setattr(t._mom, "n", float(t._mom.n))),
    ("a short mean", lambda t: setattr(t._mom, "m", t._mom.m[:2])),
    ("an int block start", lambda t: setattr(t._blocks, "_start", 1000)),
    ("an int block length", lambda t: setattr(t._blocks, "block_s", 60)),
    ("a zero decimation factor", lambda t: setattr(t._allan, "factor", 0)),
    ("a ring queue in a tuple", lambda t: setattr(t._ring, "_pend", ())),
    ("the ring queue is the Allan queue", lambda t: setattr(t._ring, "_pend", t._allan._pend)),
    ("a subclass", lambda t: setattr(t, "__class__", type("T", (Track,), {"__slots__": ()}))),
]


@pytest.mark.parametrize(("what", "make_odd"), ODD_STATES, ids=[w for w, _ in ODD_STATES])
def test_odd_states_are_handed_back_unchanged(what: str, make_odd: Any) -> None:
    gen = FUZZ.rows(random.Random(5), 0.0)
    warm = [next(gen) for _ in range(200)]  # past WARMUP: both histograms take values
    c, p = _settled_pair(warm)
    make_odd(c)
    make_odd(p)
    before = FUZZ.state(c)
    assert core.track_settle(c) is False, what
    assert FUZZ.state(c) == before, what


def test_pending_rows_then_readers_agree() -> None:
    """A batch settled in C and one settled by a reader (the Python code) mix in one track."""
    gen = FUZZ.rows(random.Random(11), 0.0)
    c, p = Track(), Track()
    for i in range(3000):
        row = next(gen)
        for t in (c, p):
            t._pend.append(row)
        if len(c._pend) >= BATCH:
            assert core.track_settle(c) is True
            p._settle()
        if i % 700 == 0:
            assert c.n == p.n and c.mom.n == p.mom.n  # a reader settles the short batch in Python
    assert FUZZ.state(c) == FUZZ.state(p)
    fig = [json.dumps([t.session(), t.window(30.0), t.drift(30.0), t.allan_dev()], default=repr) for t in (c, p)]
    assert fig[0] == fig[1]


@pytest.mark.parametrize("dialect", ["clean", "rmc-only", "empty-time-nofix", "rate-10hz"])
def test_whole_analyzers_with_and_without_the_c_steps(dialect: str) -> None:
    eps = list(sim_epochs(dialect, 240.0))
    out = []
    for native in (True, False):
        an = Analyzer()
        if not native:
            an.position._core = None  # the Python step: Track.add and its _settle
        for ep in eps:
            an.on_epoch(ep)
        tracks = {k: FUZZ.state(t) for k, t in an.position.tracks.items()}
        out.append((tracks, json.dumps(an.position.snapshot(), sort_keys=True, default=repr)))
    assert out[0][1] == out[1][1]
    assert out[0][0].keys() == out[1][0].keys() and all(out[0][0][k] == out[1][0][k] for k in out[0][0])
    assert sum(t.n for t in Analyzer().position.tracks.values()) == 0 and len(eps) > 200


def test_values_as_the_reference_computes_them() -> None:
    """Sanity of the shared rules (common practice for streaming moments, from memory): Welford's
    running mean and sum of squares give the sample mean and variance of the rows."""
    gen = FUZZ.rows(random.Random(3), 0.0)
    rows = [next(gen) for _ in range(BATCH)]
    t = Track()
    t._pend.extend(rows)
    assert core.track_settle(t) is True
    es = [r[1] for r in rows]
    mean = math.fsum(es) / len(es)
    var = math.fsum((e - mean) ** 2 for e in es) / (len(es) - 1)
    assert t._mom.m[0] == pytest.approx(mean, rel=1e-12, abs=1e-12)
    assert t._mom.c[0] / (t._mom.n - 1) == pytest.approx(var, rel=1e-9)
    assert t._ring.total == BATCH and t._hist_r.n == BATCH - track.WARMUP
