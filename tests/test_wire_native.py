"""The packed wire of the two-process split (livefix/_wirecore.c) against its references: what one
process does with the same calls, and the pickled wire (livefix/wire.py's encode and Replayer).

The reference of a wire is the front's own calls: the child must make them in the same order, value
for value and type for type (floats by their bits), with consecutive epochs sharing a tuple field
exactly when the front's do (the statistics' identity shortcuts; common practice in this code base,
see livefix/analysis/counts.py). Inputs: every call of a real pipeline run over the simulated
soak recording and the dialect recordings, seeded random streams with odd values (bench/fuzz_wire.py,
what `make fuzz` runs under the sanitizers), hand-made odd values, and corrupt batches. Skipped when
the core is not built.
"""

from __future__ import annotations

import math
import pickle
import random
import struct
from pathlib import Path

import pytest
from twinkit import bench_module

from livefix.pipeline import Pipeline
from livefix.record.reader import RecordingReader
from livefix.state.epoch import EPOCH_FIELDS, Epoch, Event, make_epoch, make_satobs
from livefix.wire import CHUNK, EVENT, REJECTED, Replayer, packer, sink

core = pytest.importorskip("livefix._wirecore", reason="livefix._wirecore is not built")
fw = bench_module("fuzz_wire")

ROOT = Path(__file__).resolve().parents[1]
RECORDINGS = sorted((ROOT / "recordings").glob("*.lfr"))


def _front_calls(path: Path) -> list:
    sink = fw.Sink()
    p = Pipeline(analyzer=sink)
    for it in RecordingReader(path).items():
        p.feed(it)
    p.finish()
    return sink.calls


@pytest.mark.parametrize("path", RECORDINGS, ids=lambda p: p.name)
def test_a_real_run_arrives_as_the_front_made_it(path: Path) -> None:
    calls = _front_calls(path)
    eps = [c for c in calls if type(c) is Epoch]
    assert len(eps) > 100
    cuts = list(range(37, len(calls), 37))  # odd batch size: batches end anywhere
    got, err = fw.through(calls, cuts, "packed")
    assert err is None
    assert len(got) == len(calls) and all(fw.same(a, b) for a, b in zip(got, calls, strict=True))
    assert fw.sharing(got, calls) == fw.sharing(calls, calls)
    # the shortcuts have something to keep: sats both repeat and change
    same_sats = [s[0] for s in fw.sharing(calls, calls)]
    assert any(same_sats) and not all(same_sats)


def test_both_wires_give_the_same_calls_on_a_real_run() -> None:
    calls = _front_calls(RECORDINGS[0])
    cuts = list(range(256, len(calls), 256))
    packed, e1 = fw.through(calls, cuts, "packed")
    pickled, e2 = fw.through(calls, cuts, "pickled")
    assert e1 is e2 is None
    assert all(fw.same(a, b) for a, b in zip(packed, pickled, strict=True))


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_random_streams_agree_with_the_reference(seed: int) -> None:
    done, bad, examples = fw.wire_diff(6000, seed)
    assert done >= 6000
    assert bad == 0, examples


def _one_epoch(**values: object) -> Epoch:
    v = dict.fromkeys(EPOCH_FIELDS)
    v.update(mono=1.0, wall=2.0, quality=1, sats=(), used_prns=(), sentences=(), unknown_ids=(), date_known=True)
    v.update(values)
    return make_epoch(tuple(v[f] for f in EPOCH_FIELDS))


NAN_BITS = 0x7FF8_0000_0000_BEEF  # a quiet NaN with a payload (IEEE 754-2008: any payload is kept by a copy)


@pytest.mark.parametrize("value", [
    -0.0, math.inf, -math.inf, struct.unpack("<d", struct.pack("<Q", NAN_BITS))[0], 2**63 - 1, -(2**63), 2**63,
    10**30, True, False, "é°", "\ud800", "", fw.OddFloat(2.5), fw.OddInt(7), fw.OddStr("x"),
    fw.OddTuple((1,)), [1, 2], b"raw", fw._deep(8), fw._deep(20), {"k": (1, 2.0)},
], ids=repr)
def test_an_odd_field_value_arrives_exactly(value: object) -> None:
    # every field position: the float slots, the int slots, the tuple slots, the bool slot
    for field in ("lat", "num_sv", "sats", "used_prns", "date_known", "datum"):
        calls = [_one_epoch(**{field: value}), (CHUNK, value, 1.0, 2), (REJECTED, "x", value, 3.0),
                 (EVENT, value)]
        got, err = fw.through(calls, [], "packed")
        assert err is None
        assert all(fw.same(a, b) for a, b in zip(got, calls, strict=True)), field


def test_satellites_of_the_previous_tuple_are_the_same_objects() -> None:
    sats = tuple(make_satobs(("G", n, "1", 40, 100, 45.0, True, 0.0)) for n in range(1, 9))
    new = make_satobs(("E", 3, "7", 10, 200, 30.0, False, 0.0))
    moved = (new, *sats[2:], sats[0])  # inserted, dropped, moved to the end
    calls = [_one_epoch(sats=sats), _one_epoch(sats=moved), _one_epoch(sats=moved)]
    got, err = fw.through(calls, [1], "packed")
    assert err is None
    a, b, c = got
    assert b.sats is c.sats and a.sats is not b.sats
    assert [s is t for s, t in zip(b.sats[1:7], a.sats[2:], strict=True)] == [True] * 6
    assert b.sats[7] is a.sats[0] and b.sats[0] == new


