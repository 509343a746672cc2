"""Decode speed: pynmeagps NMEAReader.parse versus livefix Decoder on the same lines, same run.

Usage: python bench/bench_decode.py [file.nmea] [--seconds N] [--synthetic] [--no-line-cache]
Without a file it takes the simulator's stream (scenario rooftop, 10 Hz, four constellations, GSV
every epoch, see bench_replay.sim_epochs); --synthetic uses a generated line set instead whose C/N0
values change every epoch (invented site and satellites), a harder case for the line cache.
Speed is measured here, never asserted in tests.
"""

from __future__ import annotations

import argparse
import random
import sys
import time
from pathlib import Path

from pynmeagps import NMEAReader

from livefix.decode import Decoded
from livefix.decode.decoder import Decoder

TARGET = 20.0


def _cs(body: str) -> bytes:
    x = 0
    for ch in body:
        x ^= ord(ch)
    return f"${body}*{x:02X}".encode("ascii")


def _dm(v: float, width: int) -> str:
    d = int(abs(v))
    return f"{d:0{width}d}{(abs(v) - d) * 60:08.5f}"


def make_lines(seconds: float = 60.0, seed: int = 7) -> list[bytes]:
    """One epoch every 0.1 s: GGA, RMC, GNS, GST, VTG, ZDA, 4 GSA, GSV sets for GP/GL/GA/GB."""
    rnd = random.Random(seed)
    lat0, lon0 = 12.3456789, -45.6789012  # invented
    cons = [("GP", "1", "1", 11), ("GL", "2", "1", 7), ("GA", "3", "7", 9), ("GB", "4", "1", 10)]
    sats = {t: [(rnd.randint(1, 36), rnd.randint(5, 85), rnd.randint(0, 359)) for _ in range(n)]
            for t, _, _, n in cons}
    out: list[bytes] = []
    for k in range(int(seconds * 10)):
        t = 3600 * 7 + k / 10
        hh, mm, ss = int(t // 3600), int(t // 60 % 60), t % 60
        tm = f"{hh:02d}{mm:02d}{ss:05.2f}"
        lat = _dm(lat0 + rnd.gauss(0, 1e-6), 2)
        lon = _dm(lon0 + rnd.gauss(0, 1e-6), 3)
        alt = f"{123.4 + rnd.gauss(0, 0.5):.1f}"
        out.append(_cs(f"GNGGA,{tm},{lat},N,{lon},W,1,24,0.7,{alt},M,-12.3,M,,"))
        out.append(_cs(f"GNRMC,{tm},A,{lat},N,{lon},W,0.01,,020125,,,A,V"))
        out.append(_cs(f"GNGNS,{tm},{lat},N,{lon},W,AAAA,24,0.7,{alt},-12.3,,,V"))
        out.append(_cs(f"GNGST,{tm},1.2,0.9,0.6,45.0,0.8,0.7,1.5"))
        out.append(_cs("GNVTG,,T,,M,0.01,N,0.02,K,A"))
        out.append(_cs(f"GNZDA,{tm},02,01,2025,00,00"))
        for talker, sysid, sig, _n in cons:
            ids = ",".join(f"{s[0]:02d}" for s in sats[talker][:12]).split(",")
            ids += [""] * (12 - len(ids))
            out.append(_cs(f"GNGSA,A,3,{','.join(ids)},1.2,0.7,1.0,{sysid}"))
            sv = sats[talker]
            nmsg = (len(sv) + 3) // 4
            for m in range(nmsg):
                blk = ",".join(f"{s:02d},{e:02d},{a:03d},{rnd.randint(25, 50)}" for s, e, a in
                               sv[4 * m: 4 * m + 4])
                out.append(_cs(f"{talker}GSV,{nmsg},{m + 1},{len(sv):02d},{blk},{sig}"))
    return out


def _run(fn, lines: list[bytes]) -> float:
    """CPU seconds of this thread for one pass (less disturbed by other processes than wall time)."""
    t0 = time.thread_time()
    for ln in lines:
        fn(ln)
    return time.thread_time() - t0


def _time_both(ref, ours, lines: list[bytes], repeat: int) -> tuple[float, float]:
    """Interleave the two so that both see the same machine load; best of `repeat` each."""
    best_r = best_o = float("inf")
    for _ in range(repeat):
        best_r = min(best_r, _run(ref, lines))
        best_o = min(best_o, _run(ours, lines))
    return len(lines) / best_r, len(lines) / best_o


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("file", nargs="?", help="NMEA file (one sentence a line); default: generated")
    ap.add_argument("--seconds", type=float, default=180.0, help="generated duration (default 180 s)")
    ap.add_argument("--synthetic", action="store_true", help="generated lines instead of the simulator")
    ap.add_argument("--repeat", type=int, default=5, help="take the best of N runs")
    ap.add_argument("--no-line-cache", action="store_true", help="time the decoder without its cache "
                    "of repeated lines (every line fully checked and converted)")
    a = ap.parse_args(argv)
    if a.file:
        lines = [ln.rstrip(b"\r\n") for ln in Path(a.file).read_bytes().splitlines() if ln.strip()]
    elif a.synthetic:
        lines = make_lines(a.seconds)
    else:
        from bench_replay import sim_epochs

        lines = [ln for _, data in sim_epochs(rate=10, seconds=a.seconds) for ln in data.split(b"\r\n") if ln]
    dec = Decoder()
    ok = sum(isinstance(dec.decode(ln), Decoded) for ln in lines)
    print(f"lines: {len(lines)}  decoded: {ok}  fast path: {dec.counters.fast}")
    dec = Decoder(line_cache=0 if a.no_line_cache else 1024)
    ref, ours = _time_both(NMEAReader.parse, dec.decode, lines, a.repeat)
    ratio = ours / ref
    print(f"pynmeagps parse : {ref:12,.0f} lines/s")
    label = "livefix Decoder (no line cache)" if a.no_line_cache else "livefix Decoder"
    print(f"{label} : {ours:12,.0f} lines/s")
    print(f"ratio           : {ratio:8.1f}x")
    what = "synthetic lines" if a.synthetic else ("file" if a.file else "sim 10 Hz")
    name = f"decode fast path vs pynmeagps parse, {what}" + (" (no line cache)" if a.no_line_cache else "")
    print(f"RESULT | {name} | {ratio:.1f}x | >= {TARGET:.0f}x | {'met' if ratio >= TARGET else 'NOT met'}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
