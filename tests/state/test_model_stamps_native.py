"""The shortcuts of the C epoch assembly (livefix/state/_statecore*.c) that lean on the model's
__dict__ stamp and on remembered msg ids: _mono/_wall are not rewritten while the dict still holds
the very objects of this call, a collaborator is not looked up again while the dict is unchanged,
and a msg id's dispatch (TIMED, TXT, handler) is remembered per exact str. Each test changes the
model from outside in a way the shortcut must notice (between calls and in the middle of one) and
compares the C model with the reference after every call (bench/fuzz_state.py StateTwin), plus the
identity of what the C model holds.
"""

from __future__ import annotations

import datetime as dt
from types import MappingProxyType
from typing import Any

import pytest
from twinkit import bench_module

from livefix.decode import Decoded
from livefix.state.model import StateModel
from livefix.state.sky import Sky

pytest.importorskip("livefix.state._statecore", reason="livefix.state._statecore is not built (no compiler?)")

FUZZ = bench_module("fuzz_state")


def twin() -> Any:
    return FUZZ.StateTwin(StateModel(native=True), StateModel(native=False))


def check(t: Any, op: tuple) -> None:
    why = t.call(op)
    assert why is None, f"{op!r:.300}: {why}"


def epoch_lines(k: int) -> list[Decoded]:
    """One 10 Hz epoch of hand-made sentences: a fix, two GSA, a GSV set of two parts, a VTG."""
    tm = dt.time(12, 0, k // 10 % 60, k % 10 * 100000)
    sats = {"svid_01": 5, "elv_01": 40, "az_01": 100, "cno_01": 30 + k % 5,
            "svid_02": 7, "elv_02": 20, "az_02": 200, "cno_02": 25}
    return [
        Decoded("GN", "GGA", MappingProxyType({"time": tm, "lat": 47.0, "lon": 8.0, "quality": 1})),
        Decoded("GN", "GSA", {"opMode": "A", "navMode": 3, "svid_01": 5, "PDOP": 1.5, "HDOP": 0.9, "VDOP": 1.2,
                              "systemId": 1}),
        Decoded("GN", "GSA", {"opMode": "A", "navMode": 3, "svid_01": 7, "PDOP": 1.5, "HDOP": 0.9, "VDOP": 1.2,
                              "systemId": 1}),
        Decoded("GP", "GSV", {"numMsg": 2, "msgNum": 1, "numSV": 3, **sats}),
        Decoded("GP", "GSV", {"numMsg": 2, "msgNum": 2, "numSV": 3, "svid_01": 9, "elv_01": 10, "az_01": 300,
                              "cno_01": 20}),
        Decoded("GN", "VTG", {"cogt": 10.0, "sogk": 3.6}),
    ]


def test_times_written_from_outside_between_calls_are_rewritten() -> None:
    t = twin()
    mono, wall = 1.25, 1.7e9 + 0.25  # the same objects for every line of the chunk, as the pipeline hands them
    for k in range(30):
        mono, wall = mono + 0.1, wall + 0.1
        for i, msg in enumerate(epoch_lines(k)):
            if i == 3:  # another writer in between: the next call must write its own times again
                for sm in (t.c, t.p):
                    sm._mono, sm._wall = -1.0, -2.0
            if i == 4:
                for sm in (t.c, t.p):
                    sm.on_chunk(mono + 0.0, wall + 0.0)  # equal values, other objects
            check(t, ("sentence", msg, mono, wall))
            assert t.c._mono is mono and t.c._wall is wall
    check(t, ("finish",))
    assert t.epochs >= 29


class _Writes(dict):
    """GSV fields whose get() writes the model's times and swaps its sky in the middle of a call."""

    def __init__(self, models: list[Any], *args: Any, **kw: Any) -> None:
        super().__init__(*args, **kw)
        self.models = models

    def get(self, key: str, default: Any = None) -> Any:
        if key == "numMsg":
            for sm in self.models:
                sm._mono, sm._wall = 123.0, 456.0
        return super().get(key, default)


def test_writes_in_the_middle_of_a_call_are_seen() -> None:
    t = twin()
    mono, wall = 5.0, 1.7e9
    for k in range(20):
        mono, wall = mono + 0.1, wall + 0.1
        for msg in epoch_lines(k):
            if msg.msg_id == "GSV" and msg.fields["msgNum"] == 1:
                # one object per model: each sees its own model's writes
                for sm in (t.c, t.p):
                    sm_msg = Decoded(msg.talker, "GSV", _Writes([sm], msg.fields))
                    out = sm.on_sentence(sm_msg, mono, wall)
                    assert out == () and sm._mono == 123.0
                continue
            check(t, ("sentence", msg, mono, wall))
            assert t.c._mono is mono  # written again after the fields' own write
    check(t, ("finish",))


def test_collaborators_swapped_between_and_during_calls() -> None:
    seen: dict[str, list[float]] = {"c": [], "p": []}

    class Watching(Sky):
        def __init__(self, log: list[float]) -> None:
            super().__init__(5.0)
            self.log = log

        def replace(self, key: Any, sats: Any, mono: float) -> None:
            self.log.append(mono)
            super().replace(key, sats, mono)

    t = twin()
    mono, wall = 10.0, 1.7e9
    for k in range(40):
        mono, wall = mono + 0.1, wall + 0.1
        if k == 10:  # between calls
            t.c._sky, t.p._sky = Watching(seen["c"]), Watching(seen["p"])
        for i, msg in enumerate(epoch_lines(k)):
            if k == 20 and i == 4:  # between the two GSV parts: the set completes on the new sky
                t.c._sky, t.p._sky = Watching(seen["c"]), Watching(seen["p"])
            check(t, ("sentence", msg, mono, wall))
    check(t, ("finish",))
    assert seen["c"] == seen["p"] and len(seen["c"]) >= 29


def test_many_and_odd_msg_ids() -> None:
    class Id(str):
        """A msg id of a str subclass: never remembered, its dispatch looked up each time."""

    t = twin()
    mono, wall = 1.0, 1.7e9
    for k in range(40):
        mono, wall = mono + 0.1, wall + 0.1
        extra = [Decoded("GN", f"X{j:02d}", {"k": j}) for j in range(k % 25)]  # past the remembered ids
        odd = [Decoded("GN", Id("GGA"), MappingProxyType({"time": dt.time(12, 0, k // 10, k % 10 * 100000),
                                                          "quality": 2})),
               Decoded("GN", Id("TXT"), {"text": "ANTENNA OK", "msgType": 2}),
               Decoded("GN", Id("GSA"), {"svid_01": 12, "PDOP": 2.0})]
        for msg in [*epoch_lines(k)[:1], *odd, *epoch_lines(k)[1:], *extra]:
            check(t, ("sentence", msg, mono, wall))
    check(t, ("finish",))
    assert t.epochs >= 39


def test_the_gsv_assemblers_unknown_numbers_read_both_ways() -> None:
    # the C model reads the C assembler's last_unknown as a member, anything else by attribute;
    # numbers no block fits (NMEA 0183 4.11 GSV svid 0 here, common practice for "no satellite")
    # make the assembler report them, so the read is checked on a non-empty value too
    from livefix.state.gsv import make_assembler

    t = twin()
    mono, wall = 1.0, 1.7e9
    for k in range(30):
        mono, wall = mono + 0.1, wall + 0.1
        if k in (10, 20):  # the reference assembler in both models, then the C one again
            for sm in (t.c, t.p):
                sm._gsv = make_assembler(native=k == 20)
        odd = Decoded("GP", "GSV", {"numMsg": 1, "msgNum": 1, "numSV": 1, "svid_01": 0, "elv_01": 1,
                                    "az_01": 2, "cno_01": 3})
        for msg in [*epoch_lines(k), odd]:
            check(t, ("sentence", msg, mono, wall))
            assert repr(t.c._gsv.last_unknown) == repr(t.p._gsv.last_unknown)
    check(t, ("finish",))
    assert type(t.c._gsv).__module__ == "livefix.state._gsvcore"  # the member read was taken at the end
