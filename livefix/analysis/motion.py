"""Is the antenna moving? Static figures (scatter, drift, convergence, offsets) mean something only
for a receiver that stands still, so every fixed epoch is classed static or moving first.

Rule (thresholds in AnalysisConfig, values shown in the snapshot):
- The positions must move on: over the last `motion_window_s`, split in two halves, the net
  horizontal displacement of *each* half must exceed a distance. Both halves, so that one step
  (a multipath jump, a wrong RTK fix) never reads as motion: a step lies in one half only.
- The distance is `motion_spread_m` (10 m in each 10 s half: 1 m/s kept up for 20 s). A low-cost
  receiver's solution can wander at about 1 m/s for 10-20 s while it settles, with a matching
  speed over ground, so neither a shorter spell nor the reported speed alone says "moving".
- The speed over ground, when given, must agree: a receiver reporting `motion_speed_mps` or less
  (its speed comes from Doppler, better than position differences) is not moving, however its
  positions scatter.
- A reported speed of `motion_fast_mps` or more in two epochs in a row, or in one epoch whose step
  from the previous position agrees with it (at least half the distance), is moving at once (a car
  or an aircraft is moving from its first epochs; no standing antenna reports 18 km/h twice).
- Static -> moving after CONFIRM epochs in a row look moving (a noise coincidence does not
  last); moving -> static only after `motion_hold_s` without motion. An epoch whose latest half-window
  moved while the receiver reports a speed over `motion_speed_mps` is kept out of the static
  figures at once, before the state changes; without a speed the first epochs of a move wait for
  the state (the jump filter keeps them out meanwhile). The moving share counts the epochs in
  the moving state.

`update` has a C twin (livefix/analysis/_epochcore_motion.c), run by the C step of
PositionStats.on_epoch; this code is the reference.
"""

from __future__ import annotations

import math
from collections import deque
from typing import Any

from livefix.analysis.config import AnalysisConfig
from livefix.analysis.streaming import num

WINDOW_CAP = 4096  # samples kept for the window (20 Hz for 200 s; the window is 20 s by default)
CONFIRM = 3  # epochs in a row that look moving before the state is moving (noise coincidences)
MIN_STATIC_S = 60.0  # static time below which (or below half the session) there is "no static part" (common practice)


class MotionDetector:
    """Snapshot key "motion": state static | moving | mixed, moving_share, segments, thresholds."""

    __slots__ = ("cfg", "_w", "_hw", "_need", "_slow_mps", "_fast_mps", "_hold", "_full", "_half", "moving",
                 "_still_since", "fixed", "moving_epochs", "static_s", "moving_s", "moves", "_prev", "max_speed",
                 "_run", "_fast")  # read by the C step of livefix/analysis/_epochcore_pos.c

    def __init__(self, config: AnalysisConfig) -> None:
        self.cfg = config
        self.reset()

    def reset(self) -> None:
        cfg = self.cfg  # frozen: its thresholds are read once here, not per epoch (hot)
        self._w, self._hw = cfg.motion_window_s, cfg.motion_window_s / 2.0
        self._need, self._slow_mps, self._fast_mps = cfg.motion_spread_m, cfg.motion_speed_mps, cfg.motion_fast_mps
        self._hold = cfg.motion_hold_s
        self._full: deque[tuple[float, float, float]] = deque(maxlen=WINDOW_CAP)
        self._half: deque[tuple[float, float, float]] = deque(maxlen=WINDOW_CAP)
        self.moving = False  # current state (with hold)
        self._still_since: float | None = None
        self.fixed = 0  # fixed epochs classed
        self.moving_epochs = 0
        self.static_s = 0.0
        self.moving_s = 0.0
        self.moves = 0  # static -> moving transitions
        self._prev: tuple[float, bool] | None = None  # (t, excluded) of the previous fixed epoch
        self.max_speed: float | None = None
        self._run = 0  # consecutive epochs that looked moving
        self._fast = 0  # consecutive epochs with a speed over ground of motion_fast_mps or more

    def update(self, t: float, e: float, n: float, speed: float | None) -> bool:
        """Class one fixed epoch (session time t, horizontal E/N in metres); True = moving, i.e. to
        be kept out of the static figures."""
        full, half, hypot = self._full, self._half, math.hypot
        p = (t, e, n)  # one tuple in both windows
        full.append(p)
        half.append(p)
        lim = t - self._w
        while full[0][0] < lim:
            full.popleft()
        lim = t - self._hw
        while half[0][0] < lim:
            half.popleft()
        t0, e0, n0 = full[0]
        tm, em, nm = half[0]
        need = self._need
        slow = speed is not None and speed <= self._slow_mps  # Doppler says it stands still
        recent = not slow and t > tm and hypot(e - em, n - nm) > need  # the latest half moved
        raw = recent and tm > t0 and hypot(em - e0, nm - n0) > need
        moving = self.moving
        if speed is not None:
            if self.max_speed is None or speed > self.max_speed:
                self.max_speed = speed
            if speed >= self._fast_mps:
                fast = self._fast + 1
                if len(full) >= 2:  # the position step agrees with the speed: as good as two epochs
                    pt, pe, pn = full[-2]
                    if t > pt and hypot(e - pe, n - pn) >= 0.5 * speed * (t - pt) and fast < 2:
                        fast = 2
                self._fast = fast
                if fast >= 2 and not moving:  # Doppler says driving: no need to wait for the window
                    self._run = CONFIRM - 1
                    raw = True
            else:
                self._fast = 0
        else:
            self._fast = 0
        if raw:
            self._run += 1
            self._still_since = None
            if self._run >= CONFIRM and not moving:
                self.moves += 1
                self.moving = moving = True
        else:
            self._run = 0
            if moving:
                if self._still_since is None:
                    self._still_since = t
                elif t - self._still_since >= self._hold:
                    self.moving = moving = False
        self.fixed += 1
        self.moving_epochs += moving
        prev = self._prev
        if prev is not None and t > prev[0]:
            if prev[1]:
                self.moving_s += t - prev[0]
            else:
                self.static_s += t - prev[0]
        self._prev = (t, moving)
        # kept out at once when the speed over ground agrees; else the state decides (CONFIRM)
        return moving or (recent and speed is not None)

    def state(self) -> str | None:
        if not self.fixed:
            return None
        if not self.moving_epochs:
            return "static"
        if self.static_s < min(MIN_STATIC_S, 0.5 * (self.static_s + self.moving_s)):
            return "moving"  # no static part worth the name
        return "mixed"

    def snapshot(self) -> dict[str, Any]:
        c = self.cfg
        share = self.moving_epochs / self.fixed if self.fixed else None
        return {"state": self.state(), "moving_share": num(share, 4), "moving_epochs": self.moving_epochs,
                "fixed_epochs": self.fixed, "moving_s": num(self.moving_s, 1), "static_s": num(self.static_s, 1),
                "moves": self.moves, "max_speed_mps": num(self.max_speed, 3),
                "rule": {"speed_mps": c.motion_speed_mps, "spread_m": c.motion_spread_m,
                         "window_s": c.motion_window_s, "hold_s": c.motion_hold_s, "min_static_s": MIN_STATIC_S,
                         "fast_mps": c.motion_fast_mps}}
