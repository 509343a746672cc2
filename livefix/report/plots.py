"""Report plots, made with matplotlib (imported lazily, Agg backend), as inline SVG or PNG.

Each plot is drawn from the snapshot dict alone; a plot whose data is missing or odd is replaced by
a one-line note, never an exception, so a damaged recording still gives a report. The look (one
colour and marker per constellation and per fix type, UTC clock-time axes) lives in plot_style;
the sky plot in plots_sky, the plots against time in plots_time.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

from livefix.report.plot_style import GREY, VERMILION, fix_style, num, plt, render, system_style
from livefix.report.plots_sky import sky_plot
from livefix.report.plots_time import position_time, signal_time


def _pts(s: dict[str, Any] | None) -> list[tuple[float, float]]:
    s = s or {}
    return [(x, y) for x, y in zip(s.get("e") or [], s.get("n") or [], strict=False) if num(x) and num(y)]


def scatter(a: dict[str, Any]) -> Any:
    """Horizontal scatter, one colour per fix type, with the headline fix type's CEP circles; when
    the other fix types spread ten times wider, a second panel zooms on the headline type."""
    pos = a.get("position") or {}
    if pos.get("not_measured"):  # e.g. "receiver moving": a static scatter would mislead
        raise ValueError(str(pos["not_measured"]))
    head = str(pos.get("fix") or "")
    series = [(head, _pts(pos.get("samples")))]
    series += [(str(k), _pts(v)) for k, v in (pos.get("samples_by_fix") or {}).items()]
    series = [(k, p) for k, p in series if p]
    if not series:
        raise ValueError("no position samples")
    head_pts = series[0][1] if series[0][0] == head else []
    samples = pos.get("samples") or {}
    ce, cn = samples.get("mean_e"), samples.get("mean_n")
    if not (num(ce) and num(cn)) and head_pts:  # circles about the scatter centre: CEP is about the mean
        ce, cn = sum(p[0] for p in head_pts) / len(head_pts), sum(p[1] for p in head_pts) / len(head_pts)
    cep95 = pos.get("cep95_m")
    spread = max(max(abs(x), abs(y)) for _, pts in series for x, y in pts)
    zoom = bool(head_pts) and len(series) > 1 and num(cep95) and spread > 30 * cep95
    pyplot = plt()
    if zoom:
        fig, (ax, axz) = pyplot.subplots(1, 2, figsize=(9.0, 4.4))
    else:
        fig, ax = pyplot.subplots(figsize=(5.6, 5.0))
        axz = None
    by_fix = pos.get("by_fix") or {}
    ref_label = "surveyed point" if (pos.get("ref") or {}).get("source") == "user" else "reference"
    for target, part in ((ax, series), (axz, series[:1])):
        if target is None:
            continue
        for name, pts in sorted(part, key=lambda kp: kp[0] == head):  # the headline drawn last, on top
            st = fix_style(name)
            share = (by_fix.get(name) or {}).get("share")
            label = st.label + (f" ({share:.0%} of fixed epochs)" if num(share) else "")
            target.scatter([p[0] for p in pts], [p[1] for p in pts], s=6, marker=st.marker, alpha=0.5, lw=0,
                           color=st.colour, label=label if target is ax else None)
        target.scatter([0], [0], marker="+", s=80, color=VERMILION, lw=1.5, zorder=4,
                       label=ref_label if target is ax else None)
        target.set_aspect("equal", adjustable="datalim")
        target.set_xlabel("east (m)")
        target.set_ylabel("north (m)")
        target.grid(True, alpha=0.3)
    circles = axz if axz is not None else ax
    for key, style, label in (("cep50_m", "-", "CEP50"), ("cep95_m", "--", "CEP95")):
        r = pos.get(key)
        if num(r) and num(ce) and num(cn):
            circles.add_patch(pyplot.Circle((ce, cn), r, fill=False, ls=style, color="black", lw=1.2))
            ax.plot([], [], ls=style, color="black", label=f"{label} {fix_style(head).label}: {_m(r)}")
    ax.set_title("Horizontal scatter by fix type")
    if axz is not None:
        half = 3 * float(cep95)
        axz.set_xlim(ce - half, ce + half)
        axz.set_ylim(cn - half, cn + half)
        axz.set_aspect("equal", adjustable="box")
        axz.set_title(f"{fix_style(head).label} only, zoomed (±{_m(half)})")
        ax.legend(loc="upper center", bbox_to_anchor=(1.1, -0.14), ncols=3, frameon=False)
    else:
        ax.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0), frameon=False)
    return fig


def _m(r: float) -> str:
    return f"{r * 100:.1f} cm" if r < 1 else f"{r:.2f} m"


def cn0_elevation(a: dict[str, Any]) -> Any:
    """C/N0 against elevation: samples by constellation, band means, and the session's expected
    curve a + b·sin(el) (livefix.analysis.signal)."""
    sig = a.get("signal") or {}
    bands = [b for b in sig.get("by_elevation") or [] if num(b.get("from")) and num(b.get("to"))
             and num(b.get("mean"))]
    tracks = ((a.get("trend") or {}).get("sky_tracks") or {}).get("sats") or []
    if not bands and not tracks:
        raise ValueError("no C/N0 by elevation")
    pyplot = plt()
    fig, ax = pyplot.subplots(figsize=(7.0, 3.8))
    by_sys: dict[str, tuple[list[float], list[float]]] = {}
    for sat in tracks:
        xs, ys = by_sys.setdefault(str(sat.get("system") or "?"), ([], []))
        for e, c in zip(sat.get("el") or [], sat.get("cn0") or [], strict=False):
            if num(e) and num(c):
                xs.append(e)
                ys.append(c)
    for letter in sorted(by_sys, key=lambda s: ("GRECJIS".find(s) % 8, s)):
        xs, ys = by_sys[letter]
        if xs:
            st = system_style(letter)
            ax.scatter(xs, ys, s=6, marker=st.marker, color=st.colour, alpha=0.45, lw=0, label=st.label)
    if bands:
        ax.hlines([b["mean"] for b in bands], [b["from"] for b in bands], [b["to"] for b in bands],
                  color="black", lw=2.2, label="mean per elevation band")
    cv = sig.get("curve") or {}
    if num(cv.get("a")) and num(cv.get("b")):
        el = list(range(0, 91, 2))
        ax.plot(el, [cv["a"] + cv["b"] * math.sin(math.radians(e)) for e in el], color=GREY, ls="--", lw=1.4,
                label=f"expected: {cv['a']:.1f} + {cv['b']:.1f}·sin(el) dB-Hz")
    weak = [w for w in sig.get("weak") or [] if num(w.get("elev")) and num(w.get("cn0"))]
    if weak:
        ax.scatter([w["elev"] for w in weak], [w["cn0"] for w in weak], facecolors="none", edgecolors=VERMILION,
                   s=40, lw=1.2, zorder=4, label="weak now (below expected)")
    ax.set_xlabel("elevation (°)")
    ax.set_ylabel("C/N0 (dB-Hz)")
    ax.set_xlim(0, 90)
    ax.set_title("C/N0 against elevation")
    ax.grid(True, alpha=0.3)
    ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), frameon=False, markerscale=2)
    return fig


def allan(a: dict[str, Any]) -> Any:
    al = (a.get("position") or {}).get("allan") or {}
    tau = [float(x) for x in al.get("tau_s") or [] if num(x)]
    if len(tau) < 2:
        raise ValueError("too few Allan deviation points")
    pyplot = plt()
    fig, ax = pyplot.subplots(figsize=(6, 3.5))
    for key, label, ls in (("e", "east", "-"), ("n", "north", "--"), ("u", "up", "-.")):
        ys = al.get(key) or []
        pts = [(x, y) for x, y in zip(tau, ys, strict=False) if num(y) and y > 0]
        if pts:
            ax.loglog([p[0] for p in pts], [p[1] for p in pts], marker="o", ms=3, ls=ls, color="black",
                      label=label)
    ax.set_xlabel("averaging time tau (s)")
    ax.set_ylabel("Allan deviation (m)")
    ax.set_title("Position stability (overlapping Allan deviation)")
    ax.grid(True, which="both", alpha=0.3)
    ax.legend()
    return fig


PLOTS: tuple[tuple[str, str, Callable[[dict[str, Any]], Any]], ...] = (
    ("sky", "Sky plot: satellite paths by constellation and obstructions", sky_plot),
    ("scatter", "Horizontal scatter by fix type with CEP circles", scatter),
    ("position-time", "Position offsets and height against time, with outages and jumps", position_time),
    ("cn0", "C/N0 against elevation with the expected curve", cn0_elevation),
    ("signal-time", "Satellites used and C/N0 against time", signal_time),
    ("allan", "Allan deviation", allan),
)


def make_plots(analysis: dict[str, Any], fmt: str = "svg") -> list[dict[str, Any]]:
    """[{id, title, svg|png}] or {id, title, note} when a plot cannot be drawn."""
    out: list[dict[str, Any]] = []
    for pid, title, fn in PLOTS:
        try:
            out.append({"id": pid, "title": title, fmt: render(fn(analysis), fmt)})
        except Exception as exc:  # noqa: BLE001 - a plot never sinks the report
            plt().close("all")
            out.append({"id": pid, "title": title, "note": f"not drawn: {exc}"})
    return out
