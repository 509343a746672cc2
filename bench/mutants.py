"""Mutation-style sanity check of the analysis tests: can the suite see a deliberate fault?

Why: a test that cannot fail proves nothing. Each entry of MUTANTS below is one hand-made fault of
the kind that slips into statistics code (an off-by-one percentile rank, < for <=, a wrong sign,
swapped east/north, degrees fed to a cosine, a dropped epoch, a wrong factor). For each one this
script copies the repository to a temporary folder (the working tree is never touched), applies the
fault, and runs the tests the entry names with `pytest -x`; a mutant those leave alive is run
against the whole of tests/analysis before it is called a survivor. A mutant is *killed* when a
test fails (or the run times out), *survived* when every selected test passes.

Tests that already fail on the unmutated copy (the tree may be mid-edit) are found by a baseline
run first and deselected, so they neither kill nor hide a mutant; the result lists them.
Not a test (it takes many minutes); run it with `make mutants`. Writes bench/mutants-result.md.

    python bench/mutants.py                  # every mutant
    python bench/mutants.py --only drift-slope-sign scatter-cep95-rank
    python bench/mutants.py --check          # only verify each snippet occurs exactly once
"""

from __future__ import annotations

import argparse
import os
import re
import shutil
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
RESULT = ROOT / "bench" / "mutants-result.md"
SUITE = "tests/analysis"  # the second, wider selection for mutants the named tests leave alive
TA = "tests/analysis/"
IGNORE = shutil.ignore_patterns(".venv", ".git", "__pycache__", ".pytest_cache", ".ruff_cache", "build",
                                "*.egg-info", "mutants-result.md")


@dataclass(frozen=True, slots=True)
class Mutant:
    name: str
    file: str  # path from the repository root
    old: str  # exact snippet; must occur exactly once
    new: str
    breaks: str  # what the fault breaks, for people
    tests: tuple[str, ...]  # the first, small selection (files or node ids)
    equivalent: str = ""  # why no test can kill it (the program behaves the same), when known


def _m(name: str, file: str, old: str, new: str, breaks: str, *tests: str, equivalent: str = "") -> Mutant:
    return Mutant(name, "livefix/analysis/" + file if "/" not in file else file, old, new, breaks,
                  tuple(t if t.startswith("tests/") else TA + t for t in tests), equivalent)


