"""Satellites in view, tracked and used per constellation: median and minimum over the session.

Why: a site record states how many satellites of each system the antenna saw and used, and the
minimum says more about a site than the mean (the worst moment is when a fix is lost). Counts are
small whole numbers, so an exact histogram of counts (a few dozen bins) gives the exact median in
bounded memory; the counts change only when the sky does, so they are added as runs of epochs.
A satellite is counted once however many signals it is listed with; "tracked" means a C/N0 is
given for at least one signal; "used" is the epoch's used set (GSA lists, livefix.state.used).
"""

from __future__ import annotations

import importlib
from collections.abc import Callable
from types import ModuleType
from typing import Any

from livefix import corepick
from livefix.state.epoch import Epoch, SatObs

KINDS = ("in_view", "tracked", "used")
ALL = "all"  # the key of the totals over every constellation
CORE_API = 1  # the interface of livefix.analysis._epochcore spoken here and in trend.py, sky.py


def load_core(configure: str, *args: Any) -> ModuleType | None:
    """The built C passes (livefix/analysis/_epochcore.c, shared by counts, trend and sky) configured
    by their function `configure` with args, or None (not built, another interface, args refused).
    Imported by name: a static import would make a circle of livefix.analysis in the layer test."""
    try:
        core = importlib.import_module("livefix.analysis._epochcore")  # built by setup.py
        if getattr(core, "API", None) != CORE_API:
            return None
        getattr(core, configure)(*args)
    except (ImportError, AttributeError, TypeError, ValueError, OverflowError):
        return None
    return core


def pick_core(core: ModuleType | None, native: bool | None) -> ModuleType | None:
    """native None: core unless LIVEFIX_PURE is "1"; True: core, or RuntimeError when it is not built
    (tests); False: None, the Python code."""
    return corepick.pick_core(core, native, "the C core livefix.analysis._epochcore is not built")


def bound_on_epoch(core: ModuleType | None, kind: str, stage: Any, cls: type,
                   reference: Callable[[Any, Any], None]) -> Callable[[Any], None]:
    """stage.on_epoch as the Analyzer calls it: the C step of `kind` bound to the stage, running
    reference(stage, ep) when it hands back (livefix/analysis/_epochcore_bind.c: no Python frame for
    the common epoch); on_epoch itself without the core or for a subclass (which keeps its own)."""
    if core is None or type(stage) is not cls:
        return stage.on_epoch
    return core.bind_step(kind, stage, reference)


def _kth(hist: dict[int, int], k: int) -> int:
    """The k-th smallest count (0-based) of a histogram of counts."""
    acc = 0
    for v in sorted(hist):
        acc += hist[v]
        if acc > k:
            return v
    return max(hist)


def median_of(hist: dict[int, int]) -> float | None:
    """The median as numpy.median gives it (the mean of the two middle values for an even count)."""
    n = sum(hist.values())
    if not n:
        return None
    return (_kth(hist, (n - 1) // 2) + _kth(hist, n // 2)) / 2


def epoch_counts(ep: Epoch) -> dict[str, tuple[int, int, int]]:
    """(in view, tracked, used) satellites per system letter and over all systems."""
    view: set[tuple[str, int]] = set()
    tracked: set[tuple[str, int]] = set()
    used = set(ep.used_prns)
    va, ta, ua = view.add, tracked.add, used.add
    for s in ep.sats:  # one key per satellite signal, in one pass
        k = (s.system, s.prn)
        va(k)
        if s.cn0 is not None:
            ta(k)
        if s.used:
            ua(k)
    rows: dict[str, list[int]] = {}
    for i, group in enumerate((view, tracked, used)):
        for system, _prn in group:
            r = rows.get(system)
            if r is None:
                r = rows[system] = [0, 0, 0]
            r[i] += 1
    out = {k: (r[0], r[1], r[2]) for k, r in rows.items()}
    out[ALL] = (len(view), len(tracked), len(used))
    return out


_CORE = load_core("configure_counts", SatObs, Epoch, ALL)


class SatCounts:
    """Per-system histograms of the counts of satellites in view, tracked and used per epoch.

    Epochs count from the first one with satellites in view (GSV): before it, a count of 0 would
    say nothing about the site; a system first seen later counts 0 for the epochs before."""

    def __init__(self, native: bool | None = None) -> None:
        """native: epoch_counts in C (pick_core: None as LIVEFIX_PURE says)."""
        self._core = pick_core(_CORE, native)
        self.reset()

    def reset(self) -> None:
        self.hist: dict[str, tuple[dict[int, int], ...]] = {}
        self.epochs = 0  # epochs added to the histograms
        self._cur: dict[str, tuple[int, int, int]] = {}
        self._run = 0
        self._sats: object = None
        self._used: object = None

    def on_epoch(self, ep: Epoch) -> None:
        sats, used = ep.sats, ep.used_prns
        if sats is not self._sats or used is not self._used:
            if not self._run and not self.epochs and not sats:
                return  # no GSV set yet: a count of 0 in view would say nothing about the site
            self._sats, self._used = sats, used
            core = self._core
            counts = None if core is None else core.counts(ep)  # None: values left to the Python code
            if counts is None:
                counts = epoch_counts(ep)
            if counts != self._cur:
                self._flush()
                self._cur = counts
        self._run += 1

    def _flush(self) -> None:
        run = self._run
        if not run:
            return
        for system in self._cur:
            if system not in self.hist:  # a newcomer counted 0 for the epochs before
                self.hist[system] = tuple({0: self.epochs} if self.epochs else {} for _ in KINDS)
        for system, hs in self.hist.items():
            for h, c in zip(hs, self._cur.get(system, (0, 0, 0)), strict=True):
                h[c] = h.get(c, 0) + run
        self.epochs += run
        self._run = 0

    def snapshot(self) -> dict[str, Any]:
        self._flush()
        by_system = {}
        for system in sorted(self.hist, key=lambda s: (s == ALL, s)):
            by_system[system] = {kind: {"median": median_of(h), "min": min(h) if h else None,
                                        "max": max(h) if h else None}
                                 for kind, h in zip(KINDS, self.hist[system], strict=True)}
        return {"epochs": self.epochs, "by_system": by_system,
                "basis": "satellites per epoch from the first epoch with satellites in view (GSV); one "
                         "count per satellite whatever its signals"}
