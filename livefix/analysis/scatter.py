"""Horizontal and vertical scatter figures from local E/N/U offsets.

Definitions (see docs/sources.md#cep-and-2drms and docs/sources.md#circular-normal-factors):
- CEP50 / CEP95: radius about the centre holding 50 % / 95 % of the fixes (exact percentiles).
- R95: the same empirical 95 % radius as CEP95 (two names for one figure, kept for readers who
  look for either); the Gaussian model value is available separately as `r95_gauss_m`, from the
  NRC (1995) style approximation 2.4477 * sqrt((sE^2 + sN^2)/2) for a near-circular scatter.
- 2DRMS = 2 * sqrt(sE^2 + sN^2) (NRC 1995; US FRP Appendix A: holds 95-98 % of fixes).
- V95: 95th percentile of |u - mean u| over the epochs that carry a height (GGA/GNS); None when
  fewer than two do ("not measured", never a height of 0).
- Every figure is about the sample *mean* (precision); the reference of offsets is named apart.
- Ellipse: eigen-decomposition of the 2x2 E/N covariance, 1-sigma semi-axes, orientation of the
  major axis in degrees clockwise from north (0..180).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from livefix.analysis.streaming import num

R95_FACTOR = 2.4477  # circular normal 95 % radius / sigma (Rayleigh quantile, docs/sources.md#circular-normal-factors)


def ellipse(cov2: np.ndarray) -> dict[str, float | None]:
    """1-sigma error ellipse of a 2x2 [[EE, EN], [NE, NN]] covariance."""
    w, v = np.linalg.eigh(cov2)
    w = np.clip(w, 0.0, None)
    major = v[:, 1]  # eigh sorts ascending: last column is the major axis
    orient = math.degrees(math.atan2(major[0], major[1])) % 180.0  # from north towards east
    return {"major_m": num(math.sqrt(w[1])), "minor_m": num(math.sqrt(w[0])), "orient_deg": num(orient, 1)}


def figures(e: np.ndarray, n: np.ndarray, u: np.ndarray | None = None,
            centre: tuple[float, float, float] | None = None) -> dict[str, Any]:
    """Exact scatter figures about `centre` (default: the sample mean) - precision, not accuracy."""
    cnt = int(e.size)
    out: dict[str, Any] = {"n": cnt}
    if cnt < 2:
        return out | {"cep50_m": None, "cep95_m": None, "r95_m": None, "drms2_m": None, "v95_m": None}
    ce, cn = (float(np.mean(e)), float(np.mean(n))) if centre is None else centre[:2]
    de, dn = e - ce, n - cn
    r = np.hypot(de, dn)
    cov = np.cov(np.vstack((de, dn)))
    se2, sn2 = float(cov[0, 0]), float(cov[1, 1])
    cep95 = float(np.percentile(r, 95))
    out |= {"cep50_m": num(float(np.percentile(r, 50))), "cep95_m": num(cep95), "r95_m": num(cep95),
            "r95_gauss_m": num(R95_FACTOR * math.sqrt((se2 + sn2) / 2.0)),
            "drms_m": num(math.sqrt(se2 + sn2)), "drms2_m": num(2.0 * math.sqrt(se2 + sn2)),
            "sigma_e_m": num(math.sqrt(se2)), "sigma_n_m": num(math.sqrt(sn2)),
            "ellipse": ellipse(cov)}
    uf = u[np.isfinite(u)] if u is not None and u.size == cnt else np.empty(0)  # epochs with a height only
    out["n_v"] = int(uf.size)
    if uf.size >= 2:
        cu = float(np.mean(uf)) if centre is None else centre[2]
        du = uf - cu
        out |= {"v95_m": num(float(np.percentile(np.abs(du), 95))), "sigma_u_m": num(float(np.std(du, ddof=1)))}
    else:
        out |= {"v95_m": None, "sigma_u_m": None}
    return out


def figures_from_moments(n: int, cov3: np.ndarray | None, cep50: float | None, cep95: float | None,
                         v95: float | None) -> dict[str, Any]:
    """Session figures from streaming pieces: one-pass running covariance plus histogram percentiles."""
    out: dict[str, Any] = {"n": n, "cep50_m": num(cep50), "cep95_m": num(cep95), "r95_m": num(cep95),
                           "v95_m": num(v95)}
    if cov3 is None:
        return out | {"drms2_m": None}
    se2, sn2, su2 = float(cov3[0, 0]), float(cov3[1, 1]), float(cov3[2, 2])
    return out | {"r95_gauss_m": num(R95_FACTOR * math.sqrt((se2 + sn2) / 2.0)),
                  "drms_m": num(math.sqrt(se2 + sn2)), "drms2_m": num(2.0 * math.sqrt(se2 + sn2)),
                  "sigma_e_m": num(math.sqrt(se2)), "sigma_n_m": num(math.sqrt(sn2)),
                  "sigma_u_m": num(math.sqrt(su2)), "ellipse": ellipse(cov3[:2, :2])}
