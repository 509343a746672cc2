"""Pipeline end to end on synthetic lines: framing -> real Decoder -> StateModel -> real Analyzer."""

from __future__ import annotations

import datetime as dt
import random

from pynmeagps import NMEAReader, calc_checksum

from livefix.pipeline import Pipeline, run_items
from livefix.sources.base import Chunk, Link, LinkEvent, Marker

# Public example sentences (docs/sources.md#example-sentences).
PUBLIC = [b"$GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,*47",
          b"$GPRMC,123519,A,4807.038,N,01131.000,E,022.4,084.4,230394,003.1,W*6A",
          b"$GPGSA,A,3,04,05,,09,12,,,24,,,,,2.5,1.3,2.1*39",
          b"$GPGSV,2,1,08,01,40,083,46,02,17,308,41,12,07,344,39,14,22,228,45*75"]


def line(body: str) -> bytes:
    return f"${body}*{calc_checksum(body)}".encode()


def stream(n: int) -> list[bytes]:
    """n one-second epochs of invented lines around an invented point."""
    out: list[bytes] = []
    for k in range(n):
        t = f"08{k // 60 % 60:02d}{k % 60:02d}.00"
        mins = 12.5 + 0.00001 * (k % 7)
        out += [line(f"GPGGA,{t},45{mins:08.5f},N,00730.00000,E,1,07,1.1,210.0,M,48.0,M,,"),
                line(f"GPRMC,{t},A,45{mins:08.5f},N,00730.00000,E,0.1,0.0,021226,,,A"),
                line("GPGSA,A,3,02,05,09,13,17,20,28,,,,,,1.9,1.1,1.5"),
                line("GPGSV,2,1,07,02,55,040,45,05,30,110,41,09,20,200,38,13,70,300,47"),
                line("GPGSV,2,2,07,17,15,250,33,20,40,330,43,28,10,020,")]
    return out


def chunks(data: bytes, sizes: list[int], t0: float = 50.0) -> list[Chunk]:
    out, pos, k = [], 0, 0
    while pos < len(data):
        n = sizes[k % len(sizes)]
        out.append(Chunk(t0 + pos / 1000.0, 1.8e9 + pos / 1000.0, data[pos:pos + n]))
        pos, k = pos + n, k + 1
    return out


def test_public_example_through_every_stage() -> None:
    data = b"\r\n".join(PUBLIC) + b"\r\n"
    p = run_items([LinkEvent(1.0, 1.7e9, Link.STREAMING), Chunk(1.0, 1.7e9, data)])
    snap = p.snapshot()
    ep = snap.epoch
    ref = NMEAReader.parse(PUBLIC[0])  # reference decoder: pynmeagps
    assert (ep.lat, ep.lon, ep.quality, ep.num_sv, ep.hdop) == (ref.lat, ref.lon, ref.quality, ref.numSV,
                                                                 ref.HDOP)
    assert ep.utc == dt.datetime(1994, 3, 23, 12, 35, 19, tzinfo=dt.UTC).timestamp()  # RMC 230394
    c = snap.counters
    assert (c.lines, c.decoded, c.bad_checksum, c.junk_bytes) == (4, 4, 0, 0)
    assert snap.finished and snap.link == Link.STREAMING
    assert ep.sats == ()  # GSV 1 of 2 only: an incomplete set never reaches the sky


def test_split_independence_and_bad_input_counted() -> None:
    lines = stream(40)
    lines[7] = lines[7][:-2] + b"00"  # wrong checksum
    lines[12] = lines[12][:25]  # truncated mid-line
    data = b"\x00\xffnoise" + b"\r\n".join(lines) + b"\r\n"
    rng = random.Random(7)
    split_a = chunks(data, [len(data)])
    split_b = chunks(data, [rng.randint(1, 90) for _ in range(50)])
    pa, pb = run_items(split_a), run_items(split_b)
    ca, cb = pa.counters(), pb.counters()
    assert ca == cb
    assert (ca.bad_checksum, ca.malformed, ca.junk_bytes) == (1, 1, 7)
    assert ca.lines == len(lines) and ca.decoded == len(lines) - 2
    assert pa.state.epochs == pb.state.epochs == 40
    last = pb.snapshot().epoch
    assert last.utc == dt.datetime(2026, 12, 2, 8, 0, 39, tzinfo=dt.UTC).timestamp()
    assert len(last.sats) == 7 and sum(s.used for s in last.sats) == 7
    assert sum(s.cn0 is not None for s in last.sats) == 6


def test_markers_links_and_controls_reach_analysis() -> None:
    p = Pipeline()
    p.feed(LinkEvent(1.0, 1.8e9, Link.CONNECTING))
    for c in chunks(b"\r\n".join(stream(5)) + b"\r\n", [300]):
        p.feed(c)
    p.feed(Marker(3.0, 1.8e9 + 2, "cable swapped"))
    p.note("recording", "recording to x.lfr")
    p.set_reference(45.2083, 7.5, 258.0)
    p.reset_analysis()
    p.finish()
    kinds = [e["kind"] for e in p.snapshot().analysis["events"]]
    assert p.state.epochs == 5
    assert "link" not in kinds and "marker" not in kinds  # reset_analysis started the log afresh
    p2 = run_items([LinkEvent(1.0, 1.8e9, Link.CONNECTING), Marker(2.0, 1.8e9, "cable swapped")])
    kinds2 = [e["kind"] for e in p2.snapshot().analysis["events"]]
    assert kinds2 == ["link", "marker"]


