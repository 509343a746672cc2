"""Report plots as inline SVG text, made with matplotlib (imported lazily, Agg backend).

Each plot is drawn from the snapshot dict alone; a plot whose data is missing or odd is replaced by
a one-line note, never an exception, so a damaged recording still gives a report.
"""

from __future__ import annotations

import datetime as _dt
import io
import math
import re
from collections.abc import Callable
from typing import Any

_XML_HEAD = re.compile(r"^.*?(<svg\b)", re.S)


def _plt() -> Any:
    import matplotlib

    matplotlib.use("Agg", force=True)
    import matplotlib.pyplot as plt

    matplotlib.rcParams.update({"svg.fonttype": "none", "svg.hashsalt": "livefix", "font.size": 9,
                                "figure.dpi": 96})
    return plt


def _svg(fig: Any) -> str:
    plt = _plt()
    buf = io.StringIO()
    fig.savefig(buf, format="svg", bbox_inches="tight")
    plt.close(fig)
    return _XML_HEAD.sub(r"\1", buf.getvalue(), count=1)


def _num(v: Any) -> bool:
    return isinstance(v, int | float) and not isinstance(v, bool) and math.isfinite(v)


def scatter(a: dict[str, Any]) -> str:
    pos = a.get("position") or {}
    s = pos.get("samples") or {}
    e, n = s.get("e") or [], s.get("n") or []
    pts = [(x, y) for x, y in zip(e, n, strict=False) if _num(x) and _num(y)]
    if not pts:
        raise ValueError("no position samples")
    plt = _plt()
    fig, ax = plt.subplots(figsize=(5, 5))
    ax.scatter([p[0] for p in pts], [p[1] for p in pts], s=4, alpha=0.5, color="#3465a4", label="epochs")
    # circles about the centroid of the drawn epochs: CEP describes the scatter about the mean
    ce, cn = sum(p[0] for p in pts) / len(pts), sum(p[1] for p in pts) / len(pts)
    for key, style, label in (("cep50_m", "-", "CEP50"), ("cep95_m", "--", "CEP95")):
        r = pos.get(key)
        if _num(r):
            ax.add_patch(plt.Circle((ce, cn), r, fill=False, ls=style, color="#cc0000", lw=1.2))
            ax.plot([], [], ls=style, color="#cc0000", label=f"{label} {r:.3f} m")
    ax.set_aspect("equal", adjustable="datalim")
    ax.set_xlabel("east (m)")
    ax.set_ylabel("north (m)")
    ref = pos.get("ref") or {}
    ax.set_title(f"Horizontal scatter about the {'surveyed point' if ref.get('source') == 'user' else 'mean'}")
    ax.grid(True, alpha=0.3)
    ax.legend(loc="upper right", fontsize=8)
    return _svg(fig)


def _grid_rows(grid: dict[str, Any], key: str) -> tuple[list[list[float]], float, float]:
    rows = grid.get(key) or []
    az_step, el_step = float(grid.get("az_step") or 0), float(grid.get("el_step") or 0)
    if not rows or az_step <= 0 or el_step <= 0:
        raise ValueError("no sky grid")
    if len(rows) == round(90 / el_step) and len(rows) != round(360 / az_step):  # elevation-major
        rows = [list(col) for col in zip(*rows, strict=False)]
    return [[float(v) if _num(v) else 0.0 for v in r] for r in rows], az_step, el_step


def sky_map(a: dict[str, Any]) -> str:
    import numpy as np

    sky = a.get("sky") or {}
    grid = sky.get("grid") or {}
    tracked, az_step, el_step = _grid_rows(grid, "tracked")
    try:
        untracked, _, _ = _grid_rows(grid, "untracked")
    except ValueError:
        untracked = [[0.0] * len(r) for r in tracked]
    plt = _plt()
    fig = plt.figure(figsize=(5, 5))
    ax = fig.add_subplot(projection="polar")
    ax.set_theta_zero_location("N")
    ax.set_theta_direction(-1)
    n_az, n_el = len(tracked), max(len(r) for r in tracked)
    share = np.zeros((n_az, n_el))
    for i in range(n_az):
        for j in range(len(tracked[i])):
            t = tracked[i][j]
            u = untracked[i][j] if i < len(untracked) and j < len(untracked[i]) else 0.0
            share[i, j] = t / (t + u) if t + u > 0 else np.nan
    theta = np.radians(np.arange(n_az + 1) * az_step)
    radius = 90.0 - np.arange(n_el + 1) * el_step
    mesh = ax.pcolormesh(theta, radius, share.T, cmap="RdYlGn", vmin=0, vmax=1, shading="flat")
    for sec in sky.get("obstructed") or []:
        f, t, below = sec.get("az_from"), sec.get("az_to"), sec.get("below_el")
        if _num(f) and _num(t) and _num(below):
            span = (t - f) % 360 or 360
            ax.bar(math.radians(f + span / 2), below, width=math.radians(span), bottom=90 - below,
                   fill=False, edgecolor="black", hatch="//", lw=0.8)
    ax.set_rlim(0, 90)
    ax.set_rticks([80, 60, 40, 20, 0], labels=["10", "30", "50", "70", "90"])
    ax.set_title("Sky view: share of passes tracked (hatched: obstructed)")
    fig.colorbar(mesh, ax=ax, shrink=0.7, label="tracked share")
    return _svg(fig)


