"""Which satellite loops SignalStats runs: the C twin (livefix/analysis/_sigcore.c) or the Python
reference in livefix/analysis/signal.py.

Why a module of its own: signal.py holds the statistics; this is only the switch (built, LIVEFIX_PURE,
the tests' override, as livefix.state.gsv.make_assembler) and the hand-over of signal.py's satellite
type, tables and constants to the C code, so that the two never work from different ones.
"""

from __future__ import annotations

from types import ModuleType

from livefix import corepick

API = 2  # the interface of _sigcore spoken here; a build of another one is not used


def configure(core: ModuleType, args: tuple) -> bool:
    """Hand the satellite type, tables and constants to a build of the C loops (also bench/fuzz.py's
    sanitizer build); False when it is another interface or does not take them."""
    if getattr(core, "API", None) != API:
        return False
    try:
        core.configure(*args)
    except (TypeError, ValueError, OverflowError):
        return False
    return True


def load(args: tuple) -> ModuleType | None:
    """The built C loops, configured with args, or None (not built, or not usable)."""
    try:
        from livefix.analysis import _sigcore  # type: ignore[attr-defined]  # built by setup.py
    except ImportError:
        return None
    return _sigcore if configure(_sigcore, args) else None


def pick(core: ModuleType | None, native: bool | None) -> ModuleType | None:
    """native None: core unless LIVEFIX_PURE is "1"; True: core, or RuntimeError when it is not built
    (tests); False: None, the Python loops."""
    return corepick.pick_core(core, native, "the C core livefix.analysis._sigcore is not built")
