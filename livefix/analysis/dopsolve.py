"""DOP of a satellite geometry in closed form: the reference solver of the analysis (and its fallback),
and the pick between it and its C twin livefix/analysis/_dopcore.c (which also holds the C twin of
livefix.analysis.dop._used, livefix/analysis/_dopused.c).

Why not livefix.geodesy.dop: its numpy calls (condition number, inverse) cost tens of microseconds on
these tiny matrices, and a C twin could never match LAPACK bit for bit. This solver is written once
here with a fixed order of float operations (math.sin/cos/sqrt are libm's, as in C) and once in C
doing the very same operations, so both give bit-identical results.

The model is geodesy.dop's: G = [-los | clocks], one receiver-clock column per constellation (or one
clock when systems is None), Q = (GᵀG)⁻¹. N = GᵀG is symmetric positive definite for a usable
geometry; it is inverted by block elimination with a fixed pivot order:
  1. the clock unknowns first. Their block of N is diagonal (the counts n_s), so eliminating them is
     exact and leaves the 3x3 Schur complement S = Σ_i (u_i - ū_s)(u_i - ū_s)ᵀ, the within-system
     scatter of the line-of-sight vectors u_i about their system's mean ū_s (two passes: the means,
     then the centred sums, which keeps S accurate where raw moments would cancel);
  2. S by an LDLᵀ (Cholesky) factorisation (docs/sources.md#dop-closed-form-solve), E, N, U in that
     order. Cholesky rather than Gauss-Jordan: S is symmetric positive definite, so no pivot search
     is needed, half the work is done, and its pivots d_j measure directly how well each axis is
     determined.
Then Q_pos = S⁻¹ = L⁻ᵀD⁻¹L⁻¹ and Q_clock,s = 1/n_s + ū_sᵀ S⁻¹ ū_s, each a sum of squares over
positive pivots (never negative, so math.sqrt cannot fail). GDOP² = trace(S⁻¹) + Σ_s Q_clock,s;
TDOP is that of the first clock (system letters sorted), as in geodesy.dop.

Singularity rule (in place of geodesy.dop's cond(N) > 1e12): None when κ = n·GDOP² is at least
COND_MAX = 1e12, n the number of satellites. κ estimates cond₂(N) from the factorisation: ‖N‖₂ is of
order n (trace(N) = 2n) and ‖N⁻¹‖₂ ≤ trace(N⁻¹) = GDOP² ≤ (3 + k)·‖N⁻¹‖₂. A pivot d_j at most n/COND_MAX
stops the solve early (then κ ≥ n/d_j ≥ COND_MAX anyway; it also keeps the divisions finite). Usable
geometries give κ ~ 10..1e4, degenerate ones (one line of sight, one elevation with one clock, too few
distinct directions) ~1e16 or more; against numpy's cond(N) > 1e12 the decisions differed only for
cond(N) within half a decade of 1e12, where numpy's inverse itself has lost most of its digits
(tests/analysis/test_dop_solve.py measures this).
"""

from __future__ import annotations

import importlib
import math
from collections.abc import Callable, Sequence
from types import ModuleType

from livefix import corepick
from livefix.state.epoch import SatObs

KEYS = ("gdop", "pdop", "hdop", "vdop", "tdop")
COND_MAX = 1e12  # n·GDOP² at or above this: singular geometry (see the module doc)
MAX_CLOCKS = 16  # the C twin's bound on distinct systems (more: it hands over to the reference)
API = 1  # the interface of _dopcore spoken here; a build of another one is not used

Solver = Callable[..., "dict[str, float] | None"]


