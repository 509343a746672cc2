"""Plots against UTC clock time: position offsets and height, satellites and C/N0.

Why clock time: the reader matches a dip to what happened on site ("the crane moved at 14:20"),
which seconds since start cannot do. The trend's times are seconds after its first epoch `t0`
(receiver UTC); outages, stalls and jumps are drawn from the analysis' own lists, so the marks
agree with the report's tables.
"""

from __future__ import annotations

import datetime as _dt
import math
from typing import Any

from livefix.report.plot_style import (
    BLUE,
    GREEN,
    JUMP_COLOUR,
    ORANGE,
    OUTAGE_COLOUR,
    STALL_COLOUR,
    VERMILION,
    num,
    parse_iso,
    plt,
    utc_axis,
)


def trend_times(tr: dict[str, Any]) -> list[Any]:
    """UTC datetimes of the trend points; seconds after the first epoch when the stream gave no
    time of day at all (a log without times still gets its plots, on a plainly labelled axis)."""
    t0 = parse_iso(tr.get("t0"))
    ts = tr.get("t") or []
    if not ts:
        raise ValueError("no trend data")
    if t0 is None:
        return [float(t) if num(t) else math.nan for t in ts]
    return [t0 + _dt.timedelta(seconds=float(t)) if num(t) else t0 for t in ts]


def time_axis(ax: Any, times: list[Any]) -> None:
    if isinstance(times[0], _dt.datetime):
        utc_axis(ax, times[0], times[-1])
    else:
        ax.set_xlabel("time since the first epoch (s; the receiver gave no time of day)")


def _spans(items: Any, key_start: str = "start") -> list[tuple[_dt.datetime, _dt.datetime]]:
    out = []
    for it in items or []:
        t = parse_iso(it.get(key_start)) if isinstance(it, dict) else None
        d = it.get("duration_s") if isinstance(it, dict) else None
        if t is not None and num(d):
            out.append((t, t + _dt.timedelta(seconds=max(float(d), 0.5))))
    return out


def mark_events(axes: list[Any], a: dict[str, Any], utc: bool = True) -> list[tuple[Any, str]]:
    """Shade outages and stalls, mark position jumps, on every axis; legend handles for them
    (none on an axis of seconds: the marks are placed by UTC time)."""
    pyplot = plt()
    if not utc:
        return []
    fix, stream = a.get("fix") or {}, a.get("stream") or {}
    outages, stalls = _spans(fix.get("outages")), _spans(stream.get("stalls"))
    jump_spans = _spans(((a.get("position") or {}).get("jumps") or {}).get("items"))
    jumps = [t for t in (parse_iso(j.get("time")) for j in fix.get("jumps") or [] if isinstance(j, dict)) if t]
    for ax in axes:
        for f, t in outages:
            ax.axvspan(f, t, color=OUTAGE_COLOUR, alpha=0.18, lw=0)
        for f, t in stalls:
            ax.axvspan(f, t, color=STALL_COLOUR, alpha=0.3, lw=0, hatch="..")
        for f, t in jump_spans:
            ax.axvspan(f, t, color=JUMP_COLOUR, alpha=0.08, lw=0)
        for t in jumps:
            ax.axvline(t, color=JUMP_COLOUR, ls=":", lw=1)
    handles: list[tuple[Any, str]] = []
    from matplotlib.patches import Patch

    if outages:
        handles.append((Patch(color=OUTAGE_COLOUR, alpha=0.18), f"no fix ({len(outages)})"))
    if stalls:
        handles.append((Patch(color=STALL_COLOUR, alpha=0.3, hatch=".."), f"no data ({len(stalls)})"))
    if jumps or jump_spans:
        handles.append((pyplot.Line2D([], [], color=JUMP_COLOUR, ls=":"), f"position jump ({len(jumps)})"))
    if jump_spans:
        handles.append((Patch(color=JUMP_COLOUR, alpha=0.08), "jumped away: left out of the scatter"))
    return handles