MUTANTS: tuple[Mutant, ...] = (
    # ---- Allan deviation (NIST SP 1065 eq. 11) ----
    _m("allan-missing-half", "allan.py", "np.dot(d, d) / (2.0 * d.size)", "np.dot(d, d) / (d.size)",
       "Allan variance without its 1/2: deviation too large by sqrt(2)", "test_allan_position.py"),
    _m("allan-tau-scale", "allan.py", "/ (m * tau0)))", "/ m))",
       "divides by m, not tau = m * tau0: wrong for any epoch interval but 1 s", "test_allan_position.py"),
    _m("allan-tau-label", "track.py", "[num(m * tau0, 3) for m in ms]", "[num((m + 1) * tau0, 3) for m in ms]",
       "wrong Allan tau labels (m + 1 intervals)", "test_allan_position.py", "test_position_stats.py"),
    _m("allan-octaves", "allan.py", "while 3 * m <= n:", "while 2 * m <= n:",
       "averaging factors up to half the record (too few terms at the top tau)", "test_allan_position.py"),
    # ---- scatter figures ----
    _m("scatter-cep95-rank", "scatter.py", "cep95 = float(np.percentile(r, 95))",
       "cep95 = float(np.percentile(r, 94))", "off-by-one percentile rank for CEP95 / R95",
       "test_scatter_figures.py", "test_position_stats.py"),
    _m("scatter-cep50-rank", "scatter.py", "num(float(np.percentile(r, 50)))", "num(float(np.percentile(r, 51)))",
       "off-by-one percentile rank for CEP50", "test_scatter_figures.py", "test_position_stats.py",
       "test_mutant_kills.py"),
    _m("scatter-r95-factor", "scatter.py", "R95_FACTOR = 2.4477", "R95_FACTOR = 1.1774",
       "Gaussian R95 computed with the CEP50 factor (wrong CEP factor)", "test_scatter_figures.py"),
    _m("scatter-2drms", "scatter.py",
       '"drms2_m": num(2.0 * math.sqrt(se2 + sn2)),\n            "sigma_e_m"',
       '"drms2_m": num(math.sqrt(2.0 * (se2 + sn2))),\n            "sigma_e_m"',
       "2DRMS as sqrt(2) * DRMS instead of 2 * DRMS", "test_scatter_figures.py", "test_position_stats.py"),
    _m("scatter-ellipse-en-swap", "scatter.py", "math.atan2(major[0], major[1])", "math.atan2(major[1], major[0])",
       "ellipse orientation measured from east, not north (swapped E/N)", "test_scatter_figures.py"),
    _m("scatter-ellipse-minor", "scatter.py", "major = v[:, 1]", "major = v[:, 0]",
       "ellipse oriented along the minor axis", "test_scatter_figures.py"),
    _m("scatter-v95-signed", "scatter.py", "np.percentile(np.abs(du), 95)", "np.percentile(du, 95)",
       "V95 of signed height offsets instead of |u - mean|", "test_scatter_figures.py", "test_position_stats.py"),
    _m("scatter-cov-bias", "scatter.py", "cov = np.cov(np.vstack((de, dn)))",
       "cov = np.cov(np.vstack((de, dn)), bias=True)",
       "population (n) instead of sample (n - 1) variance in sigma, DRMS and the ellipse",
       "test_scatter_figures.py", "test_position_stats.py", "test_mutant_kills.py"),
    # ---- drift ----
    _m("drift-slope-sign", "drift.py", "b = float(np.dot(tc, y - y.mean()) / sxx)",
       "b = -float(np.dot(tc, y - y.mean()) / sxx)", "wrong sign of the drift", "test_drift_slope.py",
       "test_drift_uncertainty.py"),
    _m("drift-units", "drift.py", "MM_PER_H = 1000.0 * 3600.0", "MM_PER_H = 1000.0 * 60.0",
       "drift in mm/min labelled mm/h", "test_drift_slope.py", "test_drift_uncertainty.py"),
    _m("drift-no-ar1", "drift.py", "f = (1.0 + rho) / (1.0 - rho)", "f = 1.0",
       "slope SE ignores autocorrelation (clean antenna 'drifts')", "test_drift_uncertainty.py"),
    _m("drift-dof", "drift.py", "s2 = den / (n - 2)", "s2 = den / n",
       "residual variance without the two fitted parameters' degrees of freedom", "test_drift_uncertainty.py",
       "test_drift_slope.py", "test_mutant_kills.py"),
    _m("drift-t-table", "drift.py", "(12.706, 4.303, 3.182, 2.776, 2.571)", "(12.706, 4.303, 2.353, 2.776, 2.571)",
       "Student t for 3 dof taken one-sided 95 % (2.353) instead of two-sided", "test_drift_uncertainty.py"),
    _m("drift-rho-bias", "drift.py", "rho = rho0 + (2.0 + 4.0 * max(rho, 0.0)) / n",
       "rho = rho0 + (1.0 + 4.0 * max(rho, 0.0)) / n", "half the small-sample bias correction of rho",
       "test_drift_uncertainty.py", "test_mutant_kills.py"),
    _m("drift-en-swap", "track.py", "for col, key in ((1, \"e\"), (2, \"n\"), (3, \"u\")):\n            fit",
       "for col, key in ((2, \"e\"), (1, \"n\"), (3, \"u\")):\n            fit",
       "east and north drift swapped", "test_drift_slope.py", "test_drift_uncertainty.py"),
    _m("drift-h-sidak", "position_figures.py", "k = Z_SIDAK / Z975", "k = 1.0",
       "horizontal drift interval without the Sidak widening (covers < 95 %)", "test_drift_uncertainty.py",
       "test_mutant_kills.py"),
    _m("drift-h-floor", "position_figures.py", "max(0.0, abs(e) - he), max(0.0, abs(n) - hn)",
       "abs(e) - he, abs(n) - hn", "lower bound of the horizontal rate not floored at zero",
       "test_drift_uncertainty.py"),
    _m("drift-run-needed", "drift.py", "(ci95 / gap) ** (2.0 / 3.0)", "(ci95 / gap) ** (3.0 / 2.0)",
       "run-longer advice with the inverse exponent of the span^-1.5 law", "test_drift_uncertainty.py"),
    # ---- honesty, moments, projection ----
    _m("honesty-en-swap", "track.py", '("lat_ratio", SLAT, 1), ("lon_ratio", SLON, 0)',
       '("lat_ratio", SLAT, 0), ("lon_ratio", SLON, 1)', "latitude sigma compared with the east scatter",
       "test_position_stats.py"),
    _m("honesty-mad", "track.py", "mad = 1.4826 * np.median", "mad = np.median",
       "robust sigma without the normal-consistency factor 1.4826", "test_position_stats.py"),
    _m("moments-onepass", "track.py", "c[3] += d1 * (n - m[1])", "c[3] += d1 * d1",
       "One-pass north variance with the old mean twice (biased)", "test_position_stats.py",
       "test_scatter_figures.py", "test_mutant_kills.py"),
    _m("enu-north-sign", "geo.py", "r10 * dx + r11 * dy + r12 * dz,", "r10 * dx + r11 * dy - r12 * dz,",
       "north offset with the wrong sign of its z term", "test_position_stats.py", "test_engine_fast_paths.py"),
    # ---- median position ----
    _m("median-rank", "median.py", "            if acc >= target:\n                return s / c",
       "            if acc > target:\n                return s / c", "median one bin high when the count splits evenly",
       "test_site_record_figures.py", "test_position_jumps.py", "test_mutant_kills.py"),
    _m("median-cos-degrees", "median.py", "math.cos(math.radians(lat))", "math.cos(lat)",
       "east resolution with degrees fed to cos (degrees vs radians)", "test_site_record_figures.py",
       "test_position_jumps.py", "test_mutant_kills.py"),
    # ---- streaming building blocks ----
    _m("ring-dropped-row", "streaming.py", "self._n = min(self._n + k, cap)", "self._n = min(self._n + k - 1, cap)",
       "one epoch dropped from every flushed batch", "test_position_stats.py", "test_scatter_figures.py"),
    _m("loghist-bin-high", "streaming.py", "                return math.exp(b * _LH_STEP)\n",
       "                return math.exp((b + 1) * _LH_STEP)\n", "streaming quantiles one 0.5 % bin high",
       "test_position_stats.py", "test_dop_used_geometry.py"),
    _m("valid-fix-quality", "streaming.py", "return (ep.quality > 0 and", "return (ep.quality >= 0 and",
       "no-fix epochs (quality 0) taken as fixes", "test_fixes_stats.py", "test_position_stats.py",
       "test_mutant_kills.py"),
    _m("pairhistory-drop", "streaming.py", "0.5 * (self.buf[0::2] + self.buf[1::2])", "self.buf[0::2]",
       "decimation drops every other sample instead of averaging pairs", "test_allan_position.py",
       "test_drift_slope.py"),
    # ---- availability, outages, TTFF ----
    _m("avail-gap-le", "availability.py", "and dt > GAP_FACTOR * iv:", "and dt >= GAP_FACTOR * iv:",
       "< vs <= in the missing-epoch outage threshold", "test_fixes_availability.py", "test_fixes_stats.py"),
    _m("avail-last-interval", "availability.py", "out[self.prev] = out.get(self.prev, 0.0) + iv",
       "out[self.prev] = out.get(self.prev, 0.0)", "the latest epoch's interval left out of the time",
       "test_fixes_availability.py"),
    _m("avail-gap-counted", "availability.py",
       "known = {k: v - base.get(k, 0.0) for k, v in totals.items() if k not in NOT_FIX_STATE}",
       "known = {k: v - base.get(k, 0.0) for k, v in totals.items()}",
       "data gaps and unknown time counted in the availability shares", "test_fixes_availability.py"),
    _m("outage-le", "fixes.py", "        if dur > self.cfg.outage_s:\n            self.outages.append(item)",
       "        if dur >= self.cfg.outage_s:\n            self.outages.append(item)",
       "< vs <= in the outage length threshold", "test_fixes_availability.py", "test_fixes_stats.py",
       "test_mutant_kills.py"),
    _m("outage-ongoing-interval", "fixes.py", "dur = max(0.0, self._last_t + iv - self._lost_at[0])",
       "dur = max(0.0, self._last_t - self._lost_at[0])", "ongoing outage short by the last epoch's interval",
       "test_fixes_availability.py", "test_fixes_stats.py"),
    _m("interval-median-even", "fixes.py", "self._iv = srt[i] if n % 2 else (srt[i - 1] + srt[i]) / 2",
       "self._iv = srt[i]", "nominal interval: upper middle value instead of the median of an even window",
       "test_fixes_availability.py", "test_fixes_stats.py", "test_mutant_kills.py"),
    _m("jump-sigma-k", "fixes.py", "self.cfg.jump_sigma * rec.sigma()", "rec.sigma()",
       "jump threshold without its k-sigma factor", "test_fixes_stats.py", "test_position_jumps.py",
       "test_mutant_kills.py"),
    _m("ttff-rtk-quality", "starts.py", '("ttff_rtk_fixed_s", 4)', '("ttff_rtk_fixed_s", 5)',
       "RTK-fixed TTFF waits for GGA quality 5 (float), not 4 (NMEA 0183)", "test_fixes_stats.py",
       "test_fixes_availability.py"),
    _m("ttff-observed", "starts.py", "(q0 == 0 if want is None else q0 != want)", "(q0 == 0)",
       "DGNSS/RTK TTFF only observed when the session began with no fix at all", "test_fixes_stats.py",
       "test_fixes_availability.py"),
    # ---- convergence, jumps, motion ----
    _m("conv-from-start", "convergence.py", "max(0.0, got - self.first_fix)", "got",
       "convergence counted from the session start, not the first fix", "test_convergence_time.py",
       "test_convergence_first_fix.py"),
    _m("conv-hold-gt", "convergence.py", "if t[e] - t[s] >= hold_s:", "if t[e] - t[s] > hold_s:",
       "< vs <= in the convergence hold time", "test_convergence_time.py", "test_convergence_first_fix.py",
       "test_mutant_kills.py"),
    _m("conv-nofix-inside", "convergence.py", "return a[:, 0], fixed & (err <= lim)", "return a[:, 0], err <= lim",
       "no-fix epochs do not break a converged spell", "test_convergence_time.py", "test_convergence_first_fix.py",
       equivalent="PositionStats feeds no-fix epochs as NaN positions, and NaN <= radius is False: the "
       "'fixed &' guard is redundant for every caller (kept as a belt and braces)"),
    _m("jumps-min-limit", "jumps.py", "return (max(self.lim_h.get(fix, self.cfg.jump_m), k * math.sqrt(c.vh)),",
       "return (min(self.lim_h.get(fix, self.cfg.jump_m), k * math.sqrt(c.vh)),",
       "excursion limit is the smaller of radius and k sigma", "test_position_jumps.py",
       "test_mutant_kills.py"),
    _m("jumps-en-swap", "jumps.py", "dh = math.hypot(e - c.c[0], n - c.c[1])",
       "dh = math.hypot(e - c.c[1], n - c.c[0])",
       "distance from the settled centre with E and N swapped", "test_position_jumps.py",
       "test_mutant_kills.py"),
    _m("motion-one-half", "motion.py", "raw = recent and tm > t0 and math.hypot(em - e0, nm - n0) > need",
       "raw = recent", "one step in one half-window reads as motion", "test_motion_detect.py",
       "test_mutant_kills.py"),
    _m("motion-speed-lt", "motion.py", "slow = speed is not None and speed <= cfg.motion_speed_mps",
       "slow = speed is not None and speed < cfg.motion_speed_mps", "< vs <= at the standing-still speed",
       "test_motion_detect.py", "test_mutant_kills.py"),
    # ---- DOP ----
    _m("dop-or", "dop.py", "return d > ABS_TOL and d > REL_TOL * rep", "return d > ABS_TOL or d > REL_TOL * rep",
       "a disagreement needs only one of the two tolerances", "test_dop_used_geometry.py", "test_dop_geometry.py",
       "test_mutant_kills.py"),
    _m("dop-vote-swap", "dop.py", "(1 if d_single < d_multi else -1)", "(-1 if d_single < d_multi else 1)",
       "clock-model votes go to the farther model", "test_dop_used_geometry.py"),
    _m("dop-az-el-swap", "dop.py", "seen[k] = (float(az), float(el), k[0])", "seen[k] = (float(el), float(az), k[0])",
       "azimuth and elevation swapped in the geometry", "test_dop_used_geometry.py", "test_dop_geometry.py"),
    _m("dop-min-sats", "dop.py", "if len(geo) >= 4:", "if len(geo) >= 5:",
       "no computed DOP with exactly four satellites", "test_dop_used_geometry.py", "test_dop_geometry.py",
       "test_mutant_kills.py"),
    _m("dop-hdop-up", "livefix/geodesy.py", '"hdop": float(math.sqrt(qe + qn))', '"hdop": float(math.sqrt(qe + qu))',
       "HDOP from the east and up diagonal of Q (E/N/U mix-up)", "test_dop_geometry.py",
       "tests/test_geodesy.py"),
    # ---- signal, sky, integrity ----
    _m("signal-sin-degrees", "signal.py", "_SIN = [math.sin(math.radians(e)) for e in range(91)]",
       "_SIN = [math.sin(e) for e in range(91)]", "C/N0 curve against sin of degrees (degrees vs radians)",
       "test_signal_quality.py", "test_signal_weak_sectors.py"),
    _m("signal-band-off-by-one", "signal.py", "_BAND = [min(e // 10, 8) for e in range(91)]",
       "_BAND = [min(e // 10 + 1, 8) for e in range(91)]", "elevation bands one band high", "test_signal_quality.py"),
    _m("signal-share", "signal.py", "if act is None and share >= SHARE and med >= thr:",
       "if act is None and share >= SHARE or med >= thr:", "interference on a median drop alone",
       "test_signal_quality.py"),
    _m("sky-blocked-share", "sky.py", "if un[i] / n >= BLOCKED_SHARE:", "if tr[i] / n >= BLOCKED_SHARE:",
       "obstruction judged from the tracked share (inverted)", "test_sky_map.py", "test_sky_building_sim.py"),
    _m("burst-threshold", "integrity.py", "if len(q) >= BURST_N and not self.in_burst:",
       "if len(q) > BURST_N and not self.in_burst:", "checksum burst needs six bad lines, not five",
       "test_integrity_stream.py"),
    _m("integrity-gap-factor", "integrity.py", "if nominal is not None and dt > GAP_FACTOR * nominal:",
       "if nominal is not None and dt > 2 * GAP_FACTOR * nominal:", "epoch gaps only past six intervals",
       "test_integrity_stream.py"),
)


