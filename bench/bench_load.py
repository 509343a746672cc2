"""Load bench: a 20 Hz receiver with four constellations and two signals each, over loopback TCP,
through a full Session (reader + recorder + analysis threads) for N minutes (default 10).

Measures the latency from a chunk's arrival (its host monotonic stamp) to the snapshot that first
includes it, per third of the run (it must not grow), process RSS (flat), shed chunks and whether
the recording holds every byte sent. Prints `RESULT | name | figure | target | met` lines.
Usage: python bench/bench_load.py [--minutes 10] [--signals 2] [--rate 20]
"""

from __future__ import annotations

import argparse
import os
import socket
import sys
import tempfile
import threading
import time
from collections.abc import Iterator
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

# A second signal per constellation (NMEA 0183 4.11 GSV signal ID; values from memory):
# GPS 1 = L1 C/A, 8 = L5-Q; GLONASS 1 = G1 C/A, 3 = G2 C/A; Galileo 7 = E1, 1 = E5a; BeiDou 1 = B1I, 5 = B2a.
SIGNALS: dict[bytes, tuple[str, ...]] = {b"GP": ("1", "8", "6", "5", "7", "4"), b"GL": ("1", "3", "2", "4", "5", "6"),
                                         b"GA": ("7", "1", "2", "3", "4", "5"), b"GB": ("1", "5", "2", "3", "4", "6")}


def _cs(body: bytes) -> bytes:
    x = 0
    for b in body:
        x ^= b
    return b"%02X" % x


def _resignal(gsv: bytes, sig: str, cn0_drop: int) -> bytes:
    """The same GSV sentence for another signal id, C/N0 lowered by cn0_drop dB."""
    fields = gsv[1:gsv.index(b"*")].split(b",")
    for k in range(7, len(fields) - 1, 4):  # cno_NN of each satellite block
        if fields[k]:
            fields[k] = b"%02d" % max(0, int(fields[k]) - cn0_drop)
    fields[-1] = sig.encode()
    body = b",".join(fields)
    return b"$" + body + b"*" + _cs(body) + b"\r\n"


def stream(rate_hz: float, seconds: float, signals: int, seed: int = 1) -> Iterator[tuple[float, bytes]]:
    """(t, bytes) per epoch: the simulator's epoch plus GSV of every constellation and signal each epoch."""
    from livefix.sim.receiver import SimReceiver
    from livefix.sim.scenario import Scenario

    rx = SimReceiver(Scenario.load("rooftop"), rate_hz=rate_hz, seed=seed)
    last_gsv: dict[bytes, list[bytes]] = {}
    for t, data in rx.epochs(seconds):
        lines = [ln + b"\r\n" for ln in data.split(b"\r\n") if ln]
        gsv = [ln for ln in lines if ln[3:6] == b"GSV"]
        if gsv:
            last_gsv = {}
            for ln in gsv:
                last_gsv.setdefault(ln[1:3], []).append(ln)
        head = [ln for ln in lines if ln[3:6] not in (b"GSV", b"ZDA")]
        tail = [ln for ln in lines if ln[3:6] == b"ZDA"]
        extra = [_resignal(ln, SIGNALS.get(tk, ("1",) * 6)[k % 6], 3 * k)
                 for tk, group in last_gsv.items() for k in range(signals) for ln in group]
        yield t, b"".join(head + extra + tail)


def rss_mib() -> float:
    with open("/proc/self/status") as f:
        for ln in f:
            if ln.startswith("VmRSS:"):
                return int(ln.split()[1]) / 1024
    return 0.0


def pct(xs: list[float], q: float) -> float:
    if not xs:
        return float("nan")
    s = sorted(xs)
    return s[min(len(s) - 1, int(q * len(s)))]


