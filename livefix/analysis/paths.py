"""The metric-path language: how a figure of the analysis snapshot is named by a dotted path.

A path is dotted keys into the snapshot dict. A segment may carry a selector: `name[3]` (list
index), `name[key OP value]` keeps the list entries whose `key` compares true (OP one of <= < >= >
== !=; value a number or text), e.g. "signal.by_elevation[from>=30].mean"; later segments map over
the list. "derived.*" holds figures that are simple functions of the snapshot (see DERIVED).

It lives in analysis because the analysis owns the snapshot's shape; profiles (check), reports and
the metrics exporter all read figures through `figure()`, so a path means the same everywhere.
"""

from __future__ import annotations

import math
import operator
import re
import statistics
from collections.abc import Callable
from typing import Any

OPS: dict[str, Callable[[Any, Any], bool]] = {
    "<=": operator.le, "<": operator.lt, ">=": operator.ge, ">": operator.gt, "==": operator.eq,
}
_FILTER_OPS: dict[str, Callable[[Any, Any], bool]] = {**OPS, "!=": operator.ne}
REDUCERS: dict[str, Callable[[list[float]], float]] = {
    "min": min, "max": max, "mean": statistics.fmean, "sum": math.fsum,
    "count": lambda v: float(len(v)), "first": lambda v: v[0], "last": lambda v: v[-1],
}
_SEGMENT = re.compile(r"([A-Za-z_][A-Za-z0-9_]*)(?:\[([^\]]*)\])?(?:\.|$)")
_FILTER = re.compile(r"^\s*([A-Za-z_][A-Za-z0-9_]*)\s*(<=|>=|==|!=|<|>)\s*(.+?)\s*$")


def valid_path(path: str) -> bool:
    """True when `path` is a well-formed dotted path with optional selectors."""
    pos = 0
    for m in _SEGMENT.finditer(path):
        if m.start() != pos:
            return False
        pos = m.end()
    return pos == len(path) and not path.endswith(".")


class Missing(Exception):
    """No figure at that path (or the path goes through something that is not a list)."""


def derived(analysis: dict[str, Any]) -> dict[str, Any]:
    """Figures the profiles need that are simple functions of the snapshot."""
    out: dict[str, Any] = {}
    fix = analysis.get("fix") or {}
    avail = fix.get("availability")
    if isinstance(avail, dict) and avail:
        out["fix_share"] = math.fsum(v for k, v in avail.items() if k != "none" and is_num(v))
        for key, ttff_key, wanted in _AFTER_FIRST:
            # on time, from the fix statistics (which also count a session that began with a fix,
            # whose TTFF is not observed); else rebuilt from the first start's TTFF
            after = fix[key] if is_num(fix.get(key)) else _share_after(fix, avail, ttff_key, wanted)
            if after is not None:
                out[key] = after
    stream = analysis.get("stream") or {}
    if is_num(stream.get("lines")) and is_num(stream.get("bad_checksum")):
        out["checksum_error_share"] = stream["bad_checksum"] / max(stream["lines"], 1)
    drift = (analysis.get("position") or {}).get("drift_mm_per_h") or {}
    if is_num(drift.get("e")) and is_num(drift.get("n")):
        out["drift_h_mm_per_h"] = math.hypot(drift["e"], drift["n"])
    return out


_AFTER_FIRST: tuple[tuple[str, str, Callable[[str], bool]], ...] = (
    ("fix_share_after_first_fix", "ttff_s", lambda k: k != "none"),
    ("rtk_fixed_share_after_first", "ttff_rtk_fixed_s", lambda k: k == "rtk_fixed"))


def _share_after(fix: dict[str, Any], avail: dict[str, Any], ttff_key: str, wanted: Callable[[str], bool]) -> float | None:
    """Share of epochs of the wanted fix types once the first such fix came (the acquisition at the
    start is TTFF's business, not availability's). Epoch counts are rebuilt from shares."""
    starts = fix.get("starts") or []
    ttff = (starts[0] if starts else fix).get(ttff_key)
    total, interval = fix.get("epochs"), fix.get("interval_s")
    if not (is_num(ttff) and is_num(total) and is_num(interval)) or interval <= 0 or total <= 0:
        return None
    before = min(round(ttff / interval), total)
    good = round(total * math.fsum(v for k, v in avail.items() if wanted(k) and is_num(v)))
    rest = total - before
    return None if rest <= 0 else min(1.0, good / rest)


