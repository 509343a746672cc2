"""Random decimal field texts for the differential of the C core's number conversion
(livefix/_native_fields.c, plain_double: a short route of integer / power of ten) against float(),
used by tests/decode/test_native_numbers.py and, once wired in, by bench/fuzz.py under the
sanitizers. Deterministic for a seed.

Usage: PYTHONPATH=. python bench/fuzz_numbers.py [--inputs N] [--seed S] [--core PATH]
"""

from __future__ import annotations

import argparse
import random
import sys
import time
from types import ModuleType

_DIGITS = "0123456789"
_JUNK = "0123456789.+-eE_ "
_VTG = "GPVTG,{},T,,M,0.5,N,0.9,K,A"  # the text goes in the first field, a decimal (course over ground)


def decimal_text(rng: random.Random) -> str:
    """One text around the short route's limits: 0-19 digits before the point and 0-25 after,
    signs, 2^53 and its neighbours, printed doubles, and junk a receiver might send."""
    k = rng.random()
    if k < 0.35:
        s = "".join(rng.choices(_DIGITS, k=rng.randint(0, 19))) + "." + "".join(rng.choices(_DIGITS, k=rng.randint(0, 25)))
    elif k < 0.5:
        s = repr(rng.uniform(-1e7, 1e7))
    elif k < 0.6:
        s = f"{rng.random() * 10.0 ** rng.randint(-6, 17):.{rng.randint(0, 24)}f}"
    elif k < 0.75:
        s = str(2**53 + rng.randint(-3, 3) * rng.choice((1, 10, 100)))
        p = rng.randint(0, len(s))
        s = s[:p] + "." * (rng.random() < 0.7) + s[p:]
    else:
        s = "".join(rng.choices(_JUNK, k=rng.randint(0, 24)))
    if rng.random() < 0.25:
        s = rng.choice("+-") + s
    return s


def core_value(core: ModuleType, text: str) -> object:
    """The core's value for `text` as a decimal field: a float, "" for the empty field, None when the
    core hands the line back to the pure path."""
    from livefix.checksum import with_checksum

    r = core.decode(with_checksum(_VTG.format(text)).encode())
    return None if r is None else r[1]["cogt"]


def reference_value(text: str) -> object:
    """float() as the pure path applies it to a decimal field ("" stays ""), None when it refuses."""
    if text == "":
        return ""
    try:
        return float(text)
    except ValueError:
        return None


def plain(text: str) -> bool:
    """The shape the core converts itself: [+-]?digits with at most one '.', at most 63 characters."""
    body = text[1:] if text[:1] in ("+", "-") else text
    return 0 < len(text) <= 63 and body.count(".") <= 1 and any(c in _DIGITS for c in body) and all(
        c in _DIGITS + "." for c in body)


def decimal_diff(inputs: int, seed: int = 1, core: ModuleType | None = None) -> tuple[int, int, int, list[str]]:
    """(inputs, converted by the core, disagreements, first examples). A disagreement: a float whose
    bits differ from float()'s, a value of another type, a plain text handed back, or an unplain one
    converted."""
    if core is None:
        from livefix import _native as core  # fails loudly when the core is not built
    from livefix.decode.decoder import Decoder

    Decoder()  # configures the core (talkers, year pivot) as the decoder module does at import
    rng = random.Random(seed)
    bad, took, examples = 0, 0, []
    for _ in range(inputs):
        t = decimal_text(rng)
        got, want = core_value(core, t), reference_value(t)
        if got is None:
            ok = not plain(t)
        else:
            took += 1
            ok = plain(t) or t == ""
            ok = ok and type(got) is type(want) and (got == "" or got.hex() == want.hex())  # type: ignore[union-attr]
        if not ok:
            bad += 1
            if len(examples) < 5:
                examples.append(f"{t!r}: core {got!r}, float() {want!r}")
    return inputs, took, bad, examples


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--inputs", type=int, default=1_000_000)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--core", help="path of a build of livefix._native to use (e.g. the sanitizer build)")
    args = ap.parse_args()
    core = None
    if args.core:
        from fuzz_twins import load_ext

        core = load_ext("livefix._native", args.core)
    t0 = time.perf_counter()
    n, took, bad, examples = decimal_diff(args.inputs, args.seed, core)
    for e in examples:
        print("disagreement:", e, file=sys.stderr)
    print(f"RESULT | decimal texts | {n:,} ({took:,} converted by the core) in {time.perf_counter() - t0:.0f} s | info | met")
    print(f"RESULT | decimal disagreements | {bad} | 0 | {'met' if bad == 0 else 'NOT met'}")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
