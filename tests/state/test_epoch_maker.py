"""The fast constructors of Epoch and SatObs (livefix.state.epoch.slot_maker): the same objects as
the dataclass constructor on both paths, still frozen, and no reference leaks in the C core.

Expected values come from the dataclass constructor itself (the reference the makers replace), and
the reference counts from CPython's own bookkeeping (sys.getrefcount, tracemalloc, gc)."""

from __future__ import annotations

import dataclasses
import gc
import random
import sys
import tracemalloc
from functools import partial

import pytest

from livefix.framing import built_core, native_core
from livefix.state.epoch import Epoch, SatObs, make_epoch, slot_maker

CORE = built_core()
HAS_C = getattr(CORE, "make", None) is not None
PATHS = [False] + ([True] if HAS_C else [])  # pure always; C only when built


def _value(rng: random.Random) -> object:
    """Any kind of field value: the makers must store it as given, whatever its type."""
    pick = rng.randrange(9)
    return [None, rng.random() * 1e6, rng.randrange(-999, 999), f"s{rng.randrange(99)}", True, False,
            (rng.random(), "G"), float("nan"), object()][pick]


def _values(cls: type, rng: random.Random) -> tuple:
    return tuple(_value(rng) for _ in dataclasses.fields(cls))


@pytest.mark.parametrize("native", PATHS)
@pytest.mark.parametrize("cls", [Epoch, SatObs])
def test_maker_equals_the_dataclass_constructor(cls: type, native: bool) -> None:
    make = slot_maker(cls, native=native)
    rng = random.Random(7)
    names = [f.name for f in dataclasses.fields(cls)]
    for _ in range(500):
        vals = _values(cls, rng)
        ref, got = cls(*vals), make(vals)
        assert type(got) is cls
        assert got == ref  # dataclass __eq__: field tuples (a NaN is equal to itself by identity)
        assert hash(got) == hash(ref)  # frozen + eq: hash of the field tuple
        assert repr(got) == repr(ref)
        for n, v in zip(names, vals, strict=True):
            assert getattr(got, n) is v  # the very object given, so also its type


@pytest.mark.parametrize("native", PATHS)
def test_made_epochs_stay_frozen(native: bool) -> None:
    vals = _values(Epoch, random.Random(1))
    ep, ref = slot_maker(Epoch, native=native)(vals), Epoch(*vals)
    with pytest.raises(dataclasses.FrozenInstanceError):
        ep.lat = 1.0  # type: ignore[misc]
    assert ep.lat is vals[4]

    def refusal(obj: object) -> type:
        try:
            obj.extra = 1  # type: ignore[attr-defined]  # slotted: no instance dict
        except Exception as err:  # noqa: BLE001 - which one differs by Python version
            return type(err)
        raise AssertionError("an unknown attribute was set")

    assert refusal(ep) is refusal(ref)  # whatever the dataclass does (3.11: TypeError from super())


@pytest.mark.parametrize("native", PATHS)
def test_wrong_length_or_kind_raises_type_error(native: bool) -> None:
    make = slot_maker(SatObs, native=native)
    good = ("G", 1, "1", 10, 20, 30.0, True, 0.0)
    for bad in (good[:-1], good + (1,), (), list(good)):
        with pytest.raises(TypeError):
            make(bad)  # type: ignore[arg-type]


def test_default_path_follows_the_switch() -> None:
    """make_epoch is the C core's make exactly when native_core() offers one (LIVEFIX_PURE=1: never)."""
    c = getattr(native_core(), "make", None)
    assert isinstance(make_epoch, partial) == (c is not None)
    if c is not None:
        assert make_epoch.func is c


def test_slot_maker_refuses_classes_it_would_get_wrong() -> None:
    @dataclasses.dataclass
    class Plain:  # no slots: nothing to set by descriptor
        a: int

    @dataclasses.dataclass(slots=True)
    class Posted:
        a: int

        def __post_init__(self) -> None:
            pass

    for cls in (Plain, Posted):
        with pytest.raises(TypeError):
            slot_maker(cls)


needs_c = pytest.mark.skipif(not HAS_C, reason="C core not built")


@dataclasses.dataclass(frozen=True, slots=True)
class _Two:
    a: object
    b: object


@dataclasses.dataclass(frozen=True, slots=True)
class _Sub(_Two):  # inherits _Two's slots: make() would leave them unset
    c: object = None


@needs_c
def test_c_make_checks_its_arguments() -> None:
    make = CORE.make  # type: ignore[union-attr]
    slots = (_Two.__dict__["a"], _Two.__dict__["b"])
    assert make(slots, (1, 2)) == _Two(1, 2)
    assert make(slots[::-1], (1, 2)) == _Two(2, 1)  # by descriptor, whatever the order
    bad = [
        ((slots,), {}),  # one argument
        ((list(slots), (1, 2)), {}),  # not a tuple
        ((slots, [1, 2]), {}),
        ((slots, (1,)), {}),  # one value short
        ((slots, (1, 2, 3)), {}),
        ((slots[:1], (1,)), {}),  # a slot left unset
        (((slots[0], slots[0]), (1, 2)), {}),  # a slot twice
        (((slots[0], SatObs.__dict__["prn"]), (1, 2)), {}),  # two classes
        (((slots[0], "b"), (1, 2)), {}),  # not a descriptor
        (((_Sub.__dict__["c"],), (1,)), {}),  # a class whose base has slots
        (((), ()), {}),
        (((int.__dict__["real"],), (1,)), {}),  # a getset of a C type, not a slot
    ]
    for args, kw in bad:
        with pytest.raises(TypeError):
            make(*args, **kw)


@needs_c
def test_c_make_keeps_reference_counts_exact() -> None:
    """Each made object holds one reference to each value and one to its class; all are given back."""
    make = slot_maker(SatObs, native=True)
    v = object()
    vals = (v,) * 8
    base_v, base_cls = sys.getrefcount(v), sys.getrefcount(SatObs)
    objs = [make(vals) for _ in range(1000)]
    assert sys.getrefcount(v) == base_v + 8 * 1000  # CPython: one per stored reference
    assert sys.getrefcount(SatObs) == base_cls + 1000  # a heap type's instances hold their type
    del objs
    assert sys.getrefcount(v) == base_v
    assert sys.getrefcount(SatObs) == base_cls
    for n in (7, 9):  # failures take no reference either
        with pytest.raises(TypeError):
            make((v,) * n)
    assert sys.getrefcount(v) == base_v


@needs_c
def test_c_make_does_not_grow_memory_or_gc_objects() -> None:
    make = slot_maker(Epoch, native=True)
    vals = _values(Epoch, random.Random(3))

    def churn() -> None:
        for _ in range(20000):
            make(vals)

    churn()  # warm up free lists
    gc.collect()
    n_objs = len(gc.get_objects())
    tracemalloc.start()
    try:
        before = tracemalloc.get_traced_memory()[0]
        for _ in range(5):
            churn()
        gc.collect()
        grown = tracemalloc.get_traced_memory()[0] - before
    finally:
        tracemalloc.stop()
    assert grown < 64 * 1024  # 100,000 epochs of ~0.3 KB each would be ~30 MB if any leaked
    assert len(gc.get_objects()) - n_objs < 100  # common practice: a little noise from the test itself