def check_snippets(root: Path, mutants: tuple[Mutant, ...]) -> list[str]:
    """Problems with the table against the tree at `root` (empty when every snippet occurs once)."""
    bad = []
    for m in mutants:
        path = root / m.file
        if not path.exists():
            bad.append(f"{m.name}: {m.file} missing")
            continue
        k = path.read_text().count(m.old)
        if k != 1:
            bad.append(f"{m.name}: snippet found {k} times in {m.file}: {m.old!r}")
        if m.old == m.new:
            bad.append(f"{m.name}: replacement equals the original")
    return bad


def _env(copy: Path) -> dict[str, str]:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(copy)  # the copy's livefix, not the editable install of the working tree
    env["PYTHONDONTWRITEBYTECODE"] = "1"  # a same-size mutant within one second must not reuse a stale .pyc
    env.pop("LIVEFIX_PURE", None)
    return env


def _selection(paths: list[str], ignore: tuple[str, ...]) -> list[str]:
    """Paths without the ignored ones and without those inside another listed folder: pytest 8 given
    `tests/analysis tests/analysis/test_x.py` collects only test_x.py, not the whole folder."""
    keep = [p for p in dict.fromkeys(paths) if p not in ignore]
    return [p for p in keep if not any(q != p and p.startswith(q.rstrip("/") + "/") for q in keep)]