def cn0_elevation(a: dict[str, Any]) -> str:
    sig = a.get("signal") or {}
    bands = [b for b in sig.get("by_elevation") or [] if _num(b.get("from")) and _num(b.get("to"))
             and _num(b.get("mean"))]
    if not bands:
        raise ValueError("no C/N0 by elevation")
    plt = _plt()
    fig, ax = plt.subplots(figsize=(6, 3.5))
    ax.bar([(b["from"] + b["to"]) / 2 for b in bands], [b["mean"] for b in bands],
           width=[(b["to"] - b["from"]) * 0.9 for b in bands], color="#73d216", label="mean C/N0 per band")
    weak = [w for w in sig.get("weak") or [] if _num(w.get("elev")) and _num(w.get("cn0"))]
    if weak:
        ax.scatter([w["elev"] for w in weak], [w["cn0"] for w in weak], color="#cc0000", s=12, zorder=3,
                   label="weak signals")
    ax.set_xlabel("elevation (deg)")
    ax.set_ylabel("C/N0 (dB-Hz)")
    ax.set_xlim(0, 90)
    ax.set_title("C/N0 against elevation")
    ax.grid(True, alpha=0.3)
    ax.legend(fontsize=8)
    return _svg(fig)


def _times(ts: list[Any]) -> list[Any]:
    out: list[Any] = []
    for t in ts:
        if isinstance(t, str):
            out.append(_dt.datetime.fromisoformat(t.replace("Z", "+00:00")))
        else:
            out.append(float(t) if _num(t) else math.nan)
    return out


def trend(a: dict[str, Any]) -> str:
    tr = a.get("trend") or {}
    t = _times(list(tr.get("t") or []))
    if not t:
        raise ValueError("no trend data")
    plt = _plt()
    fig, ax = plt.subplots(figsize=(7, 3.5))
    err = [v if _num(v) else math.nan for v in (tr.get("h_err_m") or [])][: len(t)]
    ax.plot(t[: len(err)], err, color="#3465a4", lw=1, label="horizontal error (m)")
    ax.set_ylabel("horizontal error (m)")
    ax2 = ax.twinx()
    sats = [v if _num(v) else math.nan for v in (tr.get("sats_used") or [])][: len(t)]
    ax2.step(t[: len(sats)], sats, color="#f57900", lw=1, where="post", label="satellites used")
    ax2.set_ylabel("satellites used")
    ax.set_xlabel("time (UTC)" if isinstance(t[0], _dt.datetime) else "time (s)")
    ax.set_title("Error and satellites over time")
    ax.grid(True, alpha=0.3)
    fig.autofmt_xdate()
    return _svg(fig)


def allan(a: dict[str, Any]) -> str:
    al = (a.get("position") or {}).get("allan") or {}
    tau = [float(x) for x in al.get("tau_s") or [] if _num(x)]
    if len(tau) < 2:
        raise ValueError("too few Allan deviation points")
    plt = _plt()
    fig, ax = plt.subplots(figsize=(6, 3.5))
    for key, colour in (("e", "#3465a4"), ("n", "#73d216"), ("u", "#cc0000")):
        ys = al.get(key) or []
        pts = [(x, y) for x, y in zip(tau, ys, strict=False) if _num(y) and y > 0]
        if pts:
            ax.loglog([p[0] for p in pts], [p[1] for p in pts], marker="o", ms=3, color=colour,
                      label={"e": "east", "n": "north", "u": "up"}[key])
    ax.set_xlabel("averaging time tau (s)")
    ax.set_ylabel("Allan deviation (m)")
    ax.set_title("Position stability (overlapping Allan deviation)")
    ax.grid(True, which="both", alpha=0.3)
    ax.legend(fontsize=8)
    return _svg(fig)


PLOTS: tuple[tuple[str, str, Callable[[dict[str, Any]], str]], ...] = (
    ("scatter", "Horizontal scatter with CEP circles", scatter),
    ("sky", "Sky obstruction map", sky_map),
    ("cn0", "C/N0 against elevation", cn0_elevation),
    ("trend", "Error and satellites over time", trend),
    ("allan", "Allan deviation", allan),
)


def make_plots(analysis: dict[str, Any]) -> list[dict[str, str]]:
    """[{id, title, svg}] or {id, title, note} when a plot cannot be drawn."""
    out = []
    for pid, title, fn in PLOTS:
        try:
            out.append({"id": pid, "title": title, "svg": fn(analysis)})
        except Exception as exc:  # noqa: BLE001 - a plot never sinks the report
            out.append({"id": pid, "title": title, "note": f"not drawn: {exc}"})
    return out
