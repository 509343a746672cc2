"""Build of the optional C core (livefix/_native.c); everything else is declared in pyproject.toml.

The extension is optional: when it cannot be compiled (no C compiler, no Python headers) the install
goes on with one line of notice and livefix runs its pure-Python path, which is the reference anyway.
"""

from __future__ import annotations

import sys

from setuptools import Extension, setup
from setuptools.command.build_ext import build_ext


class OptionalBuildExt(build_ext):
    """build_ext that turns a failed compile into a one-line notice instead of a failed install."""

    def run(self) -> None:
        try:
            super().run()
        except Exception as err:  # noqa: BLE001 - any build failure: fall back to the pure path
            self._notice(err)

    def build_extension(self, ext: Extension) -> None:
        try:
            super().build_extension(ext)
        except Exception as err:  # noqa: BLE001
            self._notice(err)

    @staticmethod
    def _notice(err: Exception) -> None:
        text = " ".join(str(err).split())
        why = type(err).__name__ + (f": ...{text[-60:]}" if len(text) > 60 else f": {text}" if text else "")
        print(f"livefix: C core not built ({why}); using the pure-Python path", file=sys.stderr)


# -ffp-contract=off: no fused multiply-add, so every float is the one Python computes (identity).
FLAGS = [] if sys.platform == "win32" else ["-O2", "-ffp-contract=off", "-fno-fast-math"]

setup(
    ext_modules=[Extension("livefix._native", ["livefix/_native.c"], optional=True, extra_compile_args=FLAGS)],
    cmdclass={"build_ext": OptionalBuildExt},
)