def _pytest(copy: Path, selection: list[str], deselect: list[str], timeout: float,
            stop_first: bool = True, ignore: tuple[str, ...] = ()) -> tuple[str, list[str], float]:
    """('passed' | 'failed' | 'timeout' | 'error', failed node ids, seconds); a passing run's last
    entry in the ids is its tally ("N passed"), for the record."""
    cmd = [sys.executable, "-m", "pytest", "-o", "addopts=", "-q", "-p", "no:cacheprovider", "--timeout", "120",
           "-rfE"]
    cmd += ["-x"] if stop_first else []
    cmd += [f"--deselect={d}" for d in deselect] + [f"--ignore={i}" for i in ignore]
    cmd += _selection(selection, ignore) or [SUITE]  # never the whole tests/ by default
    t0 = time.monotonic()
    try:
        p = subprocess.run(cmd, cwd=copy, env=_env(copy), capture_output=True, text=True, timeout=timeout)
    except subprocess.TimeoutExpired:
        return "timeout", [], time.monotonic() - t0
    dt = time.monotonic() - t0
    failed = re.findall(r"^(?:FAILED|ERROR) (\S+)", p.stdout, flags=re.M)
    if p.returncode == 0:
        return "passed", re.findall(r"\d+ passed", p.stdout)[-1:], dt
    if p.returncode == 1:
        return "failed", failed, dt
    return "error", failed or [p.stdout.strip().splitlines()[-1] if p.stdout.strip() else f"rc {p.returncode}"], dt


