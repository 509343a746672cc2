"""Build of the optional C cores (livefix/_native.c, livefix/state/_gsvcore.c, livefix/analysis/_sigcore.c);
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

setup(
    ext_modules=[
        Extension("livefix._native", ["livefix/_native.c"], optional=True, extra_compile_args=FLAGS),
        # GSV set assembly (livefix/state/gsv.py keeps the reference and picks this one when built)
        Extension("livefix.state._gsvcore", ["livefix/state/_gsvcore.c"], optional=True, extra_compile_args=FLAGS),
        # SignalStats' satellite loops (livefix/analysis/signal.py keeps the reference, picks this one when built)
        Extension("livefix.analysis._sigcore", ["livefix/analysis/_sigcore.c"], optional=True, extra_compile_args=FLAGS),
    ],
    cmdclass={"build_ext": OptionalBuildExt},
)
