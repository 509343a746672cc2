"""The comparisons every C twin's differential relies on (bench/fuzz_exact.py): the quick key must
tell apart what the slow texts tell apart, and the fallback must keep the texts' own definition.
Expected values are Python's and IEEE 754's own rules (signed zero, NaN sign bit), not livefix's:
docs/sources.md#comparing-twin-states-bit-for-bit."""

from __future__ import annotations

import math
from types import MappingProxyType

from twinkit import bench_module

from livefix.state.epoch import Epoch, SatObs

EX = bench_module("fuzz_exact")


def _sat(cn0: float) -> SatObs:
    return SatObs("G", 5, "1", 40, 120, cn0, True)


def test_key_tells_types_and_bits_apart() -> None:
    # IEEE 754: -0.0 == 0.0 compares equal but is another bit pattern; Python: 1 == 1.0 == True
    for a, b in ((0.0, -0.0), (1, 1.0), (1, True), ([1.0], (1.0,)), ({"a": 1}, MappingProxyType({"a": 1})),
                 ([0.1 + 0.2], [0.3]), ({1: 2, 3: 4}, {3: 4, 1: 2})):
        assert EX.key(a) != EX.key(b), (a, b)
        assert EX.exact(a) != EX.exact(b), (a, b)  # the text definition agrees
        assert not EX.same(a, b) and EX.Exact(a) != EX.Exact(b)


def test_key_ignores_sharing_and_sees_fields() -> None:
    row = [1.5, None]
    assert EX.key([row, row]) == EX.key([[1.5, None], [1.5, None]])  # no memo: values only
    ep = Epoch(1.0, 2.0, None, 1, sats=(_sat(40.0),))
    assert EX.key(ep) == EX.key(Epoch(1.0, 2.0, None, 1, sats=(_sat(40.0),)))
    assert EX.key(ep) != EX.key(Epoch(1.0, 2.0, None, 1, sats=(_sat(40.25),)))
    assert EX.key(ep) != EX.key(Epoch(1.0, 2.0, None, 1, sats=(_sat(40.0),), used_prns=(("G", 5),)))


def test_identity_types_compare_by_identity() -> None:
    s = _sat(40.0)
    assert EX.key([s, s], (SatObs,)) == EX.key([s, s], (SatObs,))
    assert EX.key([s], (SatObs,)) != EX.key([_sat(40.0)], (SatObs,))  # equal values, other objects


def test_fallback_keeps_each_texts_definition() -> None:
    neg_nan = -math.nan
    assert math.copysign(1.0, neg_nan) < 0  # IEEE 754: the sign bit of a NaN is kept by negation
    assert EX.key([math.nan]) != EX.key([neg_nan])  # the bits differ...
    assert EX.Exact([math.nan]) == EX.Exact([neg_nan])  # ...but exact() spells both "fnan", as before
    assert EX.alike([math.nan], [neg_nan], repr)
    assert not EX.same([math.nan], [neg_nan])  # same() compares NaN bits, as it always did
    assert not EX.alike([1.0], [1], repr) and EX.alike(2, 2, repr) and not EX.alike(2, 2.0, EX.exact)
    unpicklable = [lambda: 0]
    assert EX.key(unpicklable) is None and EX.Exact(unpicklable) != EX.Exact([lambda: 0])