def make_copy(tmp: Path) -> Path:
    """The repository copied to tmp/main, with tmp/shared pointing at the real-data corpus's folder so
    the tests that read ../shared/realdata find it (nothing is copied from it)."""
    copy = tmp / "main"
    shutil.copytree(ROOT, copy, ignore=IGNORE, symlinks=True)
    shared = ROOT.parent / "shared"
    if shared.is_dir():
        (tmp / "shared").symlink_to(shared)
    probe = subprocess.run([sys.executable, "-c", "import livefix; print(livefix.__file__)"], cwd=copy,
                           env=_env(copy), capture_output=True, text=True)
    if not probe.stdout.strip().startswith(str(copy)):
        raise SystemExit(f"livefix in the copy imports from {probe.stdout.strip()!r}, not {copy}")
    return copy


def run(mutants: tuple[Mutant, ...], timeout: float, wide: bool, ignore: tuple[str, ...] = ()) -> list[dict]:
    tmp = Path(tempfile.mkdtemp(prefix="livefix-mutants-"))
    try:
        copy = make_copy(tmp)
        bad = check_snippets(copy, mutants)
        if bad:
            raise SystemExit("mutant table does not match the tree:\n  " + "\n  ".join(bad))
        named = sorted({t for m in mutants for t in m.tests})
        base_sel = _selection(sorted(set(named) | ({SUITE} if wide else set())), ignore)
        print(f"baseline on the unmutated copy: {' '.join(base_sel)}", flush=True)
        status, base_failed, dt = _pytest(copy, base_sel, [], timeout * 4, stop_first=False, ignore=ignore)
        if status not in ("passed", "failed"):
            raise SystemExit(f"baseline run {status}: {base_failed}")
        base_failed = base_failed if status == "failed" else []
        print(f"  baseline {status} in {dt:.0f} s; deselected: {base_failed or 'none'}", flush=True)
        rows = []
        for i, m in enumerate(mutants, 1):
            path = copy / m.file
            original = path.read_text()
            path.write_text(original.replace(m.old, m.new, 1))
            try:
                status, failed, dt = _pytest(copy, list(m.tests), base_failed, timeout, ignore=ignore)
                stage = "named"
                if status == "passed" and wide:
                    status, failed, dt2 = _pytest(copy, [SUITE, *m.tests], base_failed, timeout, ignore=ignore)
                    stage, dt = "named + " + SUITE, dt + dt2
            finally:
                path.write_text(original)
            verdict = "survived" if status == "passed" else "killed"
            by = failed[0] if failed else status  # the first failing test; "passed" for a survivor
            rows.append({"name": m.name, "file": m.file, "breaks": m.breaks, "verdict": verdict,
                         "by": by, "stage": stage, "s": dt, "equivalent": m.equivalent})
            print(f"[{i:2}/{len(mutants)}] {verdict:8} {m.name:26} {dt:6.1f} s  {rows[-1]['by']}", flush=True)
        return [{"baseline_failed": base_failed}, *rows]
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