def run_load(seconds: float, signals: int = 2, rate_hz: float = 20, record_dir: str | None = None) -> dict:
    """Serve the stream on 127.0.0.1, monitor it with a Session, return the figures."""
    from livefix.record.reader import RecordingReader
    from livefix.session import Session
    from livefix.sources.base import Chunk
    from livefix.sources.tcp import TcpSource

    srv = socket.create_server(("127.0.0.1", 0))
    port = srv.getsockname()[1]
    sent = {"bytes": 0, "lines": 0, "done": False}

    def serve() -> None:
        c, _ = srv.accept()
        t0 = time.monotonic()
        try:
            for t, data in stream(rate_hz, seconds, signals):
                delay = t0 + t - time.monotonic()
                if delay > 0:
                    time.sleep(delay)
                c.sendall(data)
                sent["bytes"] += len(data)
                sent["lines"] += data.count(b"\n")
            time.sleep(0.5)
        finally:
            sent["done"] = True
            c.close()

    samples: list[tuple[float, float]] = []  # (publish time, latency)
    rss: list[tuple[float, float]] = []  # (time, MiB)

    def on_snapshot(snap) -> None:  # noqa: ANN001
        now = time.monotonic()
        if snap.counters.bytes and not sent["done"]:  # while the stream runs (not the final publish)
            samples.append((now, now - snap.mono))
            if len(samples) % 10 == 0:
                rss.append((now, rss_mib()))

    tmp = tempfile.mkdtemp(prefix="livefix-load-", dir=record_dir)
    rec = os.path.join(tmp, "load.lfr")
    threading.Thread(target=serve, daemon=True).start()
    s = Session(TcpSource(f"tcp://127.0.0.1:{port}"), record_path=rec, publish_hz=5, on_snapshot=on_snapshot)
    start = time.monotonic()
    s.start()
    limit = start + seconds + 30
    while not sent["done"] and time.monotonic() < limit:
        time.sleep(0.2)
    time.sleep(0.5)
    s.stop()
    srv.close()
    snap = s.latest
    recorded = sum(len(it.data) for it in RecordingReader(rec).items() if type(it) is Chunk)
    os.remove(rec)
    os.rmdir(tmp)
    thirds: list[list[float]] = [[], [], []]
    for t, lat in samples:
        thirds[min(2, int(3 * (t - start) / max(seconds, 1e-9)))].append(lat)
    return {"seconds": seconds, "sent_bytes": sent["bytes"], "sent_lines": sent["lines"],
            "lines_per_s": sent["lines"] / seconds, "analysed_bytes": snap.counters.bytes,
            "decoded": snap.counters.decoded, "refused": snap.counters.malformed + snap.counters.bad_checksum,
            "dropped_chunks": snap.dropped_chunks, "recorded_bytes": recorded, "snapshots": len(samples),
            "snapshots_per_third": [len(x) for x in thirds], "p99": pct([x for _, x in samples], 0.99),
            "p99_thirds": [pct(x, 0.99) for x in thirds], "max": max((x for _, x in samples), default=float("nan")),
            "rss_first": next((m for t, m in rss if t - start >= seconds / 3), float("nan")),
            "rss_last": rss[-1][1] if rss else float("nan"),
            "error": snap.error, "epochs": snap.analysis.get("stream", {}).get("epochs")}


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--minutes", type=float, default=10.0)
    ap.add_argument("--signals", type=int, default=2, help="GSV signals per constellation (1-6)")
    ap.add_argument("--rate", type=float, default=20.0, help="epochs per second")
    a = ap.parse_args()
    r = run_load(a.minutes * 60, a.signals, a.rate)
    growth = r["p99_thirds"][2] - r["p99_thirds"][0]
    drss = r["rss_last"] - r["rss_first"]
    print(f"{a.minutes:g} min at {a.rate:g} Hz, {a.signals} signals: {r['sent_lines']} lines "
          f"({r['lines_per_s']:.0f}/s), {r['sent_bytes']} bytes, {r['snapshots']} snapshots, "
          f"p99 by third {[round(x, 3) for x in r['p99_thirds']]}, max {r['max']:.3f} s, error {r['error']}")
    ok = r["recorded_bytes"] == r["sent_bytes"]
    print(f"RESULT | load lines/s ({a.signals} signals) | {r['lines_per_s']:.0f} | info | met")
    print(f"RESULT | load latency p99 | {r['p99']:.3f} s | < 1 s | {'met' if r['p99'] < 1 else 'NOT met'}")
    print(f"RESULT | load latency p99 growth, last vs first third | {growth:+.3f} s | < 0.25 s | "
          f"{'met' if growth < 0.25 else 'NOT met'}")
    print(f"RESULT | load RSS growth after the first third | {drss:+.1f} MiB | < 20 MiB | {'met' if drss < 20 else 'NOT met'}")
    print(f"RESULT | load shed chunks | {r['dropped_chunks']} | 0 | {'met' if r['dropped_chunks'] == 0 else 'NOT met'}")
    print(f"RESULT | load recording holds every byte | {ok} | True | {'met' if ok else 'NOT met'}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
