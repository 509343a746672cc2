"""Where the reflections come from: reflector height and multipath amplitude by azimuth sector.

Why: a roof plane, a parapet or wet ground below the antenna makes multipath that every sky and
C/N0 figure hides. Each satellite arc through the low elevation window (livefix.analysis.arcs)
gives one GNSS-IR estimate (livefix.analysis.reflection); accepted arcs are summed up per azimuth
sector (30° by default) as a median height, its spread and the multipath amplitude, with the first
Fresnel zone of the median height (the GNSS-IR Fresnel-zone paper, GPS Solutions 17 (2013)) so the
installer knows where on the ground the reflection happens.

Deterministic and bounded: arcs in progress are evaluated at fixed sample counts (CHECK_EVERY), never
at snapshot time, so the snapshot of a stream does not depend on when it is taken; each sector keeps
its newest KEEP_PER_SECTOR accepted arcs, refused arcs are only counted.
"""

from __future__ import annotations

from collections import Counter, deque
from dataclasses import dataclass
from typing import Any

import numpy as np

from livefix.analysis.arcs import Arc, ArcCollector, split_monotonic
from livefix.analysis.reflection import ArcFit, ReflectionConfig, estimate, fresnel_zone, wavelength
from livefix.state.epoch import Epoch

CHECK_EVERY = 300  # samples (~5 min at one a second) between estimates of an arc in progress
KEEP_PER_SECTOR = 256  # accepted arcs kept per sector for the medians (a week holds ~1000 in all)
KEEP_RECENT = 20  # accepted arcs listed in the snapshot
FRESNEL_ELEVATIONS = (5.0, 10.0, 15.0)
L1_LAMBDA = wavelength("G", "1") or 0.19029  # Fresnel zones are given for GPS L1 / Galileo E1
COMPASS = ("north", "north-east", "east", "south-east", "south", "south-west", "west", "north-west")


@dataclass(frozen=True, slots=True)
class ArcResult:
    label: str
    az: float
    rising: bool
    fit: ArcFit

    def to_json(self) -> dict[str, Any]:
        f = self.fit
        return {"sat": self.label, "az": round(self.az, 1), "rising": self.rising,
                "height_m": None if f.height_m is None else round(f.height_m, 3),
                "mp_db": round(f.mp_db, 2), "pk_noise": round(f.pk_noise, 2), "points": f.n,
                "span_deg": round(f.span_deg, 1), "accepted": f.accepted, "why": f.why}


def evaluate(arc: Arc, cfg: ReflectionConfig) -> ArcResult:
    fit = estimate(np.sin(np.radians(arc.el)), arc.cn0, arc.lam, cfg)
    return ArcResult(arc.label, arc.mean_az, arc.rising, fit)


