"""A Session-shaped holder for a fixed sequence of Snapshots.

The monitor reads `latest` on a timer and sends control calls to whatever feeds it. A real
`livefix.session.Session` does this live; `SnapshotFeed` steps through snapshots made beforehand
(by pushing a recording through a Pipeline), which gives deterministic screens for snapshot tests
and documentation. Control calls are kept in `calls` so the caller can see what the operator did.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

from livefix.pipeline import Snapshot


class SnapshotFeed:
    def __init__(self, snapshots: Sequence[Snapshot], source: str = "fixed snapshots") -> None:
        if not snapshots:
            raise ValueError("SnapshotFeed needs at least one snapshot")
        self._snaps = list(snapshots)
        self._i = 0
        self.name = source
        self.calls: list[tuple[str, tuple[Any, ...]]] = []
        self.speed = 1.0
        self.paused = False
        self.recording: str | None = None

    @property
    def latest(self) -> Snapshot:
        return self._snaps[self._i]

    @staticmethod
    def _since_first_byte(snap: Snapshot) -> float | None:
        v = snap.analysis.get("stream", {}).get("duration_s") if isinstance(snap.analysis, dict) else None
        return float(v) if isinstance(v, (int, float)) else None

    @property
    def position_s(self) -> float | None:
        """Stream seconds since the first byte at the current snapshot (a replay's position)."""
        return self._since_first_byte(self._snaps[self._i])

    @property
    def length_s(self) -> float | None:
        return self._since_first_byte(self._snaps[-1])

    @property
    def done(self) -> bool:
        return self._i == len(self._snaps) - 1

    def step(self, n: int = 1) -> Snapshot:
        """Advance (the stand-in for time passing); stays on the last snapshot."""
        if not self.paused:
            self._i = max(0, min(len(self._snaps) - 1, self._i + n))
        return self.latest

    def _log(self, name: str, *args: Any) -> None:
        self.calls.append((name, args))

    def start(self) -> None:
        self._log("start")

    def stop(self) -> None:
        self._log("stop")

    def start_recording(self, path: str) -> None:
        self.recording = path
        self._log("start_recording", path)

    def stop_recording(self) -> None:
        self.recording = None
        self._log("stop_recording")

    def add_marker(self, note: str) -> None:
        self._log("add_marker", note)

    def set_reference(self, lat: float, lon: float, h: float) -> None:
        self._log("set_reference", lat, lon, h)

    def set_reference_to_mean(self) -> None:
        self._log("set_reference_to_mean")

    def reset_statistics(self) -> None:
        self._log("reset_statistics")

    def pause(self) -> bool:
        self.paused = True
        self._log("pause")
        return True

    def resume(self) -> bool:
        self.paused = False
        self._log("resume")
        return True

    def set_speed(self, factor: float | None) -> bool:
        self.speed = float(factor or 0.0)
        self._log("set_speed", factor)
        return True

    def seek(self, offset_s: float) -> bool:
        """One snapshot per step: offsets move by whole snapshots, sign kept."""
        self._log("seek", offset_s)
        self.step(1 if offset_s > 0 else -1)
        return True
