"""What the state model remembers between epochs to save work gives what a fresh computation gives:
the host date by day (UtcClock), the nominal step (a median), the sky's expiry bound. Expected
values come from Python's datetime and statistics modules and from hand arithmetic."""

from __future__ import annotations

import datetime as dt
import random
import statistics

from livefix.state.clock import UtcClock
from livefix.state.sky import Sky

UTC = dt.UTC


def test_host_date_is_python_s_date_even_at_midnight() -> None:
    """fromtimestamp rounds to microseconds: a wall 0.3 us before midnight is already the next day."""
    c = UtcClock()
    midnight = dt.datetime(2026, 5, 13, tzinfo=UTC).timestamp()
    walls = [midnight - 86400 + 5.0, midnight - 1.0, midnight - 0.0006, midnight - 3e-7, midnight - 1e-9,
             midnight, midnight + 1e-7, midnight + 3600.0, midnight - 2.0, midnight + 86400 - 1e-7,
             midnight + 86400 * 400]
    rng = random.Random(5)
    for w in walls + rng.sample(walls, len(walls)) + [midnight + rng.uniform(-2, 2) for _ in range(300)]:
        assert c._host_date(w) == dt.datetime.fromtimestamp(w, tz=UTC).date(), w  # Python's datetime


def test_nominal_step_is_the_median_of_recent_steps() -> None:
    """Odd and even counts (statistics.median averages the middle two), up to the 15 kept."""
    c = UtcClock()
    d = dt.date(2026, 5, 12)
    rng = random.Random(9)
    tod, mono, steps = 3600.0, 0.0, []
    c.resolve(tod, d, 0.0, mono)
    for _ in range(20):
        step = rng.choice([0.1, 0.2, 0.25, 0.5, 1.0])
        tod, mono = tod + step, mono + step
        utc_before = c.last_utc
        c.resolve(tod, d, 0.0, mono)
        steps.append(c.last_utc - utc_before)  # the step as the clock saw it (POSIX rounding)
        assert c.nominal_s == statistics.median(steps[-15:]), len(steps)  # deque(maxlen=15) in clock


def _raw(system: str, prn: int) -> tuple:
    return (system, prn, 10, 20, 30)


def test_expiry_drops_exactly_the_silent_groups_in_any_time_order() -> None:
    """Groups listed at 10, 3, 8 s (host time need not rise), timeout 5 s (hand arithmetic)."""
    sky = Sky(timeout_s=5.0)
    sky.replace(("GP", ""), [_raw("G", 1)], 10.0)
    sky.replace(("GL", ""), [_raw("R", 2)], 3.0)
    sky.replace(("GA", ""), [_raw("E", 3)], 8.0)
    sky.expire(7.9)  # limit 2.9: nothing older
    assert sky.in_view() == {("G", 1), ("R", 2), ("E", 3)}
    sky.expire(12.0)  # limit 7.0: GL (3 s) goes
    assert sky.in_view() == {("G", 1), ("E", 3)}
    sky.replace(("GL", ""), [_raw("R", 2)], 12.0)
    sky.expire(12.5)  # limit 7.5: all of 10, 8, 12 stay
    assert sky.in_view() == {("G", 1), ("E", 3), ("R", 2)}
    sky.expire(14.0)  # limit 9.0: GA (8 s) goes
    assert sky.in_view() == {("G", 1), ("R", 2)}
    sky.expire(17.5)  # limit 12.5: GP (10 s) and GL (12 s) go
    assert sky.in_view() == frozenset()
    sky.replace(("GB", ""), [_raw("C", 4)], 1.0)  # an older time after everything expired
    sky.expire(5.5)  # limit 0.5: stays
    assert sky.in_view() == {("C", 4)}
    sky.expire(6.5)  # limit 1.5: goes
    assert sky.in_view() == frozenset()
