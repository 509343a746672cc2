"""A shortened load run (10 s of 20 Hz, four constellations, two signals each, over loopback TCP
through a Session with recording): snapshots keep coming in every part of the run, shedding is
accounted for, nothing fails, and the recording holds every byte. Latency figures live in
bench/bench_load.py; this test never asserts on wall time."""

from __future__ import annotations

import importlib.util

from relkit import ROOT


def load_bench():  # noqa: ANN201
    spec = importlib.util.spec_from_file_location("livefix_bench_load", ROOT / "bench" / "bench_load.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def test_two_signal_stream_shape() -> None:
    bench = load_bench()
    epochs = list(bench.stream(20, 110, 2))
    late = epochs[-1][1]
    gsv = [ln for ln in late.split(b"\r\n") if ln[3:6] == b"GSV"]
    assert {ln[1:3] for ln in gsv} == {b"GP", b"GL", b"GA", b"GB"}
    assert len({(ln[1:3], ln.rsplit(b",", 1)[1][:1]) for ln in gsv}) == 8  # two signal ids each


def test_short_load_run_keeps_publishing_and_accounts_for_everything(tmp_path) -> None:  # noqa: ANN001
    r = load_bench().run_load(10.0, signals=2, rate_hz=20, record_dir=str(tmp_path))
    assert r["error"] is None
    assert all(n >= 3 for n in r["snapshots_per_third"]), r  # publishing did not stop or stall
    assert r["recorded_bytes"] == r["sent_bytes"] > 0
    if r["dropped_chunks"] == 0:
        assert r["analysed_bytes"] == r["sent_bytes"]
        assert r["decoded"] + r["refused"] == r["sent_lines"] and r["refused"] == 0
    else:  # shedding is explicit: fewer bytes analysed, never fewer recorded
        assert r["analysed_bytes"] < r["sent_bytes"]
    assert r["epochs"] and r["epochs"] >= 150
