"""The simulated receiver as a Source.

Live (speed > 0): paced in real time ×speed, chunks stamped with the host clocks.
As fast as possible (speed None or 0): stamped with SIMULATED clocks (mono = t since start,
wall = scenario start UTC + t), so files written from it are byte-for-byte reproducible.
"""

from __future__ import annotations

import threading
import time
from collections.abc import Iterator

from livefix.sim.receiver import SimReceiver
from livefix.sim.scenario import Scenario
from livefix.sources.base import Chunk, Item, Link, LinkEvent, SourceError

SLICE_S = 0.05  # longest single sleep while paced or paused, so stop and controls act promptly


class SimSource:
    """Controls (speed, pause) re-anchor the pacing clock, so a change never bursts simulated time
    forward nor leaves the stream waiting for a deadline set at the old speed."""

    finite: bool

    def __init__(self, scenario: Scenario | str, rate_hz: float = 10, speed: float | None = 1.0,
                 seed: int = 1, duration: float | None = None, dialect: str | None = None) -> None:
        try:
            sc = scenario if isinstance(scenario, Scenario) else Scenario.load(scenario)
            self.rx = SimReceiver(sc, rate_hz=rate_hz, seed=seed, dialect=dialect)
        except ValueError as exc:
            raise SourceError(str(exc)) from exc
        if speed is not None and speed < 0:
            raise SourceError(f"sim speed {speed!r}: use a positive factor, or 0 for as fast as possible")
        self.scenario = sc
        self._speed: float | None = speed or None
        self.live = self._speed is not None  # fixed at start: host stamps (live) or simulated ones
        self.duration = duration
        self.finite = duration is not None
        self.position_s = 0.0  # simulated seconds delivered so far
        self.length_s = duration
        self._paused = False
        self._wake = threading.Event()
        names = self.rx.dialects.names
        self.name = f"sim:{sc.name}" + (f"?dialect={','.join(names)}" if names else "")

    # -- controls (any thread) ----------------------------------------------------------------
    @property
    def speed(self) -> float | None:
        return self._speed

    @speed.setter
    def speed(self, value: float | None) -> None:
        if value is not None and value < 0:
            raise SourceError(f"sim speed {value!r}: use a positive factor")
        self._speed = value or None
        self._wake.set()

    @property
    def paused(self) -> bool:
        return self._paused

    def pause(self) -> None:
        if not self.live:
            raise SourceError("an unpaced simulation cannot pause")
        self._paused = True
        self._wake.set()

    def resume(self) -> None:
        self._paused = False
        self._wake.set()

    # -- the loop -------------------------------------------------------------------------------
    def _stamp(self, t: float) -> tuple[float, float]:
        if not self.live:
            return t, self.rx.start_utc + t
        return time.monotonic(), time.time()

    def _pace(self, t: float, anchor: tuple[float, float] | None,
              stop: threading.Event) -> tuple[float, float] | None:
        """Wait until simulated time t is due at the current speed; (host mono, sim t) anchor."""
        while not stop.is_set():
            now = time.monotonic()
            if self._paused:
                while self._paused and not stop.is_set():
                    self._wake.wait(SLICE_S)
                    self._wake.clear()
                anchor = None  # re-base: a pause is not time owed
                continue
            speed = self._speed
            if not self.live or speed is None:
                return None
            if anchor is None:
                anchor = (now, t)
            wait = anchor[0] + (t - anchor[1]) / speed - now
            if wait <= 0:
                return anchor
            if self._wake.wait(min(wait, SLICE_S)):
                self._wake.clear()
                reached = anchor[1] + (time.monotonic() - anchor[0]) * speed
                anchor = (time.monotonic(), min(t, reached))  # re-base at the speed just changed
        return anchor

    def items(self, stop: threading.Event) -> Iterator[Item]:
        anchor: tuple[float, float] | None = None
        mono, wall = self._stamp(0.0)
        yield LinkEvent(mono, wall, Link.STREAMING, f"simulated receiver, scenario {self.scenario.name}")
        end_t = 0.0
        for t, data in self.rx.epochs(self.duration):
            if stop.is_set():
                return
            anchor = self._pace(t, anchor, stop)
            if stop.is_set():
                return
            mono, wall = self._stamp(t)
            end_t = self.position_s = t
            yield Chunk(mono, wall, data)
        if self.duration is not None and not stop.is_set():
            end_t = max(end_t, self.duration)
            self._pace(end_t, anchor, stop)
            if stop.is_set():
                return
            mono, wall = self._stamp(end_t)
            self.position_s = end_t
            yield LinkEvent(mono, wall, Link.ENDED, "end of simulated run")

    def write(self, data: bytes) -> None:
        self.rx.command(data)

    def close(self) -> None:
        self._wake.set()


def open_sim(spec: str, speed: float | None = None, rate_hz: float = 10, seed: int = 1,
             duration: float | None = None) -> SimSource:
    """`sim:NAME[?dialect=A,B]` after the colon: a scenario name or a .toml path, optionally with
    receiver dialects (livefix.sim.dialects). speed None means real time."""
    spec, _, query = spec.partition("?")
    dialect = None
    for kv in filter(None, query.split("&")):
        key, _, value = kv.partition("=")
        if key != "dialect":
            raise SourceError(f"sim:{spec}?{query}: unknown option {key!r} (use ?dialect=NAME,NAME)")
        dialect = value
    if not spec:
        from livefix.sim.scenario import list_scenarios

        raise SourceError(f"sim: needs a scenario, e.g. sim:rooftop (built-in: {', '.join(list_scenarios())})")
    return SimSource(spec, rate_hz=rate_hz, speed=1.0 if speed is None else speed, seed=seed, duration=duration,
                     dialect=dialect)
