"""Where the reflections come from: reflector height and multipath amplitude by azimuth sector.

Why: a roof plane, a parapet or wet ground below the antenna makes multipath that every sky and
C/N0 figure hides. Each satellite arc through the low elevation window (livefix.analysis.arcs)
gives one GNSS-IR estimate (livefix.analysis.reflection); accepted arcs are summed up per azimuth
sector (30° by default) as a median height, its spread and the multipath amplitude, with the first
Fresnel zone of the median height (the GNSS-IR Fresnel-zone paper, GPS Solutions 17 (2013)) so the
installer knows where on the ground the reflection happens.

Deterministic and bounded: arcs in progress are checked at fixed sample counts (CHECK_EVERY), never
at snapshot time, so the snapshot of a stream does not depend on when it is taken (a check's estimate
is a pure function of the samples up to its count, so it is computed when first read: most checks are
superseded, or their arc closes, before any snapshot, and are never computed at all); each sector keeps
its newest KEEP_PER_SECTOR accepted arcs, refused arcs are only counted. The periodogram figure
gets a fixed-size summary: the mean amplitude spectrum of all accepted arcs on one height grid and
the spectra of the newest KEEP_CURVES arcs.
"""

from __future__ import annotations

from collections import Counter, deque
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

from livefix.analysis.arcs import Arc, ArcCollector, split_monotonic
from livefix.analysis.counts import bound_on_epoch
from livefix.analysis.reflection import (
    ArcFit,
    ReflectionConfig,
    estimate,
    fresnel_zone,
    mp_db,
    spectrum,
    wavelength,
)
from livefix.faults import log_internal
from livefix.state.epoch import Epoch

