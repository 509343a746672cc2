"""Field values as the state model reads them: numbers from decoded fields, the DTM datum pair.

Apart from livefix/state/model.py so that module stays short; the C epoch assembly
(livefix/state/_statecore*.c) repeats these rules and receives `_datum` as a helper.
"""

from __future__ import annotations

from collections.abc import Mapping
from types import MappingProxyType
from typing import Any


def datum(dtm: Any) -> tuple[str, str] | None:
    """(local datum, reference datum) of a DTM sentence (NMEA 0183), None without one."""
    if not dtm:
        return None
    local = str(dtm.get("datum") or "")
    return (local + (f"/{dtm['subDatum']}" if dtm.get("subDatum") else ""), str(dtm.get("refDatum") or ""))


NUM = (int, float)
NONE: Mapping[str, Any] = MappingProxyType({})  # an absent sentence's fields


def num(v: Any) -> float | None:
    return float(v) if type(v) in NUM else None


def first(*vals: Any) -> float | None:
    for v in vals:
        n = num(v)
        if n is not None:
            return n
    return None
