"""The C steps bound to their stage as the Analyzer's on_epoch (bind_step kinds "fix", "position"
and "reflection", livefix/analysis/_epochcore_bind.c, and SignalStats' step, _sigcore.c bind_step):
the Analyzer calls them without a Python frame, and what it computes is what the Python code computes.

Checks: the stages the Analyzer holds (builtins named as the reference methods, so an error note
names the same stage), whole Analyzers with the bound steps and on the Python code giving the same
snapshot over simulator dialects, the steps' own counts (the C case runs, the reference takes the
rest), the reflection step's first test on hand-made times (the collector's one sample a second,
common practice), and a failing reference counted as an internal error under the stage's name.
Skipped when the C core is not built.
"""

from __future__ import annotations

import functools
import json
from dataclasses import replace
from typing import Any

import pytest
from twinkit import sim_epochs

from livefix.analysis.engine import Analyzer
from livefix.analysis.fixes import FixStats
from livefix.analysis.position import PositionStats
from livefix.analysis.reflectors import ReflectionStats
from livefix.state.epoch import make_satobs

core = pytest.importorskip("livefix.analysis._epochcore", reason="livefix.analysis._epochcore is not built")

KINDS = ("fix", "position", "reflection")


def _analyzer(monkeypatch: pytest.MonkeyPatch, native: bool) -> Analyzer:
    if native:
        monkeypatch.delenv("LIVEFIX_PURE", raising=False)
    else:
        monkeypatch.setenv("LIVEFIX_PURE", "1")
    a = Analyzer()
    monkeypatch.delenv("LIVEFIX_PURE", raising=False)
    return a


def test_the_analyzer_holds_the_bound_steps(monkeypatch: pytest.MonkeyPatch) -> None:
    c, p = _analyzer(monkeypatch, True), _analyzer(monkeypatch, False)
    names = ["FixStats.on_epoch", "PositionStats.on_epoch", "SignalStats.on_epoch", "ReflectionStats.on_epoch"]
    bound = [s for s in c._epoch_stages if s.__qualname__ in names]
    assert [s.__qualname__ for s in bound] == names
    assert all(type(s).__name__ == "builtin_function_or_method" for s in bound)
    assert [s.__self__ for s in bound] == [c.fix, c.position, c.signal, c.reflection]
    plain = [s for s in p._epoch_stages if s.__qualname__ in names]
    assert [type(s).__name__ for s in plain] == ["method"] * 4
    # a subclass keeps its own on_epoch
    sub = type("Sub", (ReflectionStats,), {})()
    assert sub.epoch_step() == sub.on_epoch


def _snap(a: Analyzer) -> str:
    return json.dumps(a.snapshot(None), sort_keys=True, default=str)


@pytest.mark.parametrize("dialect", ["rate-10hz", "default-date", "empty-time-nofix", "rmc-only"])
def test_same_snapshot_as_the_python_code(monkeypatch: pytest.MonkeyPatch, dialect: str) -> None:
    c, p = _analyzer(monkeypatch, True), _analyzer(monkeypatch, False)
    before = core.site_counts()
    n = 0
    for ep in sim_epochs(dialect, 150):
        c.on_epoch(ep)
        p.on_epoch(ep)
        n += 1
        if n % 600 == 0:
            assert _snap(c) == _snap(p)
    assert _snap(c) == _snap(p)
    assert c.internal_errors == p.internal_errors == 0
    after = core.site_counts()
    runs = {k: (after[k][0] - before[k][0], after[k][1] - before[k][1]) for k in KINDS}
    assert all(done + handed == n for done, handed in runs.values()), runs  # every epoch, one way or the other
    assert runs["reflection"][0] > 0.8 * n  # the collector takes one epoch a second of ten


@functools.cache
def _template() -> Any:
    return next(sim_epochs("rate-10hz", 1))


ONE_SAT = (make_satobs(("G", 5, "1", 10, 90, 40, True, 0.0)),)


def _ep(mono: Any, sats: Any = ONE_SAT) -> Any:
    return replace(_template(), mono=mono, sats=sats)


@pytest.mark.parametrize("times, refused", [
    ([0.0, 0.5, 0.94, 0.95, 1.0, 1.9], [False, True, True, False, True, False]),  # sample_s 0.95
    ([5.0, 4.0, 4.5], [False, False, True]),  # time going back: a new sample
    ([1.0, 1, 1.5], [False, False, True]),  # an int time: the reference decides (not refused there)
])
def test_reflection_first_test(times: list[Any], refused: list[bool]) -> None:
    rs = ReflectionStats(native=True)
    step = rs.epoch_step()
    assert type(step).__name__ == "builtin_function_or_method"
    for t, r in zip(times, refused, strict=True):
        before = core.site_counts()["reflection"]
        t_before = rs._arcs._t
        step(_ep(t))
        after = core.site_counts()["reflection"]
        assert (after[0] - before[0], after[1] - before[1]) == ((1, 0) if r else (0, 1)), t
        assert (rs._arcs._t == t_before) is r or type(t) is int


def test_a_failing_reference_is_counted_under_the_stage(monkeypatch: pytest.MonkeyPatch) -> None:
    a = _analyzer(monkeypatch, True)
    failed: list[str] = []
    monkeypatch.setattr(a, "_fail", lambda fn, exc: failed.append(fn.__qualname__))
    a.on_epoch(_ep(1.0))
    assert failed == []
    a.on_epoch(_ep(2.0, sats=None))  # handed back by the C step, the reference fails on it
    assert "ReflectionStats.on_epoch" in failed


def test_bind_step_refuses_other_references(monkeypatch: pytest.MonkeyPatch) -> None:
    with pytest.raises(ValueError):
        core.bind_step("position", PositionStats.__new__(PositionStats), FixStats.epoch_reference)
    with pytest.raises(ValueError):
        core.bind_step("nothing", object(), print)
    sig = _analyzer(monkeypatch, True).signal._core
    with pytest.raises(ValueError):
        sig.bind_step(object(), FixStats.epoch_reference)
    with pytest.raises(TypeError):
        sig.bind_step(object(), None)
