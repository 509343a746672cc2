"""Long fuzz run through the whole Pipeline: random bytes, mutated valid sentences, broken GSV sets,
wrong talkers and time that jumps about. Not part of the test suite (`make fuzz` runs 1,000,000).

Prints inputs/s, exceptions (must be 0), peak RSS and RSS growth over the run, as RESULT lines.
Deterministic for a seed. Usage: python bench/fuzz.py --inputs 100000 [--seed 1]

With --native-diff the inputs (plus byte-level mutations that keep a valid checksum, embedded NULs,
overlong lines and multi-line blocks) go instead through the C core and the pure-Python path side by
side (Framer and Decoder with native=True / False) and every disagreement is counted; then
--gsv-adds (default --inputs) random GSV parts (gsv_parts) go through the C GSV set assembler and
the reference (livefix.state.gsv.make_assembler(native=True / False)), compared after every add();
then --sig-epochs (default --inputs / 5) random epochs (sig_epochs) go through SignalStats with its
C satellite loops and with the Python ones (native=True / False), state compared after every epoch.
`make fuzz` runs them under AddressSanitizer and UndefinedBehaviorSanitizer (--asan).
tests/decode/test_native_identity.py, tests/state/test_gsv_native.py and
tests/analysis/test_signal_native.py run samples of the same inputs.
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
sys.path.insert(0, str(Path(__file__).resolve().parent))  # fuzz_twins, fuzz_asan

from livefix.pipeline import Pipeline  # noqa: E402
from livefix.sources.base import Chunk, Link, LinkEvent, Marker  # noqa: E402

# Public example sentences (a public NMEA example page, docs/sources.md#example-sentences).
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


MUTANT_BYTES = b"0123456789.,-+eE*$ \x00NSEWAV_\r\n\x80\xff!"


def mutate_bytes(rng: random.Random, line: bytes) -> bytes:
    """A byte-level mutation of one framed sentence (no terminator), with its checksum set right
    again most of the time, so the field conversions themselves are exercised."""
    b = bytearray(line)
    for _ in range(rng.randrange(1, 4)):
        op = rng.randrange(5)
        j = rng.randrange(1, max(2, len(b)))
        if op == 0 and len(b) > 1:
            b[j % len(b)] = rng.choice(MUTANT_BYTES)
        elif op == 1:
            b[j:j] = bytes([rng.choice(MUTANT_BYTES)]) * rng.randrange(1, 4)
        elif op == 2:
            del b[j:j + rng.randrange(1, 4)]
        elif op == 3:
            b[j:j] = b[max(1, j - 8):j]
        else:
            b[j:j] = rng.choice([b"\x00", b"0" * rng.randrange(1, 40), b"9" * 25, b".", b"-", b"1e5"])
    body = bytes(b[1:b.rfind(b"*")] if b.rfind(b"*") > 0 else b[1:])
    if rng.random() < 0.8:
        case = "%02X" if rng.random() < 0.9 else "%02x"
        return b[:1] + body + b"*" + (case % cs(body)).encode()
    return bytes(b)


def native_input(rng: random.Random, base: list[str]) -> bytes:
    """One input for the native/pure differential: a chunk of bytes for the framer."""
    k = rng.random()
    if k < 0.5:  # a valid-checksum line mutated at byte level
        line = make(rng.choice(base))[:-2]
        return mutate_bytes(rng, line) + rng.choice([b"\r\n", b"\r\n", b"\n", b""])
    if k < 0.6:  # a plain block of several whole lines (the framer's C split)
        return b"".join(make(rng.choice(base)) for _ in range(rng.randrange(1, 12)))
    if k < 0.65:  # overlong lines and embedded NULs
        return b"$GPGGA," + bytes(rng.choice(b"0,.\x00") for _ in range(rng.randrange(100, 700))) + b"*00\r\n"
    return one_input(rng, base)


def _strict(v: object) -> object:
    """A value with its type spelled out, so 1 != 1.0 and 0.0 != -0.0 in the comparison."""
    if isinstance(v, dict) or v.__class__.__name__ == "mappingproxy":
        return [(k, _strict(x)) for k, x in v.items()]  # type: ignore[union-attr]
    if isinstance(v, list | tuple):
        return [_strict(x) for x in v]
    return (type(v).__name__, repr(v))


def strict_item(d: object) -> object:
    """A Decoded or Rejected value in strict form (type-exact fields)."""
    fields = getattr(d, "fields", None)
    return (type(d).__name__, getattr(d, "talker", None), getattr(d, "msg_id", None), getattr(d, "reason", None),
            getattr(d, "detail", None), _strict(fields) if fields is not None else None)


def native_diff(inputs: int, seed: int = 1, base: list[str] | None = None) -> tuple[int, int, list[str]]:
    """(inputs, disagreements, first examples): each input framed and decoded by the C core and by
    the pure path; sentences, counters and every decoded value (type-exact) must agree."""
    from livefix import _native  # noqa: F401 - fails loudly when the core is not built
    from livefix.decode.decoder import Decoder
    from livefix.framing import Framer

    rng = random.Random(seed)
    base = base if base is not None else BASE + sim_base()
    fn, fp = Framer(native=True), Framer(native=False)
    dn, dp = Decoder(native=True), Decoder(native=False)
    bad, examples = 0, []
    for n in range(inputs):
        data = native_input(rng, base)
        ln, lp = fn.feed(data), fp.feed(data)
        if n % 1000 == 999:
            ln, lp = ln + fn.finish(), lp + fp.finish()
        same = ln == lp and fn.counters == fp.counters
        if same:
            for a in ln:
                if strict_item(dn.decode(a)) != strict_item(dp.decode(a)):
                    same = False
                    break
        if not same:
            bad += 1
            if len(examples) < 5:
                examples.append(repr(data[:200]))
    if dn.counters != dp.counters:
        bad += 1
        examples.append("decoder counters differ")
    return inputs, bad, examples


from fuzz_asan import asan_run  # noqa: E402
from fuzz_later import TWIN_LOADERS, later_twins, twin_results  # noqa: E402
from fuzz_twins import (  # noqa: E402, F401  (tests read them here)
    gsv_diff,
    gsv_parts,
    load_ext,  # noqa: E402
    sig_diff,
    sig_epochs,
    sig_pair,
    sig_state,
)


def load_core(path: str) -> None:
    """Use the C core built at `path` (the sanitizer build) as livefix._native in this process."""
    mod = load_ext("livefix._native", path)
    import livefix
    import livefix.framing as framing  # imported above (Pipeline): its Framer must use this build too

    livefix._native = mod  # type: ignore[attr-defined]
    framing._CORE = mod
    if framing._NATIVE is not None:
        framing._NATIVE = mod


def load_gsv_core(path: str) -> None:
    """Use the GSV assembler built at `path` (the sanitizer build) as livefix.state._gsvcore."""
    import livefix.state
    from livefix.state import gsv  # imported above (Pipeline): make_assembler must use this build

    mod = load_ext("livefix.state._gsvcore", path)
    livefix.state._gsvcore = mod  # type: ignore[attr-defined]
    gsv._CORE = mod


def load_sig_core(path: str) -> None:
    """Use the SignalStats loops built at `path` (the sanitizer build) as livefix.analysis._sigcore."""
    import livefix.analysis
    from livefix.analysis import signal, signal_native

    mod = load_ext("livefix.analysis._sigcore", path)
    livefix.analysis._sigcore = mod  # type: ignore[attr-defined]
    if not signal_native.configure(mod, signal._CORE_ARGS):
        raise RuntimeError(f"{path}: not a usable build of livefix.analysis._sigcore")
    signal._CORE = mod


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
    ap.add_argument("--native-diff", action="store_true", help="compare the C core with the pure path")
    ap.add_argument("--asan", action="store_true", help="--native-diff with a sanitizer build of the core")
    ap.add_argument("--gsv-adds", type=int, help="GSV assembler add() calls of the differential (default --inputs)")
    ap.add_argument("--sig-epochs", type=int, help="SignalStats epochs of the differential (default --inputs / 5)")
    ap.add_argument("--core", help=argparse.SUPPRESS)  # path of the core to load (used by --asan)
    ap.add_argument("--gsv-core", help=argparse.SUPPRESS)  # path of the GSV assembler to load (--asan)
    ap.add_argument("--sig-core", help=argparse.SUPPRESS)  # path of the SignalStats loops to load (--asan)
    ap.add_argument("--twin-core", action="append", default=[], help=argparse.SUPPRESS)  # NAME=PATH (--asan)
    args = ap.parse_args()
    gsv_adds = args.inputs if args.gsv_adds is None else args.gsv_adds
    sig_n = args.inputs // 5 if args.sig_epochs is None else args.sig_epochs
    if args.asan:
        return asan_run(args.inputs, args.seed, gsv_adds, sig_n)
    if args.core:
        load_core(args.core)
    if args.gsv_core:
        load_gsv_core(args.gsv_core)
    if args.sig_core:
        load_sig_core(args.sig_core)
    for spec in args.twin_core:
        name, _, path = spec.partition("=")
        TWIN_LOADERS[name](path)
    if args.native_diff:
        t0 = time.perf_counter()
        n, bad, examples = native_diff(args.inputs, args.seed)
        dt = time.perf_counter() - t0
        for e in examples:
            print("disagreement:", e, file=sys.stderr)
        print(f"RESULT | native fuzz inputs | {n:,} in {dt:.0f} s | >= 1,000,000 | {'met' if n >= 1e6 else 'NOT met'}")
        print(f"RESULT | native fuzz disagreements | {bad} | 0 | {'met' if bad == 0 else 'NOT met'}")
        from livefix.state import gsv

        if gsv._CORE is None:
            print("GSV assembler: livefix.state._gsvcore not built, not compared", file=sys.stderr)
            return 1 if bad else 0
        t0 = time.perf_counter()
        n, gbad, examples = gsv_diff(gsv_adds, args.seed)
        twin_results("GSV assembler", "add() calls", n, f"{n:,}", 1_000_000, gbad, examples, t0)
        from livefix.analysis import signal

        if signal._CORE is None:
            print("SignalStats loops: livefix.analysis._sigcore not built, not compared", file=sys.stderr)
            return 1 if bad or gbad else 0
        t0 = time.perf_counter()
        n, calls, sbad, examples = sig_diff(sig_n, args.seed)
        twin_results("SignalStats loops", "calls", calls, f"{calls:,} ({n:,} epochs)", 300_000, sbad, examples, t0)
        lbad = later_twins(sig_n, args.seed)
        return 1 if bad or gbad or sbad or lbad else 0
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