class ReflectionStats:
    def __init__(self, cfg: ReflectionConfig | None = None) -> None:
        self.cfg = cfg or ReflectionConfig()
        self._arcs = ArcCollector(self.cfg)
        self.reset()

    def reset(self) -> None:
        self._arcs.reset()
        n = max(1, round(360.0 / self.cfg.sector_deg))
        self._sectors: list[deque[tuple[float, float]]] = [deque(maxlen=KEEP_PER_SECTOR) for _ in range(n)]
        self._recent: deque[ArcResult] = deque(maxlen=KEEP_RECENT)
        self._evaluated = 0
        self._refused: Counter[str] = Counter()
        self._provisional: dict[tuple[str, int, str], ArcResult] = {}  # arcs in progress, last check

    def _sector(self, az: float) -> int:
        return int((az % 360.0) // self.cfg.sector_deg) % len(self._sectors)

    def _on_arc(self, arc: Arc) -> None:
        res = evaluate(arc, self.cfg)
        self._evaluated += 1
        self._provisional.pop((arc.system, arc.prn, arc.signal), None)
        if not res.fit.accepted:
            self._refused[res.fit.why] += 1
            return
        self._sectors[self._sector(res.az)].append((float(res.fit.height_m or 0.0), res.fit.mp_db))
        self._recent.append(res)

    def on_epoch(self, ep: Epoch) -> None:
        if not self._arcs.on_epoch(ep):
            return
        if self._arcs.done:
            for arc in self._arcs.done:
                self._on_arc(arc)
            self._arcs.done.clear()
        tracks = self._arcs.tracks
        for key, tr in tracks.items():
            n = len(tr.t)
            if n and n % CHECK_EVERY == 0 and tr.last == ep.mono and max(tr.el) - min(tr.el) >= self.cfg.min_span_deg:
                self._check(key, tr)
        for key in [k for k in self._provisional if k not in tracks]:  # arcs closed without an estimate
            del self._provisional[key]

    def _check(self, key: tuple[str, int, str], tr: Any) -> None:
        """Estimate an arc in progress from its samples so far (kept until the arc closes)."""
        lam = wavelength(key[0], key[2])
        if lam is None:
            return
        parts = split_monotonic(np.array(tr.t), np.array(tr.el), np.array(tr.az), np.array(tr.cn0))
        t, el, az, c = parts[-1]
        inside = (el >= self.cfg.el_min_deg) & (el <= self.cfg.el_max_deg)
        if int(inside.sum()) < self.cfg.min_points:
            return
        arc = Arc(key[0], key[1], key[2], lam, t[inside], el[inside], az[inside], c[inside])
        self._provisional[key] = evaluate(arc, self.cfg)

    # -- reading ---------------------------------------------------------------------------
    def snapshot(self) -> dict[str, Any]:
        cfg = self.cfg
        per: list[list[tuple[float, float]]] = [list(s) for s in self._sectors]
        for res in self._provisional.values():
            if res.fit.accepted:
                per[self._sector(res.az)].append((float(res.fit.height_m or 0.0), res.fit.mp_db))
        sectors = []
        for i, vals in enumerate(per):
            if not vals:
                continue
            hs = np.array([v[0] for v in vals])
            mp = np.array([v[1] for v in vals])
            sectors.append({"az_from": round(i * cfg.sector_deg, 1), "az_to": round((i + 1) * cfg.sector_deg, 1),
                            "arcs": len(vals), "height_m": round(float(np.median(hs)), 3),
                            "spread_m": round(_spread(hs), 3) if hs.size > 1 else None, "mp_db": round(float(np.median(mp)), 2),
                            "tentative": len(vals) < cfg.min_arcs_sector})
        all_h = np.array([v[0] for vals in per for v in vals])
        all_mp = np.array([v[1] for vals in per for v in vals])
        n = int(all_h.size)
        h = float(np.median(all_h)) if n else None
        fresnel = []
        if h is not None:
            for e in FRESNEL_ELEVATIONS:
                dist, major, minor = fresnel_zone(h, e, L1_LAMBDA)
                fresnel.append({"el_deg": e, "distance_m": round(dist, 2), "length_m": round(2 * major, 2),
                                "width_m": round(2 * minor, 2)})
        status = "collecting" if n < cfg.min_arcs_sector else "estimated"
        return {
            "status": status,
            "height_m": None if h is None else round(h, 3),
            "spread_m": round(_spread(all_h), 3) if n > 1 else None,
            "mp_db": round(float(np.median(all_mp)), 2) if n else None,
            "arcs": n,
            "arcs_evaluated": self._evaluated + len(self._provisional),
            "arcs_in_progress": self._arcs.in_progress,
            "refused": dict(sorted(self._refused.items())),
            "sectors": sectors,
            "fresnel": fresnel,
            "advice": advice(status, h, sectors, n, self._evaluated + len(self._provisional), cfg),
            "recent": [r.to_json() for r in self._recent],
            "wavelength_m": round(L1_LAMBDA, 6),
            "config": cfg.to_json(),
        }


def _spread(h: np.ndarray) -> float:
    """Robust standard deviation: 1.4826 × median absolute deviation (normal-consistent, common practice)."""
    return float(1.4826 * np.median(np.abs(h - np.median(h)))) if h.size else 0.0


def compass(az_from: float, az_to: float) -> str:
    return COMPASS[int(((az_from + az_to) / 2.0 + 22.5) % 360.0 // 45.0)]


def advice(status: str, h: float | None, sectors: list[dict[str, Any]], n: int, evaluated: int,
           cfg: ReflectionConfig) -> str:
    """Words for the installer."""
    if h is None:
        if evaluated:
            return (f"no reflecting surface found in {evaluated} satellite arcs between {cfg.el_min_deg:g} and "
                    f"{cfg.el_max_deg:g} degrees elevation")
        return "collecting: no satellite has crossed the low elevation window yet"
    near = [s for s in sectors if abs(s["height_m"] - h) <= max(0.15, 2 * (s["spread_m"] or 0.0))]
    names: list[str] = []
    for s in near:
        w = compass(s["az_from"], s["az_to"])
        if w not in names:
            names.append(w)
    where = " and ".join([", ".join(names[:-1]), names[-1]] if len(names) > 1 else names)
    text = (f"a horizontal reflecting surface about {h:.1f} m below the antenna in the {where} ({n} arc{'s' if n != 1 else ''}); "
            "raise the antenna, move it, or use an antenna with better multipath rejection")
    other = [s for s in sectors if s not in near and not s["tentative"]]
    if other:
        text += "; other heights: " + ", ".join(
            f"{s['height_m']:.1f} m in the {compass(s['az_from'], s['az_to'])}" for s in other)
    if status == "collecting":
        text += f" (tentative: fewer than {cfg.min_arcs_sector} arcs)"
    return text
