"""The simulated receiver's pacing under the monitor's controls (issue 15 item 2): a speed change
re-bases the pacing clock, so `+` then `-` never freezes the demo and `+` never bursts simulated
time forward; pause holds the stream and resume continues where it stopped."""

from __future__ import annotations

import queue
import threading
import time

from livefix.sources.base import Chunk
from livefix.sources.sim import SimSource

RATE_HZ = 10  # epochs per simulated second; one Chunk per epoch
STEP_S = 1.0 / RATE_HZ  # hand arithmetic: 10 Hz -> 0.1 s of simulated time per chunk


class Reader:
    """Runs the source's generator on a thread and hands chunks over with their simulated time."""

    def __init__(self, src: SimSource) -> None:
        self.src, self.stop, self.q = src, threading.Event(), queue.Queue()
        self.t = threading.Thread(target=self._run, daemon=True)
        self.t.start()

    def _run(self) -> None:
        for item in self.src.items(self.stop):
            if isinstance(item, Chunk):
                self.q.put(self.src.position_s)

    def next(self, timeout: float = 3.0) -> float:
        return self.q.get(timeout=timeout)  # queue.Empty = the stream froze

    def drain(self) -> list[float]:
        out = []
        while not self.q.empty():
            out.append(self.q.get_nowait())
        return out

    def close(self) -> None:
        self.stop.set()
        self.t.join(5)


def test_faster_then_slower_never_freezes_and_keeps_simulated_steps() -> None:
    r = Reader(SimSource("rooftop", rate_hz=RATE_HZ, speed=1.0))
    try:
        times = [r.next() for _ in range(2)]
        r.src.speed = 64.0  # the monitor's `+` pressed six times
        times += [r.next() for _ in range(100)]  # 10 simulated seconds
        r.src.speed = 1.0  # `-` back to real time: the old pacing waited ~10 s here
        times += [r.next(timeout=2.0) for _ in range(2)]
    finally:
        r.close()
    steps = {round(b - a, 6) for a, b in zip(times, times[1:], strict=False)}
    assert steps == {STEP_S}  # every epoch once, in order: simulated time never jumps


def test_pause_holds_and_resume_continues_where_it_stopped() -> None:
    r = Reader(SimSource("rooftop", rate_hz=RATE_HZ, speed=8.0))
    try:
        r.next()
        r.src.pause()
        time.sleep(0.3)  # let an epoch that was already due arrive
        held = r.drain()
        time.sleep(0.5)  # at ×8 and 10 Hz this would be about 40 epochs if not paused
        assert r.drain() == []
        last = held[-1] if held else None
        r.src.resume()
        nxt = r.next(timeout=2.0)
        if last is not None:
            assert round(nxt - last, 6) == STEP_S  # nothing skipped over the pause
    finally:
        r.close()


def test_unpaced_simulation_keeps_simulated_stamps() -> None:
    # `livefix simulate` and files written from the simulator rely on simulated clocks
    src = SimSource("rooftop", rate_hz=RATE_HZ, speed=None, duration=1.0)
    chunks = [i for i in src.items(threading.Event()) if isinstance(i, Chunk)]
    assert [round(c.mono, 6) for c in chunks[:3]] == [0.0, STEP_S, 2 * STEP_S]
    assert src.speed is None and not src.live
