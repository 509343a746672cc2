"""Finding and picking the optional C twins (rank 0: livefix.state and livefix.analysis both use it).

Each twin's module keeps its Python reference; these helpers say whether its C build is there, fits,
and is wanted (LIVEFIX_PURE=1 forces the reference everywhere).
"""

from __future__ import annotations

import importlib
import os
from types import ModuleType
from typing import Any


def built_core(name: str, caps: tuple[str, ...], want: tuple[Any, ...]) -> ModuleType | None:
    """The extension `name` when it was built with the caps the Python module has (its constants
    `caps` equal `want`), else None: not built, or a build older than a change of caps."""
    try:
        # the extension itself, by name, not through its package (whose __init__ may import more)
        core = importlib.import_module(name)  # built by setup.py
    except ImportError:
        return None
    return core if tuple(getattr(core, c) for c in caps) == want else None  # else a stale build


def pick_core(core: ModuleType | None, native: bool | None, missing: str) -> ModuleType | None:
    """native None: core unless LIVEFIX_PURE is "1" (None when not built); True: core, or
    RuntimeError(missing) when it is not built (tests); False: None, the Python reference."""
    if native is None:
        native = os.environ.get("LIVEFIX_PURE") != "1"
    elif native and core is None:
        raise RuntimeError(missing)
    return core if native else None