def test_leap_second_line_through_real_decoder() -> None:
    # 23:59:60 is a legal UTC label (ITU-R TF.460): counted or accepted, never a crash
    lines = [line("GPGGA,235959.00,4512.5,N,00730.0,E,1,07,1.1,210.0,M,48.0,M,,"),
             line("GPGGA,235960.00,4512.5,N,00730.0,E,1,07,1.1,210.0,M,48.0,M,,"),
             line("GPGGA,000000.00,4512.5,N,00730.0,E,1,07,1.1,210.0,M,48.0,M,,")]
    p = run_items([Chunk(1.0, 1.8e9, b"\r\n".join(lines) + b"\r\n")])
    c = p.counters()
    assert c.lines == 3 and c.decoded + c.malformed == 3
    assert p.state.epochs >= 2


# -- caches belong to the pipeline instance -----------------------------------------------------
def _demo_items(name: str, limit: int) -> list:
    import itertools
    from pathlib import Path

    from livefix.record.reader import RecordingReader

    path = Path(__file__).resolve().parents[1] / "recordings" / name
    return list(itertools.islice(RecordingReader(str(path)).items(), limit))


def _module_state() -> dict[tuple[str, str], tuple]:
    """Every module-level value of livefix that is not code: its identity and, for a container,
    the identities of its contents (a memo that grows, is cleared or is rebound shows up)."""
    import sys
    import types

    code = (types.ModuleType, types.FunctionType, types.BuiltinFunctionType, type)
    out: dict[tuple[str, str], tuple] = {}
    for mod_name, mod in list(sys.modules.items()):
        if not mod_name.startswith("livefix") or mod is None:
            continue
        for k, v in vars(mod).items():
            if isinstance(v, code) or k.startswith("__"):
                continue
            if isinstance(v, dict):
                inner: tuple = tuple((id(a), id(b)) for a, b in v.items())
            elif isinstance(v, (list, set, bytearray)):
                inner = tuple(id(a) for a in v) if not isinstance(v, bytearray) else (bytes(v),)
            else:
                inner = ()
            out[(mod_name, k)] = (id(v), inner)
    return out


def test_a_run_leaves_every_module_level_value_alone() -> None:
    """Memo caches live in the objects a Pipeline creates (state model, analyzer), never in a module:
    a warm pipeline run changes no module-level value of livefix (common practice: two pipelines in
    one process must share no mutable state). A module-global memo (a dict that fills, a tuple that
    is rebound) fails this."""
    items = _demo_items("building-5min.lfr", 1500)
    run_items(items)  # warm-up: lazy imports bind their module values once
    before = _module_state()
    p = run_items(items)
    p.snapshot()
    after = _module_state()
    changed = sorted(k for k in before if k in after and before[k] != after[k])
    assert changed == []
    assert sorted(set(after) - set(before)) == []  # nothing new bound either
    assert p.analyzer.internal_errors == 0


def test_two_pipelines_interleaved_give_what_each_gives_alone() -> None:
    """Two pipelines fed different recordings item by item, alternately, end with the very snapshot
    each gives when run alone (common practice: instances that share no cache cannot disturb each
    other); and no mutable container is reachable from both."""
    import gc
    import itertools
    import json
    import types

    a_items = _demo_items("building-5min.lfr", 2500)
    b_items = _demo_items("rooftop-5min.lfr", 2500)

    def figures(p: Pipeline) -> str:
        assert p.analyzer.internal_errors == 0 and p.counters().internal_errors == 0
        return json.dumps(p.analyzer.snapshot(p.counters()), sort_keys=True) + repr(p.state.sky())

    alone = [figures(run_items(a_items)), figures(run_items(b_items))]
    pa, pb = Pipeline(), Pipeline()
    for x, y in itertools.zip_longest(a_items, b_items):
        if x is not None:
            pa.feed(x)
        if y is not None:
            pb.feed(y)
    pa.finish()
    pb.finish()
    assert [figures(pa), figures(pb)] == alone
    assert alone[0] != alone[1]  # the two inputs really differ

    tables = {ident for ident, _ in _module_state().values()}  # module constants (checked above)

    def mutable_reach(root: object) -> dict[int, object]:
        """Mutable containers reachable from root through instances and containers (not through
        code, classes, modules or module-level tables, which are shared by design and which the
        test above keeps unchanged)."""
        stop = (types.ModuleType, types.FunctionType, types.BuiltinFunctionType, type, types.CodeType)
        seen: set[int] = set(tables)
        found: dict[int, object] = {}
        todo = [root]
        while todo:
            o = todo.pop()
            if id(o) in seen or isinstance(o, stop):
                continue
            seen.add(id(o))
            if isinstance(o, (dict, list, set, bytearray)):
                found[id(o)] = o
            todo.extend(gc.get_referents(o))
        return found

    ra, rb = mutable_reach(pa), mutable_reach(pb)
    shared = [type(ra[i]).__name__ for i in set(ra) & set(rb)]
    assert shared == []
