"""The sky store: the latest complete GSV set per group, merged into one sorted satellite view.

Set assembly lives in livefix.state.gsv and satellite numbering in livefix.state.prn; both are
re-exported here for callers that import them from the sky.
"""

from __future__ import annotations

from types import ModuleType

from livefix.corepick import built_core, pick_core
from livefix.state.epoch import TALKER_SYSTEM, SatObs, make_satobs
from livefix.state.gsv import GsvAssembler, RawSat
from livefix.state.prn import user_prn

__all__ = ["GsvAssembler", "RawSat", "Sky", "SYSTEM_ORDER", "make_sky", "talker_system", "user_prn"]

SYSTEM_ORDER = {s: i for i, s in enumerate("GRECJIS")}
SKY_API = 1  # the C twin's constructor and methods (livefix/state/_skycore.h SKY_API)


def talker_system(talker: str) -> str | None:
    return TALKER_SYSTEM.get(talker)


class Sky:
    """Latest complete set per group; satellites unseen for `timeout_s` host seconds drop out.

    Why two views: an epoch needs the satellites and their values, and at 10-20 Hz those are
    usually the very same as the epoch before (receivers refresh their lists about once a second),
    so `obs()` hands back the same tuple object until something changes and per-epoch statistics
    skip their work by identity. How recently each satellite was listed changes every epoch; only
    `seen()` (snapshots, at display rate) builds objects carrying that time.
    """

    def __init__(self, timeout_s: float = 5.0, max_groups: int = 64) -> None:
        self.timeout_s = timeout_s
        self.max_groups = max_groups
        self._groups: dict[tuple[str, str], list[RawSat]] = {}  # in order of last update
        self._mono: dict[tuple[str, str], float] = {}  # host time each group was last listed
        # (group/list signature, used, sorted rows, the lists themselves so their ids stay unique)
        self._layout: tuple[tuple, frozenset, list[tuple[tuple, int]], list] | None = None
        self._lean: tuple[SatObs, ...] = ()  # obs() of the current layout
        self._seen: tuple[tuple, tuple, tuple[SatObs, ...]] | None = None  # layout, monos, seen()
        self._view: tuple[tuple, frozenset[tuple[str, int]], list] | None = None  # in_view() cache
        self._oldest = float("inf")  # at most the oldest listing time: expire() scans only below it
        self._order: tuple[tuple, list[int]] = ((), [])  # _plan's satellite keys, their sorted order

    def replace(self, group: tuple[str, str], sats: list[RawSat], mono: float) -> None:
        groups = self._groups
        if groups.pop(group, None) is None and len(groups) >= self.max_groups:
            old = next(iter(groups))
            del groups[old], self._mono[old]
        self._mono.pop(group, None)  # both dicts keep the same order: seen() indexes monos by group
        groups[group] = sats
        self._mono[group] = mono
        if mono < self._oldest:
            self._oldest = mono

    def expire(self, now_mono: float) -> None:
        limit = now_mono - self.timeout_s
        if self._oldest >= limit:  # called twice an epoch: usually nothing is that old
            return
        for g in [g for g, m in self._mono.items() if m < limit]:
            del self._groups[g], self._mono[g]
        self._oldest = min(self._mono.values(), default=float("inf"))

    def _signature(self) -> tuple:
        """The groups in order, then their lists' ids: equal exactly when both are."""
        groups = self._groups
        return (*groups, *map(id, groups.values()))

    def in_view(self) -> frozenset[tuple[str, int]]:
        """(system, prn) of every satellite listed now; the same object while its content holds,
        so callers may memoise on it (GSA lists without system ID are placed against it)."""
        sig = self._signature()
        v = self._view
        if v is None or v[0] != sig:
            now = frozenset([(s[0], s[1]) for sats in self._groups.values() for s in sats])
            keep = v is not None and v[1] == now
            v = self._view = (sig, v[1] if keep and v is not None else now, list(self._groups.values()))
        return v[1]

    def obs(self, used: frozenset[tuple[str, int]]) -> tuple[SatObs, ...]:
        """All satellites, sorted by system, number and signal; the same tuple object while nothing
        but the listing times changed. last_seen_mono is 0.0 here (see `seen`).

        The merge and sort depend only on which set lists each group holds (and their order) and
        on `used`; a repeated set is handed back by the assembler as the same list object.
        """
        sig = self._signature()
        lay = self._layout
        if lay is None or lay[0] != sig or (lay[1] is not used and lay[1] != used):
            lay = self._layout = (sig, used, self._plan(used), list(self._groups.values()))
            self._lean = tuple([make_satobs(row) for row, _ in lay[2]])
        return self._lean

    def seen(self, used: frozenset[tuple[str, int]]) -> tuple[SatObs, ...]:
        """Like obs(), with last_seen_mono set to when each satellite's set was last listed.

        Called at display rate, possibly in the middle of an epoch's sets: it keeps its own
        layout so that it never disturbs the one obs() hands to epochs."""
        sig = self._signature()
        lay = self._layout
        if lay is None or lay[0] != sig or lay[1] != used:
            cached = self._seen
            lay = cached[0] if cached is not None and cached[0][0] == sig and cached[0][1] == used else (
                sig, used, self._plan(used), list(self._groups.values()))
        monos = tuple(self._mono.values())
        cached = self._seen
        if cached is None or cached[0] is not lay or cached[1] != monos:
            cached = self._seen = (lay, monos, tuple([make_satobs(row[:7] + (monos[gi],)) for row, gi in lay[2]]))
        return cached[2]

    def _plan(self, used: frozenset[tuple[str, int]]) -> list[tuple[tuple, int]]:
        """Rows of SatObs field values (last_seen_mono 0.0) with their group's index, sorted."""
        merged: dict[tuple[str, int, str], tuple[tuple, int]] = {}
        for gi, ((_, signal), sats) in enumerate(self._groups.items()):
            for system, prn, elev, azim, cn0 in sats:
                merged[(system, prn, signal)] = ((system, prn, signal, elev, azim, cn0,
                                                  (system, prn) in used, 0.0), gi)
        keys = tuple(merged)
        if keys != self._order[0]:  # the same satellites as last time (values change once a second)
            rank = SYSTEM_ORDER.get  # a stable sort, as sorted(merged, key=...) was
            self._order = (keys, sorted(range(len(keys)), key=lambda i: (rank(keys[i][0], 9), keys[i][1], keys[i][2])))
        rows = list(merged.values())
        return [rows[i] for i in self._order[1]]


def _built_core() -> ModuleType | None:
    """The C twin (livefix/state/_skycore.c) when it was built for this module's API, else None
    (an older build is not used; tests/state/test_sky_native.py fails on it)."""
    return built_core("livefix.state._skycore", ("SKY_API",), (SKY_API,))


_CORE = _built_core()


def make_sky(timeout_s: float = 5.0, max_groups: int = 64, native: bool | None = None) -> Sky:
    """A sky store: the C twin when built (same results and object identities, several times
    faster per call), else Sky, the reference. native None: the C twin unless LIVEFIX_PURE is "1"
    (as livefix.framing.native_core()); True: the C twin or RuntimeError (tests); False: the
    reference. The twin's timeout_s and max_groups are read-only."""
    core = pick_core(_CORE, native, "the C core livefix.state._skycore is not built (or built for another API)")
    if core is not None:
        return core.Sky(timeout_s, max_groups, SatObs, SYSTEM_ORDER)  # type: ignore[no-any-return]
    return Sky(timeout_s, max_groups)
