"""The differentials of the C twins that came after the first three (bench/fuzz.py runs them after
the native, GSV and SignalStats ones, with the same seed), and how a sanitizer build of each is loaded.

Each compares a C twin with its Python reference call by call; the counts and disagreements are
printed as RESULT lines (bench/RESULTS.md reads them).
"""

from __future__ import annotations

import importlib
import sys
import time
from collections.abc import Callable

from fuzz_arcs import diff as arcs_diff
from fuzz_clock import clock_diff, load_clock_core, parts_diff
from fuzz_dop import dop_diff, load_dop_core, used_diff
from fuzz_epochcore import diff as epochcore_diff
from fuzz_epochcore import load_epoch_core
from fuzz_fix import diff as fix_diff
from fuzz_front import front_diff
from fuzz_geo import diff as geo_diff
from fuzz_jumps import diff as jumps_diff
from fuzz_numbers import decimal_diff
from fuzz_pos import diff as pos_diff
from fuzz_reader import diff as reader_diff
from fuzz_reader import load_rec_core
from fuzz_signal import diff as signal_step_diff
from fuzz_site import diff as site_diff
from fuzz_sky import load_sky_core, sky_diff
from fuzz_state import load_state_core, state_diff
from fuzz_track import diff as track_diff
from fuzz_used import load_used_core
from fuzz_used import used_diff as tracker_diff
from fuzz_wire import load_wire_core, wire_diff

# The later twins: module -> loader of another build of it (the sanitizer build, --twin-core NAME=PATH)
TWIN_LOADERS = {
    "livefix.analysis._dopcore": load_dop_core,
    "livefix.state._usedcore": load_used_core,
    "livefix.analysis._epochcore": load_epoch_core,
    "livefix.state._skycore": load_sky_core,
    "livefix.state._statecore": load_state_core,
    "livefix.state._clockcore": load_clock_core,
    "livefix.record._reccore": load_rec_core,
    "livefix._wirecore": load_wire_core,
}


def _handed(diff: Callable[[int, int], tuple[int, int, int, list[str]]]) -> Callable[[int, int], tuple]:
    """A differential that also counts the cases the C code handed back to the Python."""
    def run(n: int, seed: int) -> tuple[int, int, list[str], str]:
        k, handed, b, examples = diff(n, seed)
        return k, b, examples, f"{k:,} ({handed:,} handed back)"
    return run


def _decimal(n: int, seed: int) -> tuple[int, int, list[str], str]:
    k, _, b, examples = decimal_diff(n, seed, sys.modules.get("livefix._native"))  # the build loaded
    return k, b, examples, f"{k:,}"


def _plain(diff: Callable[[int, int], tuple[int, int, list[str]]]) -> Callable[[int, int], tuple]:
    def run(n: int, seed: int) -> tuple[int, int, list[str], str]:
        k, b, examples = diff(n, seed)
        return k, b, examples, f"{k:,}"
    return run


# (twin, unit, module whose _CORE says the twin is built, its extension, differential, share of n, need)
LATER = (
    ("DOP solve", "geometries", "livefix.analysis.dopsolve", "_dopcore", _handed(dop_diff), 1.0, 200_000),
    ("DOP used pass", "epochs", "livefix.analysis.dopsolve", "_dopcore", _handed(used_diff), 0.25, 50_000),
    ("GSA used tracker", "calls", "livefix.state.used", "_usedcore", _plain(tracker_diff), 0.1, 20_000),
    ("per-epoch passes", "epochs", "livefix.analysis.counts", "_epochcore", _plain(epochcore_diff), 0.5, 100_000),
    ("projection memo", "calls", "livefix.analysis.geo", "_epochcore", _plain(geo_diff), 1.0, 200_000),
    ("jump check", "epochs", "livefix.analysis.jumps", "_epochcore", _plain(jumps_diff), 0.1, 20_000),
    ("sky store", "calls", "livefix.state.sky", "_skycore", _plain(sky_diff), 0.5, 100_000),
    ("epoch assembly", "calls", "livefix.state.model", "_statecore", _plain(state_diff), 0.1, 20_000),
    ("decimal numbers", "texts", "livefix.decode.decoder", "_native", _decimal, 5.0, 1_000_000),
    ("decoder front", "lines", "livefix.decode.decoder", "_native", _plain(front_diff), 0.5, 100_000),
    ("fix step", "items", "livefix.analysis.fixes", "_epochcore", _plain(fix_diff), 0.05, 10_000),
    ("position step", "epochs", "livefix.analysis.position", "_epochcore", _plain(pos_diff), 0.025, 5_000),
    ("track settle", "batches", "livefix.analysis.track", "_epochcore", _handed(track_diff), 0.01, 2_000),
    ("arc sampler", "epochs", "livefix.analysis.arcs", "_epochcore", _handed(arcs_diff), 0.05, 10_000),
    ("site steps", "items", "livefix.analysis.median", "_epochcore", _plain(site_diff), 0.05, 5_000),
    ("UTC clock", "calls", "livefix.state.clock", "_clockcore", _plain(clock_diff), 0.5, 100_000),
    ("GSV part satellites", "parts", "livefix.state.gsv", "_gsvcore", _plain(parts_diff), 0.5, 100_000),
    ("record scan", "recordings", "livefix.record.reader", "_reccore", _handed(reader_diff), 0.05, 10_000),
    ("SignalStats step", "epochs", "livefix.analysis.signal", "_sigcore", _handed(signal_step_diff), 0.5, 5_000),
    ("packed wire", "calls", "livefix.wire", "_wirecore", _plain(wire_diff), 0.5, 100_000),
)


def later_twins(n: int, seed: int) -> int:
    """The differentials of the later twins (LATER), each against its Python reference, on a share of
    n calls; returns the disagreements in all."""
    bad = 0
    for twin, unit, module, ext, diff, share, need in LATER:
        if getattr(importlib.import_module(module), "_CORE", None) is None:
            print(f"{twin}: {ext} not built, not compared", file=sys.stderr)
            continue
        t0 = time.perf_counter()
        k, b, examples, count = diff(int(n * share), seed)
        twin_results(twin, unit, k, count, need, b, examples, t0)
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
