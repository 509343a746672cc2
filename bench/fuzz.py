"""Long fuzz run through the whole Pipeline: random bytes, mutated valid sentences, broken GSV sets,
wrong talkers and time that jumps about. Not part of the test suite (`make fuzz` runs 1,000,000).

Prints inputs/s, exceptions (must be 0), peak RSS and RSS growth over the run, as RESULT lines.
Deterministic for a seed. Usage: python bench/fuzz.py --inputs 100000 [--seed 1]
"""

from __future__ import annotations

import argparse
import random
import resource
import sys
import time
import traceback
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from livefix.pipeline import Pipeline  # noqa: E402
from livefix.sources.base import Chunk, Link, LinkEvent, Marker  # noqa: E402

# Public example sentences (shared/REFERENCES.md: the public NMEA data reference page).
BASE = [
    "GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,",
    "GPRMC,123519,A,4807.038,N,01131.000,E,022.4,084.4,230394,003.1,W",
    "GPGSV,2,1,08,01,40,083,46,02,17,308,41,12,07,344,39,14,22,228,45",
]
NASTY = ["", "NaN", "inf", "-inf", "1e308", "1e999", "-1", "99999999999999999999", "0x1F", " 1", "+", ".",
         "1.2.3", "999", "-99", "\u22121", "\xe9", "*", "$", "\x1b[2J", "<script>", "%s%n", "{0}"]
TALKERS = ["GP", "GL", "GA", "GB", "GQ", "GI", "GN", "XX", "P", "12", ""]


def cs(body: bytes) -> int:
    x = 0
    for b in body:
        x ^= b
    return x


def make(body: str) -> bytes:
    raw = body.encode("utf-8", errors="replace")
    return b"$" + raw + b"*%02X\r\n" % cs(raw)


def sim_base() -> list[str]:
    from livefix.sim.receiver import SimReceiver
    from livefix.sim.scenario import Scenario

    rx = SimReceiver(Scenario.load("rooftop"), rate_hz=20, seed=3)
    out: list[str] = []
    for i, (_, data) in enumerate(rx.epochs(110)):
        if i >= 2000:
            out += [ln[1:ln.index(b"*")].decode() for ln in data.split(b"\r\n") if ln.startswith(b"$")]
    return list(dict.fromkeys(out))


def mutate(rng: random.Random, body: str) -> str:
    f = body.split(",")
    op = rng.randrange(8)
    i = rng.randrange(len(f))
    if op == 0 and len(f) > 1:
        del f[max(1, i)]
    elif op == 1:
        f.insert(i, f[i])
    elif op == 2 and i:
        f[i] = rng.choice(NASTY)
    elif op == 3:
        f[0] = rng.choice(TALKERS) + f[0][2:]
    elif op == 4:
        f = f[: i + 1]
    elif op == 5:
        f += [rng.choice(NASTY) for _ in range(rng.randrange(40))]
    elif op == 6:
        t = rng.randrange(-10, 90000)
        f[min(1, len(f) - 1)] = f"{t // 3600:02d}{t % 3600 // 60:02d}{t % 60:02d}.00"
    else:
        f[0] = f[0][:2] + "GSV"
        f[1:4] = [str(rng.randrange(-2, 12)), str(rng.randrange(-2, 12)), str(rng.randrange(-5, 10**9))]
    return ",".join(f)


def one_input(rng: random.Random, base: list[str]) -> bytes:
    k = rng.random()
    if k < 0.15:
        return rng.randbytes(rng.randrange(1, 300))
    if k < 0.16:  # over-long lines, terminated or not (framing cap)
        return b"$GPTXT," + b"A" * rng.randrange(400, 5000) + rng.choice([b"", b"\r\n", b"*00\r\n"])
    if k < 0.35:
        return make(rng.choice(base))
    data = make(mutate(rng, rng.choice(base)))
    if k > 0.95:  # split, truncate or bit-flip the framed bytes
        j = rng.randrange(len(data))
        data = data[:j] + bytes([data[j] ^ (1 << rng.randrange(8))]) + data[j + 1:]
    return data


def rss_kib() -> int:
    with open("/proc/self/status") as f:
        for ln in f:
            if ln.startswith("VmRSS:"):
                return int(ln.split()[1])
    return 0


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--inputs", type=int, default=100_000)
    ap.add_argument("--seed", type=int, default=1)
    args = ap.parse_args()
    rng = random.Random(args.seed)
    base = BASE + sim_base()
    p = Pipeline(source="fuzz")
    p.feed(LinkEvent(0.0, 1.7e9, Link.STREAMING, "fuzz"))
    errors, first = 0, []
    rss_early = 0
    t0 = time.perf_counter()
    for n in range(args.inputs):
        mono = 1.0 + n * 0.002
        item = Chunk(mono, 1.7e9 + mono, one_input(rng, base))
        try:
            p.feed(item)
            if n % 5000 == 0:
                p.feed(Marker(mono, 1.7e9 + mono, rng.choice(NASTY)))
                p.feed(LinkEvent(mono, 1.7e9 + mono, rng.choice(Link.ALL), rng.choice(NASTY)))
                p.snapshot()
        except Exception:  # noqa: BLE001 - counted; the run goes on
            errors += 1
            if len(first) < 3:
                first.append(traceback.format_exc())
        if n == args.inputs // 10:
            rss_early = rss_kib()
    try:
        p.finish()
        p.snapshot()
    except Exception:  # noqa: BLE001
        errors += 1
        first.append(traceback.format_exc())
    dt = time.perf_counter() - t0
    c = p.counters()
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    growth = (rss_kib() - rss_early) / 1024
    accounted = c.lines == c.decoded + c.bad_checksum + c.malformed + c.unknown and c.internal_errors == 0
    for tb in first:
        print(tb, file=sys.stderr)
    print(f"inputs {args.inputs}, bytes {c.bytes}, lines {c.lines}, decoded {c.decoded}, bad_checksum "
          f"{c.bad_checksum}, malformed {c.malformed}, unknown {c.unknown}, overlong {c.overlong}, "
          f"junk_bytes {c.junk_bytes}, epochs {p.state.epochs}")
    print(f"RESULT | fuzz inputs/s | {args.inputs / dt:,.0f} | info | met")
    print(f"RESULT | fuzz exceptions | {errors} | 0 | {'met' if errors == 0 else 'NOT met'}")
    print(f"RESULT | fuzz lines accounted (decoded + refused) | {accounted} | True | "
          f"{'met' if accounted else 'NOT met'}")
    print(f"RESULT | fuzz peak RSS | {peak:.0f} MiB | info | met")
    print(f"RESULT | fuzz RSS growth after first 10 % | {growth:+.1f} MiB | < 20 MiB | "
          f"{'met' if growth < 20 else 'NOT met'}")
    return 1 if errors or not accounted else 0


if __name__ == "__main__":
    raise SystemExit(main())
