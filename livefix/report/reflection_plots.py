"""Report figures of the reflection section (analysis key `reflection`): the periodogram and the arc map.

Why: the reflector height is the peak of a Lomb–Scargle periodogram of the detrended C/N0 against
sin(elevation), H = f·λ/2 (the GNSS-IR software paper, GPS Solutions 22:80 (2018)); showing the
spectra lets the reader judge how clear that peak is. The map shows where around the antenna the
accepted arcs were, so a roof edge or a wall sector can be told from an all-round ground plane.

Drawn from the snapshot dict alone, in the look of livefix.report.plot_style. `*_fig` build a
matplotlib figure (ValueError without data) for any output format; `*_svg` return inline SVG text,
or a one-line note (text that does not start with "<svg") when there is nothing to draw.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

from livefix.report.plot_style import BLACK, BLUE, GREY, VERMILION, plt, render
from livefix.report.plot_style import num as _num


def _floats(vals: Any) -> list[float]:
    return [float(v) if _num(v) else math.nan for v in vals or []]


def _svg_or_note(fn: Callable[[dict[str, Any] | None], Any], refl: dict[str, Any] | None) -> str:
    try:
        fig = fn(refl)
    except ValueError as exc:
        return str(exc)
    return str(render(fig, "svg"))


def periodogram_svg(refl: dict[str, Any] | None) -> str:
    """The periodogram figure as inline SVG, or a one-line note."""
    return _svg_or_note(periodogram_fig, refl)


def arc_map_svg(refl: dict[str, Any] | None) -> str:
    """The arc map as inline SVG, or a one-line note."""
    return _svg_or_note(arc_map_fig, refl)


def periodogram_fig(refl: dict[str, Any] | None) -> Any:
    """Mean amplitude spectrum of the accepted arcs (and the newest arcs' own) against height."""
    pg = (refl or {}).get("periodogram") or {}
    mean = _floats(pg.get("mean"))
    h0, step = pg.get("h_from"), pg.get("h_step")
    if not mean or not _num(h0) or not _num(step) or step <= 0:
        raise ValueError("no periodogram: no accepted reflection arc yet")
    hs = [h0 + i * step for i in range(len(mean))]
    fig, ax = plt().subplots(figsize=(6.5, 3.5))
    for c in pg.get("curves") or []:
        amp = _floats(c.get("amp"))[: len(hs)]
        if amp:
            ax.plot(hs[: len(amp)], amp, lw=0.8, alpha=0.6,
                    label=f"{c.get('sat', '?')} az {c.get('az', 0):.0f}°: {c.get('height_m', 0):.2f} m")
    n = pg.get("arcs") or 0
    ax.plot(hs, mean, color=BLACK, lw=1.8, label=f"mean of {n} accepted arc{'' if n == 1 else 's'}")
    thr = pg.get("min_amplitude")
    if _num(thr):
        ax.axhline(thr, color=VERMILION, ls="--", lw=1, label=f"acceptance threshold {thr:g}")
    k = max(range(len(mean)), key=lambda i: mean[i] if math.isfinite(mean[i]) else -1.0)
    h = (refl or {}).get("height_m")
    peak_h = h if _num(h) else hs[k]
    ax.axvline(peak_h, color=BLUE, ls=":", lw=1.2)
    ax.annotate(f"peak → H = {peak_h:.2f} m", (hs[k], mean[k]), xytext=(8, -4), textcoords="offset points",
                color=BLUE, fontsize=9)
    ax.set_xlabel("reflector height H = f·λ/2 (m)")
    ax.set_ylabel("amplitude (reflected/direct)")
    ax.set_xlim(hs[0], hs[-1])
    ax.set_ylim(bottom=0)
    ax.set_title("Lomb–Scargle periodogram of detrended C/N0 against sin(elevation)")
    ax.grid(True, alpha=0.3)
    ax.legend(fontsize=7, loc="upper right")
    return fig


def arc_map_fig(refl: dict[str, Any] | None) -> Any:
    """Polar map (north up, clockwise) of the newest accepted arcs, coloured by their height, with
    the summary sectors outlined and labelled by median height and arc count."""
    refl = refl or {}
    arcs = [a for a in refl.get("recent") or [] if a.get("accepted") and _num(a.get("az")) and _num(a.get("height_m"))]
    if not arcs:
        raise ValueError("no arc map: no accepted reflection arc yet")
    cfg = refl.get("config") or {}
    lo = float(cfg["el_min_deg"]) if _num(cfg.get("el_min_deg")) else 5.0
    hi = float(cfg["el_max_deg"]) if _num(cfg.get("el_max_deg")) else 25.0
    pyplot = plt()
    import matplotlib as mpl

    fig = pyplot.figure(figsize=(5.5, 5.5))
    ax = fig.add_subplot(projection="polar")
    ax.set_theta_zero_location("N")
    ax.set_theta_direction(-1)
    heights = [float(a["height_m"]) for a in arcs]
    norm = mpl.colors.Normalize(vmin=min(heights) - 0.05, vmax=max(heights) + 0.05)
    cmap = mpl.colormaps["viridis"]
    for a in arcs:  # each arc as a radial stroke through the elevation window at its mean azimuth
        th = math.radians(a["az"])
        ax.plot([th, th], [90 - lo, 90 - hi], lw=3, color=cmap(norm(float(a["height_m"]))), solid_capstyle="round")
    for i, s in enumerate(refl.get("sectors") or []):
        f, t = s.get("az_from"), s.get("az_to")
        if not (_num(f) and _num(t)):
            continue
        span = (t - f) % 360 or 360
        mid = math.radians(f + span / 2)
        ax.bar(mid, hi + 3, width=math.radians(span), bottom=90 - hi - 3, color=GREY, alpha=0.15,
               edgecolor=GREY, ls="--", lw=0.8)
        k = s.get("arcs", 0)
        tent = "?" if s.get("tentative") else ""  # fewer arcs than the configured minimum
        # labels of neighbouring sectors at two radii, so they never overlap
        ax.text(mid, 90 - hi - 18 - 16 * (i % 2), f"{s.get('height_m', 0):.2f} m\n{k} arc{'' if k == 1 else 's'}{tent}",
                ha="center", va="center", fontsize=7)
    ax.set_rlim(0, 90)
    ax.set_rticks([80, 60, 40, 20, 0], labels=["10°", "30°", "50°", "70°", "90°"])
    ax.set_xticks([math.radians(d) for d in range(0, 360, 45)], labels=["N", "NE", "E", "SE", "S", "SW", "W", "NW"])
    need = cfg.get("min_arcs_sector")
    ax.set_title(f"Accepted arcs ({len(arcs)} newest) at {lo:g}–{hi:g}° elevation\n"
                 f"shaded sectors: median H and arcs" + (f" (? fewer than {need})" if _num(need) else ""))
    fig.colorbar(mpl.cm.ScalarMappable(norm=norm, cmap=cmap), ax=ax, shrink=0.7, pad=0.12,
                 label="reflector height H (m)")
    return fig