CHECK_EVERY = 300  # samples (~5 min at one a second) between estimates of an arc in progress
KEEP_PER_SECTOR = 256  # accepted arcs kept per sector for the medians (a week holds ~1000 in all)
KEEP_RECENT = 20  # accepted arcs listed in the snapshot
FRESNEL_ELEVATIONS = (5.0, 10.0, 15.0)
L1_LAMBDA = wavelength("G", "1") or 0.19029  # Fresnel zones are given for GPS L1 / Galileo E1
SPECTRUM_STEP_M = 0.05  # height grid of the periodogram summary; a peak is ~0.3 m wide (λ/2 / Δsin e)
KEEP_CURVES = 3  # newest accepted arcs whose spectra the snapshot carries
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
    def __init__(self, cfg: ReflectionConfig | None = None, native: bool | None = None) -> None:
        """native: the arc sampler in C (ArcCollector; None as LIVEFIX_PURE says)."""
        self.cfg = cfg or ReflectionConfig()
        self._arcs = ArcCollector(self.cfg, native)
        self._sample_s = self.cfg.sample_s  # the collector's sampling interval (frozen config)
        self.reset()

    def reset(self) -> None:
        self._arcs.reset()
        n = max(1, round(360.0 / self.cfg.sector_deg))
        self._sectors: list[deque[tuple[float, float]]] = [deque(maxlen=KEEP_PER_SECTOR) for _ in range(n)]
        self._recent: deque[ArcResult] = deque(maxlen=KEEP_RECENT)
        self._evaluated = 0
        self._refused: Counter[str] = Counter()
        self._provisional: dict[tuple[str, int, str], ArcResult] = {}  # arcs in progress, last check
        # checks of arcs in progress not evaluated yet, oldest first: (track, its sample count then).
        # A check is a pure function of those samples (a track's lists only grow), so it is evaluated
        # when read, and one superseded by a later check, or whose arc closes first, never is.
        self._pending: dict[tuple[str, int, str], list[tuple[Any, int]]] = {}
        self.errors = 0  # checks that failed when evaluated late (counted by the Analyzer)
        self.last_error: str | None = None
        self._grid = np.arange(self.cfg.h_min_m, self.cfg.h_max_m + SPECTRUM_STEP_M / 2, SPECTRUM_STEP_M)
        self._spec_sum = np.zeros(self._grid.size)
        self._n_spec = 0
        self._pg_cache: tuple[int, dict[str, Any]] = (-1, {})
        self._curves: deque[tuple[ArcResult, np.ndarray]] = deque(maxlen=KEEP_CURVES)

    def _sector(self, az: float) -> int:
        return int((az % 360.0) // self.cfg.sector_deg) % len(self._sectors)

    def _on_arc(self, arc: Arc) -> None:
        res = evaluate(arc, self.cfg)
        self._evaluated += 1
        key = (arc.system, arc.prn, arc.signal)
        self._provisional.pop(key, None)
        self._pending.pop(key, None)
        if not res.fit.accepted:
            self._refused[res.fit.why] += 1
            return
        self._sectors[self._sector(res.az)].append((float(res.fit.height_m or 0.0), res.fit.mp_db))
        self._recent.append(res)
        amp = spectrum(np.sin(np.radians(arc.el)), arc.cn0, arc.lam, self._grid, self.cfg)
        self._spec_sum += amp
        self._n_spec += 1
        self._curves.append((res, amp))

    def epoch_step(self) -> Callable[[Epoch], None]:
        """on_epoch as the Analyzer calls it (counts.bound_on_epoch): with the C arc sampler, the
        collector's first test in C (no Python frame for the nine epochs in ten it refuses), running
        on_epoch otherwise."""
        return bound_on_epoch(self._arcs._core, "reflection", self, ReflectionStats, ReflectionStats.on_epoch)

    def on_epoch(self, ep: Epoch) -> None:
        arcs = self._arcs
        if 0 <= ep.mono - arcs._t < self._sample_s:  # the collector would refuse it: save the call
            return
        if not arcs.on_epoch(ep):
            return
        if self._arcs.done:
            for arc in self._arcs.done:
                self._on_arc(arc)
            self._arcs.done.clear()
        tracks = self._arcs.tracks
        pending = self._pending
        for key, tr in tracks.items():
            n = len(tr.t)
            if n and n % CHECK_EVERY == 0 and tr.last == ep.mono and max(tr.el) - min(tr.el) >= self.cfg.min_span_deg:
                checks = pending.get(key)
                if checks is None:
                    checks = pending[key] = []
                checks.append((tr, n))  # evaluated when read (_settle_checks)
        for key in [k for k in self._provisional if k not in tracks]:  # arcs closed without an estimate
            del self._provisional[key]
        for key in [k for k in pending if k not in tracks]:
            del pending[key]

    def _settle_checks(self) -> None:
        """Evaluate the waiting checks: per arc, the newest that gives an estimate replaces the last
        one (an older check would have been overwritten by it; one giving none leaves the last)."""
        pending, self._pending = self._pending, {}
        for key, checks in pending.items():
            for tr, n in reversed(checks):
                try:
                    res = self._check(key, tr, n)
                except Exception as exc:  # noqa: BLE001 - as the Analyzer counts a failing stage
                    self.errors += 1
                    self.last_error = f"ReflectionStats._check: {type(exc).__name__}: {exc}"
                    log_internal(self.errors, "ReflectionStats._check", exc)
                    continue
                if res is not None:
                    self._provisional[key] = res
                    break

    def _check(self, key: tuple[str, int, str], tr: Any, n: int) -> ArcResult | None:
        """Estimate an arc in progress from its first n samples (kept until the arc closes); None
        when they give no estimate."""
        lam = wavelength(key[0], key[2])
        if lam is None:
            return None
        parts = split_monotonic(np.array(tr.t[:n]), np.array(tr.el[:n]), np.array(tr.az[:n]),
                                np.array(tr.cn0[:n]))
        t, el, az, c = parts[-1]
        inside = (el >= self.cfg.el_min_deg) & (el <= self.cfg.el_max_deg)
        if int(inside.sum()) < self.cfg.min_points:
            return None
        arc = Arc(key[0], key[1], key[2], lam, t[inside], el[inside], az[inside], c[inside])
        return evaluate(arc, self.cfg)

    # -- reading ---------------------------------------------------------------------------
    def snapshot(self) -> dict[str, Any]:
        if self._pending:
            self._settle_checks()
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
        # a multipath figure also when no arc showed a reflection: enough arcs looked and found none
        # above the detection floor, so a profile's limit on it can pass (a missing figure fails)
        looked = n == 0 and self._evaluated >= cfg.min_arcs_sector
        status = "none found" if looked else "collecting" if n < cfg.min_arcs_sector else "estimated"
        return {
            "status": status,
            "height_m": None if h is None else round(h, 3),
            "spread_m": round(_spread(all_h), 3) if n > 1 else None,
            "mp_db": round(float(np.median(all_mp)), 2) if n else 0.0 if looked else None,
            "mp_floor_db": round(mp_db(cfg.min_amplitude), 2),  # the weakest multipath an arc can show
            "arcs": n,
            "arcs_evaluated": self._evaluated + len(self._provisional),
            "arcs_in_progress": self._arcs.in_progress,
            "refused": dict(sorted(self._refused.items())),
            "sectors": sectors,
            "fresnel": fresnel,
            "advice": advice(status, h, sectors, n, self._evaluated + len(self._provisional), cfg),
            "recent": [r.to_json() for r in self._recent],
            "periodogram": self._periodogram(),
            "wavelength_m": round(L1_LAMBDA, 6),
            "config": cfg.to_json(),
        }


    def _periodogram(self) -> dict[str, Any]:
        """Mean amplitude spectrum of the accepted arcs and the newest arcs' own, on one H grid."""
        n = self._n_spec
        if self._pg_cache[0] != n:  # snapshots come several times a second; arcs close minutes apart
            self._pg_cache = (n, self._periodogram_json(n))
        d = self._pg_cache[1]  # copies: each snapshot owns its lists
        return {**d, "mean": list(d["mean"]), "curves": [{**c, "amp": list(c["amp"])} for c in d["curves"]]}

    def _periodogram_json(self, n: int) -> dict[str, Any]:
        return {"h_from": round(float(self._grid[0]), 3), "h_step": SPECTRUM_STEP_M, "arcs": n,
                "mean": [round(float(v), 4) for v in self._spec_sum / n] if n else [],
                "curves": [{"sat": r.label, "az": round(r.az, 1), "height_m": round(float(r.fit.height_m or 0.0), 3),
                            "amp": [round(float(v), 4) for v in amp]} for r, amp in self._curves],
                "min_amplitude": self.cfg.min_amplitude}


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