def write_result(out: list[dict], path: Path, note: str) -> None:
    base, rows = out[0]["baseline_failed"], out[1:]
    killed = sum(r["verdict"] == "killed" for r in rows)
    lines = ["# Mutation check of the analysis tests", "",
             f"Run {time.strftime('%Y-%m-%d %H:%M UTC', time.gmtime())} by `bench/mutants.py` ({note}).",
             f"Killed {killed} of {len(rows)} mutants; survived {len(rows) - killed}.", "",
             "Tests failing on the unmutated copy (deselected): " + (", ".join(base) if base else "none"), "",
             "| # | mutant | file | fault | result | killed by (survivor: tests passed) | tests run | s |",
             "| --- | --- | --- | --- | --- | --- | --- | --- |"]
    for i, r in enumerate(rows, 1):
        lines.append(f"| {i} | {r['name']} | {r['file']} | {r['breaks']} | {r['verdict']} | {r['by']} | "
                     f"{r['stage']} | {r['s']:.0f} |")
    alive = [r for r in rows if r["verdict"] == "survived"]
    if alive:
        lines += ["", "## Survivors", ""]
        lines += [f"- {r['name']}: " + (f"equivalent mutant: {r['equivalent']}" if r["equivalent"] else
                                       "a gap in the tests: no test sees this fault") for r in alive]
    path.write_text("\n".join(lines) + "\n")


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n", 1)[0])
    ap.add_argument("--only", nargs="*", help="mutant names to run (default: all)")
    ap.add_argument("--check", action="store_true", help="only check that every snippet occurs exactly once")
    ap.add_argument("--narrow", action="store_true", help="named tests only (no tests/analysis re-run)")
    ap.add_argument("--timeout", type=float, default=600.0, help="seconds per mutant run")
    ap.add_argument("--out", type=Path, default=RESULT)
    ap.add_argument("--ignore", action="append", default=[],
                    help="test file left out everywhere (e.g. the kill tests, to see the suite without them)")
    a = ap.parse_args()
    names = {m.name for m in MUTANTS}
    if len(names) != len(MUTANTS):
        raise SystemExit("duplicate mutant names")
    chosen = MUTANTS if not a.only else tuple(m for m in MUTANTS if m.name in set(a.only))
    if a.only and (unknown := set(a.only) - names):
        raise SystemExit(f"unknown mutants: {sorted(unknown)}; valid: {sorted(names)}")
    bad = check_snippets(ROOT, chosen)
    if bad:
        print("mutant table does not match the tree:\n  " + "\n  ".join(bad), file=sys.stderr)
        return 2
    if a.check:
        print(f"{len(chosen)} mutants: every snippet occurs exactly once")
        return 0
    out = run(chosen, a.timeout, wide=not a.narrow, ignore=tuple(a.ignore))
    rows = out[1:]
    survived = [r["name"] for r in rows if r["verdict"] == "survived"]
    note = "named tests only" if a.narrow else f"named tests, then {SUITE} for those left alive"
    if a.only:
        note += "; subset: " + ", ".join(a.only)
    if a.ignore:
        note += "; left out: " + ", ".join(a.ignore)
    write_result(out, a.out, note)
    print(f"\nkilled {len(rows) - len(survived)} / {len(rows)}; survived: {', '.join(survived) or 'none'}")
    print(f"written {a.out}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
