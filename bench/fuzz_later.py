"""The differentials of the C twins that came after the first three (bench/fuzz.py runs them after
the native, GSV and SignalStats ones, with the same seed), and how a sanitizer build of each is loaded.

Each compares a C twin with its Python reference call by call; the counts and disagreements are
printed as RESULT lines (bench/RESULTS.md reads them).
"""

from __future__ import annotations

import sys
import time

from fuzz_dop import dop_diff, load_dop_core, used_diff
from fuzz_epochcore import diff as epochcore_diff
from fuzz_epochcore import load_epoch_core
from fuzz_geo import diff as geo_diff
from fuzz_jumps import diff as jumps_diff
from fuzz_numbers import decimal_diff
from fuzz_sky import load_sky_core, sky_diff
from fuzz_state import load_state_core, state_diff
from fuzz_used import load_used_core
from fuzz_used import used_diff as tracker_diff

# The later twins: module -> loader of another build of it (the sanitizer build, --twin-core NAME=PATH)
TWIN_LOADERS = {
    "livefix.analysis._dopcore": load_dop_core,
    "livefix.state._usedcore": load_used_core,
    "livefix.analysis._epochcore": load_epoch_core,
    "livefix.state._skycore": load_sky_core,
    "livefix.state._statecore": load_state_core,
}


def later_twins(n: int, seed: int) -> int:
    """The differentials of the later twins (DOP solve and used pass, GSA used tracker, per-epoch
    passes, projection memo and jump check, sky store, epoch assembly, decimal numbers of the decoder), each against
    its Python reference; returns the disagreements in all."""
    from livefix.analysis import counts, dopsolve, geo
    from livefix.state import model, sky, used

    bad = 0
    if dopsolve._CORE is None:
        print("DOP solve: livefix.analysis._dopcore not built, not compared", file=sys.stderr)
    else:
        t0 = time.perf_counter()
        k, handed, b, examples = dop_diff(n, seed)
        twin_results("DOP solve", "geometries", k, f"{k:,} ({handed:,} handed back)", 200_000, b, examples, t0)
        t0 = time.perf_counter()
        k, handed, b2, examples = used_diff(n // 4, seed)
        twin_results("DOP used pass", "epochs", k, f"{k:,} ({handed:,} handed back)", 50_000, b2, examples, t0)
        bad += b + b2
    if used._CORE is None:
        print("GSA used tracker: livefix.state._usedcore not built, not compared", file=sys.stderr)
    else:
        t0 = time.perf_counter()
        k, b, examples = tracker_diff(n // 10, seed)
        twin_results("GSA used tracker", "calls", k, f"{k:,}", 20_000, b, examples, t0)
        bad += b
    if counts._CORE is None:
        print("per-epoch passes: livefix.analysis._epochcore not built, not compared", file=sys.stderr)
    else:
        t0 = time.perf_counter()
        k, b, examples = epochcore_diff(n // 2, seed)
        twin_results("per-epoch passes", "epochs", k, f"{k:,}", 100_000, b, examples, t0)
        bad += b
    if geo._CORE is None:
        print("projection memo and jump check: livefix.analysis._epochcore not built, not compared", file=sys.stderr)
    else:
        t0 = time.perf_counter()
        k, b, examples = geo_diff(n, seed)
        twin_results("projection memo", "calls", k, f"{k:,}", 200_000, b, examples, t0)
        t0 = time.perf_counter()
        k, b2, examples = jumps_diff(n // 10, seed)
        twin_results("jump check", "epochs", k, f"{k:,}", 20_000, b2, examples, t0)
        bad += b + b2
    if sky._CORE is None:
        print("sky store: livefix.state._skycore not built, not compared", file=sys.stderr)
    else:
        t0 = time.perf_counter()
        k, b, examples = sky_diff(n // 2, seed)
        twin_results("sky store", "calls", k, f"{k:,}", 100_000, b, examples, t0)
        bad += b
    if model._CORE is None:
        print("epoch assembly: livefix.state._statecore not built, not compared", file=sys.stderr)
    else:
        t0 = time.perf_counter()
        k, b, examples = state_diff(n // 10, seed)
        twin_results("epoch assembly", "calls", k, f"{k:,}", 20_000, b, examples, t0)
        bad += b
    core = sys.modules.get("livefix._native")  # the build loaded (the sanitizer one under --asan)
    if core is not None:
        t0 = time.perf_counter()
        k, _, b, examples = decimal_diff(n * 5, seed, core)
        twin_results("decimal numbers", "texts", k, f"{k:,}", 1_000_000, b, examples, t0)
        bad += b
    return bad


def twin_results(twin: str, unit: str, n: int, count: str, need: int, bad: int, examples: list[str],
                  t0: float) -> None:
    """The RESULT lines of one C twin's differential (and its first disagreements on stderr)."""
    dt = time.perf_counter() - t0
    for e in examples:
        print(f"{twin} disagreement:", e, file=sys.stderr)
    print(f"RESULT | {twin} fuzz {unit} | {count} in {dt:.0f} s | >= {need:,} | {'met' if n >= need else 'NOT met'}")
    print(f"RESULT | {twin} fuzz disagreements | {bad} | 0 | {'met' if bad == 0 else 'NOT met'}")