DERIVED = ("fix_share", "fix_share_after_first_fix", "rtk_fixed_share_after_first", "checksum_error_share",
           "drift_h_mm_per_h")


def is_num(v: Any) -> bool:
    return isinstance(v, int | float) and not isinstance(v, bool) and math.isfinite(v)


def _scalar(text: str) -> Any:
    try:
        return float(text)
    except ValueError:
        return text.strip("'\"")


def resolve(analysis: dict[str, Any], path: str) -> Any:
    """The value at a dotted path (with selectors); raises Missing when absent."""
    value: Any = {**analysis, "derived": derived(analysis)}
    many = False
    for m in _SEGMENT.finditer(path):
        key, sel = m.group(1), m.group(2)
        if many:
            value = [v[key] for v in value if isinstance(v, dict) and key in v]
        elif isinstance(value, dict) and key in value:
            value = value[key]
        else:
            raise Missing(key)
        if sel is None:
            continue
        if not isinstance(value, list):
            raise Missing(f"{key} is not a list")
        fm = _FILTER.match(sel)
        if fm:
            fkey, fop, fval = fm.group(1), _FILTER_OPS[fm.group(2)], _scalar(fm.group(3))
            value = [v for v in value if isinstance(v, dict) and _cmp(fop, v.get(fkey), fval)]
            many = True
        else:
            try:
                value = value[int(sel)]
            except (ValueError, IndexError) as exc:
                raise Missing(f"{key}[{sel}]") from exc
    if value is None:
        raise Missing(path)
    return value


def _cmp(op: Callable[[Any, Any], bool], a: Any, b: Any) -> bool:
    try:
        return bool(op(a, b)) if a is not None else False
    except TypeError:
        return bool(op(str(a), str(b)))


def figure(analysis: dict[str, Any], path: str, reduce: str | None = None) -> tuple[float | None, str]:
    """(measured value, note); None with the reason when there is nothing to compare."""
    try:
        value = resolve(analysis, path)
    except Missing:
        why = (analysis.get("fix") or {}).get("ttff_note") if path.startswith("fix.ttff") else None
        return None, f"not measured ({why})" if isinstance(why, str) else "not measured"
    if isinstance(value, list | tuple):
        values = [float(v) for v in value if is_num(v)] if reduce not in (None, "count") else list(value)
        if not values and reduce not in (None, "count"):
            return None, "not measured (no entries)"
        return float(REDUCERS[reduce or "count"](values)), ""
    if isinstance(value, bool):
        return float(value), ""
    if not is_num(value):
        return None, f"not a number ({type(value).__name__})"
    return float(value), ""


# Units a threshold may state (its figure's unit; shown beside the limit in reports).
UNITS = ("", "m", "mm", "s", "ms", "h", "mm/h", "m/s", "dB-Hz", "dB", "deg", "ratio", "%", "Hz", "bytes",
         "count")
_SHAPE: dict[str, frozenset[str] | None] = {}


def _shape() -> dict[str, frozenset[str] | None]:
    """Top-level snapshot sections and, for dict sections, their keys: read from an empty Analyzer,
    so the list can never drift from what the analysis publishes."""
    if not _SHAPE:
        from livefix.analysis.engine import Analyzer

        snap = Analyzer().snapshot(None)
        _SHAPE.update({k: frozenset(v) if isinstance(v, dict) else None for k, v in snap.items()})
        _SHAPE["derived"] = frozenset(DERIVED)
    return _SHAPE


def unknown_metric(path: str) -> str | None:
    """None when the first two segments of `path` name a published figure; else a one-line reason
    that lists the valid names at the level that failed."""
    names = [m.group(1) for m in _SEGMENT.finditer(path)][:2]
    shape = _shape()
    if not names or names[0] not in shape:
        return f"unknown metric {path!r}: it must start with one of {', '.join(sorted(shape))}"
    keys = shape[names[0]]
    if len(names) > 1 and keys is not None and names[1] not in keys:
        return (f"unknown metric {path!r}: {names[0]}.* holds {', '.join(sorted(keys))}")
    return None
