"""The C step of FixStats.on_epoch (livefix/analysis/_epochcore_fix.c): its configuration.

Why a module of its own: the C step reads and writes the state of the reference classes in place
(FixStats, Timeline, TimeBook, _Recent), so it is configured with those types and with the constants
the reference uses; fixes.py stays the reference and only picks the step (counts.pick_core).
"""

from __future__ import annotations

import math
from collections import deque
from types import ModuleType

from livefix.analysis.availability import GAP_FACTOR, NOT_FIX_STATE, TimeBook
from livefix.analysis.config import AnalysisConfig
from livefix.analysis.counts import load_core
from livefix.analysis.streaming import Timeline
from livefix.dates import jump_limit
from livefix.state.epoch import FIX_NAMES, Epoch


def load(stats: type, recent: type, position: frozenset[str], dt_n: int, ew_min: int,
         ew_a: float) -> ModuleType | None:
    """The built module configured for FixStats (`stats`, its _Recent, position sentences, DT_N,
    EW_MIN, _EW_A), or None (not built, another interface, arguments refused)."""
    return load_core("configure_fix", stats, Epoch, Timeline, TimeBook, recent, deque, AnalysisConfig, FIX_NAMES,
                     "none", position, NOT_FIX_STATE, math.hypot, jump_limit(1.0), GAP_FACTOR, dt_n, ew_min, ew_a)
