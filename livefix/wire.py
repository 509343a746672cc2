"""The wire of the two-process split (livefix.parallel): the Analyzer calls the front records, as
records the child replays into its own Analyzer in the same order.

Two encodings of the same calls:
- pickled records (`encode` / `Replayer.run`), the reference and the only one without the C core:
  epochs travel as plain tuples of their fields and are rebuilt in the child (pickling the slots
  dataclass costs far more). An epoch's satellite tuple is usually the very same object for many
  epochs; it is sent once with a small id and the child hands out one rebuilt tuple per id, so
  identity-based shortcuts in the statistics behave as in one process. Events go as they are.
- packed records (`sink` or `packer` / `Replayer.run_packed`), the C twin in livefix/_wirecore.c:
  each field's value copied into bytes, odd values pickled beside them, every tuple field that
  repeats the previous epoch's object sent as "the same". The child gets equal values of the same
  types and the same sharing of tuples between consecutive epochs. The front uses it as a sink: the
  proxy's four feeding methods are the packer's own, so no Python frame runs per call. Measured on the 60-minute bench file it cuts the
  front's encoding from about 3.6 to 0.9 us per epoch and the child's unpickling and rebuilding from
  about 8 to 1.2 us (bench/RESULTS.md).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable
from operator import attrgetter
from types import ModuleType
from typing import Any

from livefix.contracts import Analysis
from livefix.corepick import built_core, pick_core
from livefix.state.epoch import EPOCH_FIELDS, SATOBS_FIELDS, Epoch, SatObs, make_epoch, make_satobs

SATS_TABLE_MAX = 256  # satellite tuples remembered by id on both sides (bounded)
WIRE_VERSION = 1  # livefix/_wirecore.c's; a build of another version is not used

# Record kinds inside a batch (first element of each record); the packed wire uses the first four.
CHUNK, REJECTED, EVENT, EPOCH, SATS, CLEAR = range(6)

_EPOCH_FIELDS = tuple(f.name for f in dataclasses.fields(Epoch))
_SATS_AT = _EPOCH_FIELDS.index("sats")
_epoch_rest = attrgetter(*(n for n in _EPOCH_FIELDS if n != "sats"))
_sat_values = attrgetter(*(f.name for f in dataclasses.fields(SatObs)))
if not all(f.init for f in dataclasses.fields(Epoch)) or not all(f.init for f in dataclasses.fields(SatObs)):
    raise ImportError("Epoch/SatObs gained a non-init field: update livefix.wire")
# the slot descriptors the packed wire reads and writes, in field order
EPOCH_SLOTS = tuple(Epoch.__dict__[n] for n in EPOCH_FIELDS)
SATOBS_SLOTS = tuple(SatObs.__dict__[n] for n in SATOBS_FIELDS)


_CORE = built_core("livefix._wirecore", ("WIRE_VERSION",), (WIRE_VERSION,))


def wire_core(native: bool | None = None) -> ModuleType | None:
    """livefix._wirecore as corepick.pick_core says (None: the pickled reference)."""
    return pick_core(_CORE, native, "livefix._wirecore is not built")


def packer(native: bool | None = None) -> Callable[[list], tuple[bytes, list]] | None:
    """The front's pack(calls) -> (bytes, others) of the packed wire, or None for the pickled one.
    It keeps the last epoch's tuple fields: one per stream, fed every batch in order."""
    core = wire_core(native)
    return None if core is None else core.Packer(EPOCH_SLOTS, SATOBS_SLOTS).pack


def sink(batch: int, full: Callable[[], None], native: bool | None = None) -> Any | None:
    """The front's recorder of the Analyzer calls in C, or None for the pickled wire: its on_chunk,
    on_rejected, on_event and on_epoch pack each call as it comes (no Python frame per call), full()
    is called when on_epoch brings the epochs to `batch`, and take() -> (bytes, others) hands over
    what came since the last take (raising the error of a call that could not be packed)."""
    core = wire_core(native)
    return None if core is None else core.Packer(EPOCH_SLOTS, SATOBS_SLOTS, batch, full)


def encode(calls: list, table: dict[int, tuple[tuple, int]], next_id: list[int]) -> list[tuple]:
    """Recorded calls -> picklable records. `table` maps id(sats) -> (sats, sats id) and holds the
    tuples so their ids stay unique; `next_id` is a one-item counter. Both persist across batches."""
    out: list[tuple] = []
    app = out.append
    for c in calls:
        if c.__class__ is Epoch:
            sats = c.sats
            hit = table.get(id(sats))
            if hit is None or hit[0] is not sats:
                if len(table) >= SATS_TABLE_MAX:
                    table.clear()
                    app((CLEAR,))
                sid = next_id[0]
                next_id[0] += 1
                table[id(sats)] = (sats, sid)
                app((SATS, sid, tuple(map(_sat_values, sats))))
            else:
                sid = hit[1]
            app((EPOCH, sid) + _epoch_rest(c))
        else:
            app(c)
    return out


class Replayer:
    """Feeds decoded records into an analyzer in order (the child's half of `encode`, and of the
    packed wire through run_packed)."""

    def __init__(self, analyzer: Analysis) -> None:
        self.analyzer = analyzer
        self._sats: dict[int, tuple[SatObs, ...]] = {}
        self._reader: Any = None
        chunk, rejected, event, epoch = analyzer.on_chunk, analyzer.on_rejected, analyzer.on_event, analyzer.on_epoch
        self._do = (
            lambda r: chunk(r[1], r[2], r[3]),
            lambda r: rejected(r[1], r[2], r[3]),
            lambda r: event(r[1]),
            lambda r: epoch(self.epoch(r)),
            lambda r: self._sats.__setitem__(r[1], tuple([make_satobs(s) for s in r[2]])),
            lambda r: self._sats.clear(),
        )

    def epoch(self, r: tuple) -> Epoch:
        # make_epoch: the slots filled at once, as the state model builds them (Epoch's frozen
        # __init__ sets each field through object.__setattr__, several times slower)
        k = _SATS_AT + 2
        return make_epoch(r[2:k] + (self._sats[r[1]],) + r[k:])

    def run(self, records: list[tuple]) -> None:
        do = self._do
        for r in records:
            do[r[0]](r)

    def run_packed(self, data: bytes, others: list) -> None:
        """The calls of one packed batch. The front chose the packed wire, so the core is taken
        when built whatever LIVEFIX_PURE says here (RuntimeError when it is not)."""
        if self._reader is None:
            core = wire_core(True)
            self._reader = core.Reader(self.analyzer, lambda r: self.run([r]), EPOCH_SLOTS, SATOBS_SLOTS)
        self._reader.run(data, others)