@pytest.mark.parametrize("data, others, message", [
    (bytes([77]), [], "unknown record kind"),
    (bytes([3]), [], "truncated"),
    (bytes([0, 1, 0, 0]), [], "truncated"),
    (bytes([0, 6, 1, 0, 0, 0, 0, 0, 0, 0, 0, 1, 0, 0, 0, 0, 0, 0, 0, 0]), [], "more pickled values named than sent"),
    (b"", [1], "pickled values left over"),
    (bytes([4]), [], "more pickled records named than sent"),
    (bytes([0, 9, 0, 0, 0, 0]), [], "element of no previous tuple"),
    (bytes([0, 7, 255, 255, 255, 255]), [], "truncated tuple"),
    (bytes([0, 8]), [], "unknown value tag"),
    (bytes([0, 99]), [], "unknown value tag"),
    (bytes([3, 8]), [], "same as no previous value"),
    (bytes([0]) + bytes([7, 1, 0, 0, 0]) * 9, [], "nested too deep"),
])
def test_a_corrupt_batch_is_a_value_error(data: bytes, others: list, message: str) -> None:
    with pytest.raises(ValueError, match=f"^packed batch: {message}$"):
        Replayer(fw.Sink()).run_packed(data, others)


def test_mutated_batches_are_refused_or_replayed() -> None:
    bad: list[str] = []
    rng = random.Random(7)
    for _ in range(3000):
        fw._mutated(rng, bad.append)
    assert bad == []


def test_pack_refuses_what_it_cannot_read() -> None:
    pack = packer(True)
    assert pack is not None
    with pytest.raises(TypeError):
        pack((1, 2))  # type: ignore[arg-type]
    with pytest.raises(TypeError):
        core.Packer((), ())
    unset = Epoch.__new__(Epoch)  # no slot set: the pickled wire's attrgetter fails the same way
    with pytest.raises(AttributeError):
        pack([unset])


def test_odd_records_meet_the_reference_replayers_error() -> None:
    for rec in [(CHUNK, 1.0), (EVENT,), (7, 1)]:
        calls = [(CHUNK, 0.0, 1.0, 2), rec]
        ref = fw.direct(calls)
        got = fw.through(calls, [], "packed")
        assert ref[1] is not None and got[1] == ref[1]
        assert got[0] == ref[0] == calls[:1]


def test_an_event_goes_pickled_beside_the_bytes() -> None:
    ev = Event(1.0, 2.0, "note", "a note", None, {"k": 1})
    calls = [_one_epoch(), (EVENT, ev), _one_epoch()]
    data, others = packer(True)(calls)  # type: ignore[misc]
    assert others == [ev]
    got, err = fw.through(calls, [], "packed")
    assert err is None and got[1] == (EVENT, ev)
    assert pickle.loads(pickle.dumps(others, 5)) == [ev]


def _feed(rec: object, calls: list) -> None:
    feed = {CHUNK: rec.on_chunk, REJECTED: rec.on_rejected, EVENT: rec.on_event}  # type: ignore[attr-defined]
    for c in calls:
        if type(c) is Epoch:
            rec.on_epoch(c)  # type: ignore[attr-defined]
        else:
            feed[c[0]](*c[1:])


def test_the_sink_packs_what_the_packer_packs_from_the_list() -> None:
    calls = _front_calls(RECORDINGS[0])
    rec, pack = sink(0, lambda: None, True), packer(True)
    assert rec is not None and pack is not None
    for i in range(0, len(calls), 300):
        _feed(rec, calls[i:i + 300])
        assert rec.pending
        assert rec.take() == pack(calls[i:i + 300])
    assert not rec.pending


def test_the_sink_calls_full_when_the_batch_is_reached() -> None:
    taken: list = []
    rec = sink(3, lambda: taken.append(rec.take()), True)
    assert rec is not None
    calls = [(CHUNK, float(i), 2.0, 10) if i % 2 else _one_epoch(mono=float(i)) for i in range(14)]  # 7 epochs
    _feed(rec, calls)
    assert len(taken) == 2  # after the 3rd and the 6th epoch
    sink_out = fw.Sink()
    rep = Replayer(sink_out)
    for batch in [*taken, rec.take()]:
        rep.run_packed(*batch)
    assert all(fw.same(a, b) for a, b in zip(sink_out.calls, calls, strict=True))


def test_a_call_the_sink_cannot_pack_is_raised_by_take() -> None:
    rec = sink(0, lambda: None, True)
    assert rec is not None
    rec.on_chunk(1.0, 2.0, 3)
    assert rec.on_epoch(Epoch.__new__(Epoch)) is None  # no slot set: kept, not raised in the pipeline
    rec.on_chunk(4.0, 5.0, 6)  # dropped: the batch is lost already
    assert rec.pending
    with pytest.raises(AttributeError, match="unset slot"):
        rec.take()
    assert not rec.pending  # and it goes on afresh
    rec.on_epoch(_one_epoch())
    data, others = rec.take()
    out = fw.Sink()
    Replayer(out).run_packed(data, others)
    assert len(out.calls) == 1 and fw.same(out.calls[0], _one_epoch())
    with pytest.raises(TypeError):
        rec.on_chunk(1.0)  # the method's own arity, as a Python method's
