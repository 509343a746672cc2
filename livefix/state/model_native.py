"""Whether a StateModel assembles its epochs with the C twin (livefix/state/_statecore.c) or with the
Python reference, StateModel.on_sentence and StateModel._close in livefix/state/model.py.

Why this wiring: the model keeps building every collaborator and keeps every attribute in its own
__dict__; the C core reads the collaborators from that dict (and caches their bound methods while the
model holds the same ones), and writes there what the reference writes (_mono, _wall, late, epochs,
last_epoch, _open, _used, ...). Only the instance's
on_sentence and _close are rebound, so finish(), sky(), on_link() and every reader of the model run
the same code on both paths, and a dict write costs less than a property read per line. This module
does not import model.py (no import circle): model.py hands over its helpers and constants.
"""

from __future__ import annotations

from types import ModuleType
from typing import Any

from livefix.corepick import built_core, pick_core

CAPS = ("MAX_SENTENCES", "UNTIMED_GAP_S", "HALF_DAY_S", "KNOT_MPS")  # the core's copies of model.py's constants


def load(want: tuple[Any, ...]) -> ModuleType | None:
    """The built core when its constants equal want (model.py's), else None (not built, or stale)."""
    return built_core("livefix.state._statecore", CAPS, want)


def attach(sm: Any, core: ModuleType | None, helpers: tuple, native: bool | None = None) -> bool:
    """Rebind sm.on_sentence and sm._close to a C core over sm's attributes; False when the
    reference stays (native None: the core unless LIVEFIX_PURE is "1"; True: the core or
    RuntimeError; False: the reference). helpers: model.py's solution_gsa, _quality, _datum,
    _tod_of, make_epoch, datetime.date, timedelta(days=1), TIMED, the Decoded type and used.TRACKER_TYPES."""
    core = pick_core(core, native, "the C core livefix.state._statecore is not built (or built with other caps)")
    if core is None:
        return False
    ec = core.EpochCore(sm, helpers)
    vars(sm).update(on_sentence=ec.on_sentence, _close=ec.close)  # instance attributes over the methods
    return True