def solve(az: Sequence[float], el: Sequence[float], systems: Sequence[str] | None = None) -> dict[str, float] | None:
    """DOP (keys KEYS) of satellites at azimuths/elevations in degrees; one clock per distinct system
    in `systems` (one per satellite) or one clock when None. None when fewer satellites than unknowns
    or singular (see the module doc). ValueError when the lengths differ."""
    n = len(az)
    if len(el) != n or (systems is not None and len(systems) != n):
        raise ValueError("az, el and systems differ in length")
    # clock of each satellite: index into the sorted distinct systems
    if systems is None:
        names: list = [None]
        clock = [0] * n
    else:
        names = sorted(set(systems))
        idx = {s: i for i, s in enumerate(names)}
        clock = [idx[s] for s in systems]
    k = len(names)
    if n < 3 + k:
        return None
    # pass 1, in satellite order: line of sight (E, N, U) and per-clock sums
    r = math.radians
    ue: list[float] = []
    un: list[float] = []
    uu: list[float] = []
    cnt = [0] * k
    se = [0.0] * k
    sn = [0.0] * k
    su = [0.0] * k
    for i in range(n):
        a = r(az[i])
        e = r(el[i])
        ce = math.cos(e)
        x = ce * math.sin(a)
        y = ce * math.cos(a)
        z = math.sin(e)
        ue.append(x)
        un.append(y)
        uu.append(z)
        c = clock[i]
        cnt[c] += 1
        se[c] += x
        sn[c] += y
        su[c] += z
    me = [se[c] / cnt[c] for c in range(k)]
    mn = [sn[c] / cnt[c] for c in range(k)]
    mu = [su[c] / cnt[c] for c in range(k)]
    # pass 2, in satellite order: S, the centred scatter (lower triangle)
    s00 = s10 = s11 = s20 = s21 = s22 = 0.0
    for i in range(n):
        c = clock[i]
        x = ue[i] - me[c]
        y = un[i] - mn[c]
        z = uu[i] - mu[c]
        s00 += x * x
        s10 += y * x
        s11 += y * y
        s20 += z * x
        s21 += z * y
        s22 += z * z
    # S = L D Lᵀ, L unit lower triangular
    tiny = n / COND_MAX
    d0 = s00
    if not d0 > tiny:
        return None
    l10 = s10 / d0
    l20 = s20 / d0
    d1 = s11 - l10 * s10
    if not d1 > tiny:
        return None
    t = s21 - l20 * s10
    l21 = t / d1
    d2 = s22 - l20 * s20 - l21 * t
    if not d2 > tiny:
        return None
    # diagonal of S⁻¹ = L⁻ᵀ D⁻¹ L⁻¹ with L⁻¹ = [[1, 0, 0], [w10, 1, 0], [w20, w21, 1]]
    w10 = -l10
    w21 = -l21
    w20 = l10 * l21 - l20
    q22 = 1.0 / d2
    q11 = 1.0 / d1 + w21 * w21 / d2
    q00 = 1.0 / d0 + w10 * w10 / d1 + w20 * w20 / d2
    qh = q00 + q11
    qp = qh + q22
    # clock variances, sorted system order: 1/n_s + ū_sᵀ S⁻¹ ū_s by forward substitution L·v = ū_s
    qg = qp
    qt = 0.0
    for c in range(k):
        v0 = me[c]
        v1 = mn[c] - l10 * v0
        v2 = mu[c] - l20 * v0 - l21 * v1
        q = 1.0 / cnt[c] + v0 * v0 / d0 + v1 * v1 / d1 + v2 * v2 / d2
        if c == 0:
            qt = q
        qg += q
    if n * qg >= COND_MAX:
        return None
    return {"gdop": math.sqrt(qg), "pdop": math.sqrt(qp), "hdop": math.sqrt(qh),
            "vdop": math.sqrt(q22), "tdop": math.sqrt(qt)}


def _built_core() -> ModuleType | None:
    """The C twin when built with this module's interface and constants (and configured with the
    satellite type), else None."""
    try:
        # the extension by its full name, loaded without importing anything else of livefix
        core = importlib.import_module("livefix.analysis._dopcore")  # built by setup.py
    except ImportError:
        return None
    ok = (getattr(core, "API", None), getattr(core, "COND_MAX", None), getattr(core, "MAX_CLOCKS", None))
    if ok != (API, COND_MAX, MAX_CLOCKS):  # a stale build is not used
        return None
    try:
        core.configure(SatObs)
    except (AttributeError, TypeError):  # an older build, or a satellite type it cannot read
        return None
    return core


_CORE = _built_core()


def pick_core(native: bool | None = None) -> ModuleType | None:
    """native None: the C twin unless LIVEFIX_PURE is "1" or it is not built; True: the C twin or
    RuntimeError (tests); False: None (the references)."""
    return corepick.pick_core(_CORE, native, "the C core livefix.analysis._dopcore is not built (or built with other constants)")


def make_solver(native: bool | None = None) -> Solver:
    """solve() in C when picked (pick_core: bit-identical, handing odd inputs over to the reference),
    else the reference."""
    core = pick_core(native)
    if core is None:
        return solve
    fast = core.solve

    def solve_native(az: Sequence[float], el: Sequence[float], systems: Sequence[str] | None = None) -> dict[str, float] | None:
        r = fast(az, el, systems)
        return solve(az, el, systems) if r is NotImplemented else r

    return solve_native
