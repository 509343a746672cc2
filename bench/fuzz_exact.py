"""How the C twins' differentials compare states: exact() spells a state type-exact and bit-exact as
text, for the reports of a difference; key() is a quick byte form of the same, for deciding, since the
tests compare a whole state after every step (bench/fuzz*.py and tests/**/test_*native*.py).
"""

from __future__ import annotations

import copyreg
import dataclasses
import functools
import io
import operator
import pickle
from array import array
from collections.abc import Callable, Iterable
from itertools import chain
from types import MappingProxyType
from typing import Any


def exact(x: object) -> str:
    """A type-exact text of a state: floats as float.hex (so -0.0, nan and every bit count), ints and
    bools apart, containers in their own (iteration) order."""
    if type(x) is float:
        return "f" + x.hex()
    if type(x) in (list, tuple):
        return type(x).__name__[0] + "[" + ",".join(map(exact, x)) + "]"  # type: ignore[attr-defined]
    if type(x) in (set, frozenset):
        return "s{" + ",".join(map(exact, x)) + "}"  # type: ignore[attr-defined]
    if type(x) is dict:
        return "d{" + ",".join(exact(k) + ":" + exact(v) for k, v in x.items()) + "}"  # type: ignore[attr-defined]
    return type(x).__name__ + ":" + repr(x)


def _by_identity(x: object) -> tuple[Callable[[int], int], tuple[int]]:
    return id, (id(x),)  # never unpickled: the object's identity is what is compared


_SCALARS = frozenset((int, float, bool, str, bytes, type(None)))


@functools.cache
def _table() -> dict[type, Any]:
    """Reducers for pickle: livefix's frozen slot dataclasses by their fields' values in a tuple (the
    dataclasses module's own __getstate__ is about 10x slower), read-only mappings as a dict handed
    to dict() (so apart from a dict itself)."""
    from livefix.decode import Decoded, Rejected
    from livefix.state.epoch import Epoch, Event, SatObs

    table: dict[type, Any] = {**copyreg.dispatch_table, MappingProxyType: lambda m: (dict, (dict(m),))}
    for cls in (Decoded, Rejected, Epoch, Event, SatObs):
        values = operator.attrgetter(*(f.name for f in dataclasses.fields(cls)))
        table[cls] = lambda o, cls=cls, values=values: (cls, values(o))
    return table


def key(x: object, by_identity: Iterable[type] = ()) -> bytes | None:
    """A quick type- and bit-exact form of a state, for comparing: pickled without a memo, so only
    values count, not which objects happen to be shared (floats by their 8 bytes, ints, bools and
    floats apart, containers in their iteration order); objects of the by_identity types by id().
    None where pickle cannot. Why: exact()'s text costs about 30x more, and the twins' tests
    compare a whole state after every step."""
    buf = io.BytesIO()
    pk = pickle.Pickler(buf, 5)
    pk.fast = True  # no memo
    pk.dispatch_table = {**_table(), **dict.fromkeys(by_identity, _by_identity)} if by_identity else _table()
    try:
        pk.dump(x)
    except Exception:  # noqa: BLE001 - an object pickle cannot take: the caller's slow definition decides
        return None
    return buf.getvalue()


def alike(a: object, b: object, text: Callable[[object], object]) -> bool:
    """text(a) == text(b), decided by key() where the keys agree: equal keys mean equal texts for
    every definition used here (exact, repr, canon), and the texts are built only for the rare rest
    (NaN signs, which exact() and repr() do not see, or what pickle cannot take)."""
    if type(a) in _SCALARS:
        return text(a) == text(b)  # as quick as it gets
    ka = key(a)
    return (ka is not None and ka == key(b)) or text(a) == text(b)


class Exact:
    """A state as the differentials compare it: equal when exact()'s texts are (by alike()), shown
    as that text (only when a difference is reported)."""

    __slots__ = ("value", "_key")

    def __init__(self, value: object) -> None:
        self.value, self._key = value, key(value)

    def __eq__(self, other: object) -> bool:
        if type(other) is not Exact:
            return NotImplemented
        return (self._key is not None and self._key == other._key) or str(self) == str(other)

    __hash__ = None  # type: ignore[assignment]

    def __str__(self) -> str:
        return exact(self.value)

    def __getitem__(self, part: slice) -> str:
        return str(self)[part]


def same(a: object, b: object) -> bool:
    """exact(a) == exact(b) but NaNs by their bits: by key() where the keys agree, else item by item."""
    ka = key(a)
    return (ka is not None and ka == key(b)) or _same(a, b)


def _same(a: object, b: object) -> bool:
    """same() item by item: types compared one by one, floats by their bits (array('d') bytes;
    every NaN sign and payload too), lists of lists flattened."""
    if type(a) is not type(b):
        return False
    if type(a) is float:
        return array("d", [a]).tobytes() == array("d", [b]).tobytes()  # type: ignore[list-item]
    if type(a) in (set, frozenset, dict):
        return _same(list(a.items() if type(a) is dict else a), list(b.items() if type(b) is dict else b))  # type: ignore[attr-defined]
    if type(a) not in (list, tuple):
        return a == b  # int, bool, str, None
    ta, tb = list(map(type, a)), list(map(type, b))  # type: ignore[call-overload]
    if ta != tb:
        return False
    if ta.count(float) == len(ta):
        return array("d", a).tobytes() == array("d", b).tobytes()  # type: ignore[arg-type]
    if ta.count(list) + ta.count(type(None)) == len(ta):  # Trend.buckets: their items in one list
        return _same(list(chain.from_iterable(filter(None, a))), list(chain.from_iterable(filter(None, b))))  # type: ignore[arg-type]
    return all(map(_same, a, b))  # type: ignore[call-overload]
