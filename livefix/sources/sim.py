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


class SimSource:
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
        self.speed = speed or None
        self.duration = duration
        self.finite = duration is not None
        names = self.rx.dialects.names
        self.name = f"sim:{sc.name}" + (f"?dialect={','.join(names)}" if names else "")

    def _stamp(self, t: float) -> tuple[float, float]:
        if self.speed is None:
            return t, self.rx.start_utc + t
        return time.monotonic(), time.time()

    def items(self, stop: threading.Event) -> Iterator[Item]:
        t0_mono = time.monotonic()
        mono, wall = self._stamp(0.0)
        yield LinkEvent(mono, wall, Link.STREAMING, f"simulated receiver, scenario {self.scenario.name}")
        end_t = 0.0
        for t, data in self.rx.epochs(self.duration):
            if stop.is_set():
                return
            if self.speed is not None:
                delay = t0_mono + t / self.speed - time.monotonic()
                if delay > 0 and stop.wait(delay):
                    return
            mono, wall = self._stamp(t)
            end_t = t
            yield Chunk(mono, wall, data)
        if self.duration is not None and not stop.is_set():
            end_t = max(end_t, self.duration)
            if self.speed is not None:
                delay = t0_mono + end_t / self.speed - time.monotonic()
                if delay > 0 and stop.wait(delay):
                    return
            mono, wall = self._stamp(end_t)
            yield LinkEvent(mono, wall, Link.ENDED, "end of simulated run")

    def write(self, data: bytes) -> None:
        self.rx.command(data)

    def close(self) -> None:
        pass


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
