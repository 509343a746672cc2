"""Build of the optional C cores (livefix._native, livefix.state._gsvcore, livefix.state._usedcore,
livefix.state._skycore, livefix.state._statecore, livefix.state._clockcore, livefix.analysis._sigcore,
livefix.analysis._dopcore, livefix.analysis._epochcore, livefix.record._reccore, livefix._wirecore:
C_CORES);
everything else is declared in pyproject.toml.

Each extension is optional: when it cannot be compiled (no C compiler, no Python headers) the install
goes on with one line of notice and livefix runs its pure-Python path, which is the reference anyway.
"""

from __future__ import annotations

import sys

from setuptools import Extension, setup
from setuptools.command.build_ext import build_ext


class OptionalBuildExt(build_ext):
    """build_ext that turns failed compiles into one line of notice instead of a failed install
    (one line for the whole build, naming the modules left out: each falls back on its own)."""

    def run(self) -> None:
        self._failed: list[tuple[str, Exception]] = []
        try:
            super().run()
        except Exception as err:  # noqa: BLE001 - any build failure: fall back to the pure path
            self._failed.append(("livefix C core", err))
        if self._failed:
            names = ", ".join(name for name, _ in self._failed)
            err = self._failed[0][1]
            text = " ".join(str(err).split())
            why = type(err).__name__ + (f": ...{text[-60:]}" if len(text) > 60 else f": {text}" if text else "")
            print(f"livefix: C core not built ({names}; {why}); using the pure-Python path", file=sys.stderr)

    def build_extension(self, ext: Extension) -> None:
        try:
            super().build_extension(ext)
        except Exception as err:  # noqa: BLE001
            self._failed.append((ext.name, err))


# -ffp-contract=off: no fused multiply-add, so every float is the one Python computes (identity).
FLAGS = [] if sys.platform == "win32" else ["-O2", "-ffp-contract=off", "-fno-fast-math"]

# Each core's C sources and private headers, one list per module: the one place they are named.
# bench/fuzz.py reads this literal (its sanitizer build compiles the same lists); the Makefile finds
# the files by their module prefix. Headers go in `depends`: an edit rebuilds, and the sdist has them.
C_CORES = {
    # framing of plain blocks, decoding of the hot sentence types, make(), Decoder.decode and Pipeline._lines
    "livefix._native": (
        ["livefix/_native.c", "livefix/_native_decode.c", "livefix/_native_fields.c", "livefix/_native_make.c",
         "livefix/_native_front.c", "livefix/_native_pump.c"],
        ["livefix/_native.h", "livefix/_native_front.h", "livefix/_corekit.h"],
    ),
    # GSV set assembly (livefix/state/gsv.py keeps the reference and picks this one when built)
    "livefix.state._gsvcore": (
        ["livefix/state/_gsvcore.c", "livefix/state/_gsvcore_add.c", "livefix/state/_gsvcore_sets.c",
         "livefix/state/_gsvcore_store.c", "livefix/state/_gsvcore_parts.c"],
        ["livefix/state/_gsvcore.h", "livefix/_corekit.h"],
    ),
    # SignalStats' satellite loops and its on_epoch step (livefix/analysis/signal.py keeps the reference)
    "livefix.analysis._sigcore": (
        ["livefix/analysis/_sigcore.c", "livefix/analysis/_sigcore_loops.c", "livefix/analysis/_sigcore_step.c",
         "livefix/analysis/_sigcore_interf.c"],
        ["livefix/analysis/_sigcore.h", "livefix/_corekit.h"],
    ),
    # GSA used-set tracking (livefix/state/used.py keeps the reference and picks this one when built)
    "livefix.state._usedcore": (
        ["livefix/state/_usedcore.c", "livefix/state/_usedcore_add.c", "livefix/state/_usedcore_close.c"],
        ["livefix/state/_usedcore.h", "livefix/_corekit.h"],
    ),
    # the common path of UtcClock.resolve (livefix/state/clock.py keeps the reference and picks this one when built)
    "livefix.state._clockcore": (["livefix/state/_clockcore.c"], []),
    # the sky store (livefix/state/sky.py keeps the reference Sky and picks this one when built)
    "livefix.state._skycore": (
        ["livefix/state/_skycore.c", "livefix/state/_skycore_plan.c"],
        ["livefix/state/_skycore.h", "livefix/_corekit.h"],
    ),
    # the state model's epoch assembly (livefix/state/model.py keeps the reference; model_native.py wires this in)
    "livefix.state._statecore": (
        ["livefix/state/_statecore.c", "livefix/state/_statecore_line.c", "livefix/state/_statecore_add.c",
         "livefix/state/_statecore_close.c", "livefix/state/_statecore_used.c"],
        ["livefix/state/_statecore.h", "livefix/_corekit.h"],
    ),
    # DopStats' closed-form DOP solve and used-satellite pass (analysis/dopsolve.py and dop.py keep the references)
    "livefix.analysis._dopcore": (
        ["livefix/analysis/_dopcore.c", "livefix/analysis/_dopused.c"],
        ["livefix/analysis/_dopcore.h", "livefix/_corekit.h"],
    ),
    # per-epoch passes of the satellite counts, the trend and the sky map (analysis/counts.py, trend.py
    # and sky.py keep the references)
    "livefix.analysis._epochcore": (
        ["livefix/analysis/_epochcore.c", "livefix/analysis/_epochcore_counts.c",
         "livefix/analysis/_epochcore_trend.c", "livefix/analysis/_epochcore_sky.c",
         "livefix/analysis/_epochcore_geo.c", "livefix/analysis/_epochcore_jumps.c",
         "livefix/analysis/_epochcore_pos.c", "livefix/analysis/_epochcore_motion.c",
         "livefix/analysis/_epochcore_fix.c", "livefix/analysis/_epochcore_fixplan.c",
         "livefix/analysis/_epochcore_site.c", "livefix/analysis/_epochcore_median.c",
         "livefix/analysis/_epochcore_bind.c", "livefix/analysis/_epochcore_track.c",
         "livefix/analysis/_epochcore_arcs.c"],
        ["livefix/analysis/_epochcore.h", "livefix/analysis/_epochcore_pos.h", "livefix/analysis/_epochcore_fix.h",
         "livefix/_corekit.h"],
    ),
    # the record scan of a replay: heads, CRC, items (livefix/record/reader.py keeps the reference)
    "livefix.record._reccore": (["livefix/record/_reccore.c", "livefix/record/_reccore_crc.c"],
                                ["livefix/record/_reccore.h"]),
    # the packed wire of the two-process split (livefix/wire.py keeps the pickled reference)
    "livefix._wirecore": (["livefix/_wirecore.c", "livefix/_wirecore_read.c"], ["livefix/_wirecore.h", "livefix/_corekit.h"]),
}

setup(
    ext_modules=[Extension(name, sources, depends=headers, optional=True, extra_compile_args=FLAGS)
                 for name, (sources, headers) in C_CORES.items()],
    cmdclass={"build_ext": OptionalBuildExt},
)
