"""The differential of SignalStats' C step (livefix.analysis._sigcore.step: _sigcore_step.c and
_sigcore_interf.c): on_epoch with the C step against the pure-Python reference on the random epochs
of fuzz_twins.sig_epochs (signals coming and going or listed twice, broadband drops that open and
close interference episodes, time stepping back, odd values and types), the whole state compared
after every epoch (floats by float.hex, types kept, dict order kept) and the events emitted.
"""

from __future__ import annotations

import random
from typing import Any

from fuzz_twins import sig_epochs, sig_pair


class _Counting:
    """The C module of the pair with step() counted (False: the epoch was handed back)."""

    def __init__(self, core: Any) -> None:
        self.core, self.handed = core, 0

    def __getattr__(self, name: str) -> Any:
        return getattr(self.core, name)

    def step(self, stats: Any, ep: Any) -> bool:
        r = self.core.step(stats, ep)
        self.handed += r is False
        return r


def _canon(x: Any) -> Any:
    t = type(x)
    if t is float:
        return x.hex()
    if t in (list, tuple):
        return (t.__name__, [_canon(v) for v in x])
    if t is dict:
        return [(_canon(k), _canon(v)) for k, v in x.items()]
    if x is None or t in (int, bool, str):
        return (t.__name__, x)
    return (t.__name__, id(x))  # satellites: the epoch's own objects


def _state(s: Any) -> Any:
    return {k: _canon(v) for k, v in vars(s).items() if k not in ("config", "emit", "_core")}


def _on_epoch(s: Any, ep: Any) -> Any:
    try:
        s.on_epoch(ep)
    except Exception as err:  # noqa: BLE001 - the same error on both is agreement
        return (type(err), str(err))
    return None


def diff(epochs: int, seed: int = 1) -> tuple[int, int, int, list[str]]:
    """(epochs, handed back, disagreements, first examples): a new pair and config every 2,000
    epochs, the whole state and the events compared after every epoch."""
    rng = random.Random(seed)
    gen = sig_epochs(rng)
    bad, handed, examples = 0, 0, []
    c = p = counting = None
    ec: list = []
    ep_: list = []
    for n in range(epochs):
        if n % 2000 == 0 or c is None:
            if counting is not None:
                handed += counting.handed
            c, p, ec, ep_ = sig_pair(rng)
            counting = c._core = _Counting(c._core)
        ep = next(gen)
        ok = _on_epoch(c, ep) == _on_epoch(p, ep) and _state(c) == _state(p) and repr(ec) == repr(ep_)
        if not ok:
            bad += 1
            if len(examples) < 5:
                examples.append(f"epoch {n}: {ep!r}"[:300])
            c = None  # start over from equal states
    if counting is not None:
        handed += counting.handed
    return epochs, handed, bad, examples
