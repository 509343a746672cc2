"""When the measurement ran, by the receiver's clock and the host's, and the datum it stated.

Why: a site record states when the antenna was measured. A report is often made from a file long
after the run, so the processing time says nothing; the first and last epochs' receiver UTC do,
with the host stamps beside them (a receiver without a valid date, or a host clock that was
wrong, shows as a difference). The datum comes from DTM (NMEA 0183): most receivers never send it,
and the record must then say so rather than assume WGS 84.

`on_epoch` stays in Python on both paths: a C step of it measured slower than these few attribute
writes (bench/RESULTS.md, C core, eighth step).
"""

from __future__ import annotations

from typing import Any

from livefix.state.epoch import Epoch
from livefix.timefmt import iso

MAX_DATUMS = 8  # distinct datum pairs listed (a receiver switching datums is rare; keep it bounded)


class SessionSpan:
    def __init__(self) -> None:
        self.reset()

    def reset(self) -> None:
        self.first_utc: float | None = None
        self.last_utc: float | None = None
        self.first_wall: float | None = None
        self.last_wall: float | None = None
        self.first_wall_of_utc: float | None = None  # host stamp of the epoch that gave first_utc
        self.last_wall_of_utc: float | None = None
        self.date_known = True
        self.epochs = 0
        self.datums: dict[tuple[str, str], int] = {}  # (local, reference) -> epochs carrying it
        self.datum_epochs = 0
        self.last_datum: tuple[str, str] | None = None

    def on_epoch(self, ep: Epoch) -> None:
        self.epochs += 1
        if self.first_wall is None:
            self.first_wall = ep.wall
        self.last_wall = ep.wall
        if ep.utc is not None:
            if self.first_utc is None:
                self.first_utc, self.first_wall_of_utc = ep.utc, ep.wall
            self.last_utc, self.last_wall_of_utc = ep.utc, ep.wall
            self.date_known = self.date_known and ep.date_known
        d = ep.datum
        if d is not None:
            self.datum_epochs += 1
            self.last_datum = d
            if d in self.datums or len(self.datums) < MAX_DATUMS:
                self.datums[d] = self.datums.get(d, 0) + 1

    def snapshot(self) -> dict[str, Any]:
        def diff(a: float | None, b: float | None) -> float | None:
            return None if a is None or b is None else round(a - b, 3)

        dur = diff(self.last_utc, self.first_utc)
        return {
            "epochs": self.epochs,
            "start_utc": iso(self.first_utc), "end_utc": iso(self.last_utc),
            "duration_s": dur if dur is None or dur >= 0 else None,  # a clock that went back: no span
            "date_known": self.date_known,
            "start_host": iso(self.first_wall), "end_host": iso(self.last_wall),
            "duration_host_s": diff(self.last_wall, self.first_wall),
            # host minus receiver time at the first and last timed epochs (a file's host stamps
            # are the recording's; a receiver stamping ZDA late or a wrong host clock shows here)
            "host_minus_utc_s": {"start": diff(self.first_wall_of_utc, self.first_utc),
                                 "end": diff(self.last_wall_of_utc, self.last_utc)},
            "datum": None if self.last_datum is None else {
                "local": self.last_datum[0], "reference": self.last_datum[1],
                "epochs": self.datum_epochs,
                "seen": [{"local": k[0], "reference": k[1], "epochs": n} for k, n in sorted(self.datums.items())]},
        }