def position_time(a: dict[str, Any]) -> Any:
    tr = a.get("trend") or {}
    times = trend_times(tr)
    lat, lon, h = tr.get("lat") or [], tr.get("lon") or [], tr.get("h") or []
    # every trend point, NaN where it had no fix: the lines break across outages instead of bridging them
    pts = list(zip(times, lat, lon, h + [None] * (len(lat) - len(h)), strict=False))
    fixed = [p for p in pts if num(p[1]) and num(p[2])]
    if not fixed:
        raise ValueError("no fixed positions in the trend")
    from livefix.geodesy import LocalFrame

    ref = (a.get("position") or {}).get("ref") or {}
    if num(ref.get("lat")) and num(ref.get("lon")):
        r_lat, r_lon, r_h = ref["lat"], ref["lon"], ref.get("h") if num(ref.get("h")) else 0.0
        about = "the surveyed point" if ref.get("source") == "user" else "the session reference"
    else:
        r_lat, r_lon, r_h = fixed[0][1], fixed[0][2], fixed[0][3] if num(fixed[0][3]) else 0.0
        about = "the first fix"
    frame = LocalFrame(r_lat, r_lon, r_h)
    t, e, n, u, hs = [], [], [], [], []
    for ti, la, lo, hh in pts:
        t.append(ti)
        if not (num(la) and num(lo)):
            for col in (e, n, u, hs):
                col.append(math.nan)
            continue
        ee, nn, uu = frame.enu(la, lo, hh if num(hh) else r_h)
        e.append(ee)
        n.append(nn)
        u.append(uu if num(hh) else math.nan)
        hs.append(hh if num(hh) else math.nan)
    pyplot = plt()
    fig, (ax1, ax2) = pyplot.subplots(2, 1, figsize=(7.5, 5.0), sharex=True, height_ratios=(3, 2))
    ax1.plot(t, e, color=BLUE, lw=1, label="east")
    ax1.plot(t, n, color=ORANGE, lw=1, ls="--", label="north")
    ax1.plot(t, u, color=GREEN, lw=1, ls="-.", label="up")
    ax1.set_ylabel("offset (m)")
    ax1.set_title(f"Position about {about} (mean per {_bucket(tr)})")
    ax2.plot(t, hs, color=VERMILION, lw=1, label="ellipsoidal height")
    ax2.set_ylabel("height (m)")
    ax2.ticklabel_format(axis="y", useOffset=False, style="plain")
    marks = mark_events([ax1, ax2], a, isinstance(times[0], _dt.datetime))
    for ax in (ax1, ax2):
        ax.grid(True, alpha=0.3)
    h1, l1 = ax1.get_legend_handles_labels()
    ax1.legend(h1 + [m[0] for m in marks], l1 + [m[1] for m in marks], loc="upper left",
               bbox_to_anchor=(1.01, 1.0), frameon=False)
    ax2.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), frameon=False)
    time_axis(ax2, times)
    return fig


def _bucket(tr: dict[str, Any]) -> str:
    b = tr.get("bucket_s")
    return f"{b:g} s" if num(b) else "point"


def signal_time(a: dict[str, Any]) -> Any:
    tr = a.get("trend") or {}
    times = trend_times(tr)
    sats = [v if num(v) else math.nan for v in tr.get("sats_used") or []]
    cn0 = [v if num(v) else math.nan for v in tr.get("cn0_mean") or []]
    if not any(v == v for v in sats + cn0):
        raise ValueError("no satellite counts or C/N0 in the trend")
    pyplot = plt()
    fig, ax = pyplot.subplots(figsize=(7.5, 3.2))
    ax.step(times[: len(sats)], sats, color=BLUE, lw=1, where="mid", label="satellites used")
    ax.set_ylabel("satellites used")
    ax.set_ylim(bottom=0)
    ax2 = ax.twinx()
    ax2.plot(times[: len(cn0)], cn0, color=ORANGE, lw=1, ls="--", label="mean C/N0 (dB-Hz)")
    ax2.set_ylabel("mean C/N0 (dB-Hz)")
    marks = mark_events([ax], a, isinstance(times[0], _dt.datetime))
    ax.grid(True, alpha=0.3)
    h1, l1 = ax.get_legend_handles_labels()
    h2, l2 = ax2.get_legend_handles_labels()
    ax.legend(h1 + h2 + [m[0] for m in marks], l1 + l2 + [m[1] for m in marks], loc="upper left",
              bbox_to_anchor=(1.12, 1.0), frameon=False)
    ax.set_title(f"Satellites used and mean C/N0 (mean per {_bucket(tr)})")
    time_axis(ax, times)
    return fig
