"""The report document: one JSON-able dict made from the final snapshots, verdicts and metadata.

Every renderer (JSON, Markdown, HTML, JUnit) reads this one dict, so they always agree.
"""

from __future__ import annotations

import json
import math
import time
from dataclasses import dataclass, field
from typing import Any

from livefix import __version__
from livefix.analysis import catalogue, paths
from livefix.faults import report_line
from livefix.report.figures import file_sha256, record
from livefix.site import SiteInfo
from livefix.site import coerce as coerce_site
from livefix.timefmt import iso

FORMAT = "livefix-report/2"  # 2: meta.site is the site record object; receivers carry `record`

CAUTIONS = (
    "Work at height: antennas sit on roofs, masts and towers. Follow the local rules for work at "
    "height, use fall protection and do not work alone.",
    "Lightning and surges: ground the antenna mast and protect the antenna cable with a surge "
    "arrester where it enters the building, as local electrical codes require.",
    "This report records what the receiver said during the run. It is not a survey certificate and "
    "does not replace a survey or an inspection by a licensed professional.",
    "Local codes, permits and licensed practice take precedence over anything in this report.",
)

# Comparison table rows: (label, dotted path, unit, digits), from the metric catalogue.
KEY_FIGURES: tuple[tuple[str, str, str, int], ...] = catalogue.key_figures()


@dataclass(slots=True)
class ReceiverRun:
    """What one receiver produced in a run; `results` is None when no profile was applied."""

    name: str
    source: str
    analysis: dict[str, Any]
    results: list[Any] | None = None  # livefix.check.profile.Result
    recording: str | None = None
    recording_error: str | None = None
    ttff_cycles: dict[str, Any] | None = None
    link: str = ""
    link_detail: str = ""
    extra: dict[str, Any] = field(default_factory=dict)

    @property
    def verdict(self) -> str | None:
        ok = self.passed
        if ok is None:
            return None
        if ok:
            return "pass"
        return "inconclusive" if self.inconclusive else "fail"

    @property
    def inconclusive(self) -> bool:
        """Not passed only because some figures' 95 % intervals straddle their limits (run longer)."""
        bad = [r for r in self.results or [] if not r.passed]
        ttff_ok = self.ttff_cycles is None or bool(self.ttff_cycles.get("passed", False))
        return bool(bad) and ttff_ok and all(getattr(r, "inconclusive", False) for r in bad)

    @property
    def passed(self) -> bool | None:
        if self.results is None and self.ttff_cycles is None:
            return None
        ok = all(r.passed for r in self.results or [])
        if self.ttff_cycles is not None:
            ok = ok and bool(self.ttff_cycles.get("passed", False))
        return ok


def figure(analysis: dict[str, Any], path: str) -> float | None:
    """A key figure by dotted path (lists count), None when not measured."""
    return paths.figure(analysis, path)[0]


def _site(site: SiteInfo | str, runs: list[ReceiverRun]) -> dict[str, Any]:
    """meta.site: the site record as JSON (livefix.site), with what a single receiver announced
    about itself (TXT: analysis `receiver`) where the user gave no model or firmware."""
    info = coerce_site(site)
    said = (runs[0].analysis or {}).get("receiver") if len(runs) == 1 else None
    if isinstance(said, dict):
        info = info.with_announced({"receiver_model": said.get("model"), "receiver_firmware": said.get("firmware")})
    return info.to_json()


def build_report(runs: list[ReceiverRun], *, profile: Any = None, site: SiteInfo | str = "", notes: str = "",
                 ref: tuple[float, float, float] | None = None, ref_source: str = "--ref",
                 started: float | None = None,
                 ended: float | None = None, complete: bool = True, incomplete_reason: str = "",
                 command: str = "") -> dict[str, Any]:
    """The whole document. `profile` is a livefix.check.profile.Profile or None (no verdict)."""
    verdicts = [r.passed for r in runs]
    if profile is None:
        verdict = None
    elif not complete:
        verdict = "incomplete"
    else:
        verdict = "pass" if runs and all(v is True for v in verdicts) else "fail"
        if verdict == "fail" and runs and all(r.verdict in ("pass", "inconclusive") for r in runs):
            verdict = "inconclusive"  # nothing failed; some intervals straddle their limits
    meta = {
        "livefix_version": __version__, "generated": iso(time.time()), "command": command,
        "site": _site(site, runs), "notes": notes,
        "ref": None if ref is None else {"lat": ref[0], "lon": ref[1], "h": ref[2], "source": ref_source},
        "profile": None if profile is None else {
            "name": profile.name, "title": profile.title, "origin": profile.origin,
            "description": profile.description, "source": profile.source},
        "started": iso(started), "ended": iso(ended),
        "duration_s": None if started is None or ended is None else round(ended - started, 3),
        "complete": complete, "incomplete_reason": incomplete_reason,
    }
    receivers = []
    for r in runs:
        results = None if r.results is None else [x.to_json() for x in r.results]
        sha, size = file_sha256(r.source)
        receivers.append({
            "name": r.name, "source": r.source, "recording": r.recording,
            "recording_error": r.recording_error, "link": r.link, "link_detail": r.link_detail,
            "verdict": ("incomplete" if not complete and r.verdict else r.verdict),
            "results": results, "ttff_cycles": r.ttff_cycles,
            "record": record(r.analysis, meta, source=r.source, results=results, sha256=sha, size=size),
            "analysis": r.analysis, **r.extra})
    return {"format": FORMAT, "meta": meta, "verdict": verdict, "receivers": receivers,
            "comparison": comparison(runs), "cautions": list(CAUTIONS)}


def comparison(runs: list[ReceiverRun]) -> dict[str, Any]:
    """Side-by-side key figures, and per-threshold outcomes when a profile was applied."""
    rows = []
    for label, path, unit, digits in KEY_FIGURES:
        vals = [figure(r.analysis, path) for r in runs]
        rows.append({"label": label, "metric": path, "unit": unit, "digits": digits, "values": vals})
    names: list[str] = []
    for r in runs:
        for x in r.results or []:
            if x.name not in names:
                names.append(x.name)
    checks = []
    for n in names:
        cells = []
        for r in runs:
            hit = next((x for x in r.results or [] if x.name == n), None)
            cells.append(None if hit is None else {"measured": hit.measured, "passed": hit.passed})
        checks.append({"name": n, "values": cells})
    return {"receivers": [r.name for r in runs], "rows": rows, "checks": checks}


def _clean(value: Any) -> Any:
    """JSON has no NaN/Infinity: write them as null so every parser reads the file."""
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_clean(v) for v in value]
    if isinstance(value, bytes | bytearray):
        return bytes(value).decode("utf-8", errors="backslashreplace")
    return value


def to_json(report: Any, indent: int | None = 1) -> str:
    return json.dumps(_clean(report), indent=indent, ensure_ascii=True, default=str)


def fmt_value(value: float | None, digits: int = 3, unit: str = "") -> str:
    """A number for people: None -> 'not measured', no trailing zeros, trailing unit when given."""
    if value is None:
        return "not measured"
    if float(value).is_integer() and abs(value) < 1e15:
        text = f"{value:.0f}"
    else:
        text = f"{value:.{digits}f}".rstrip("0").rstrip(".") if digits else f"{value:.0f}"
    return f"{text} {unit}".strip() if unit and unit not in ("count", "ratio") else text


def data_span(report: dict[str, Any]) -> str:
    """What stretch of receiver data each receiver's figures cover (a file replays in a second)."""
    parts = []
    for r in report.get("receivers", []):
        st = (r.get("analysis") or {}).get("stream") or {}
        dur, n, hz = st.get("duration_s"), st.get("epochs"), st.get("rate_hz")
        if dur is None:
            continue
        parts.append(f"{r.get('name')}: {fmt_value(dur, 0, 's')} of data, {n} epochs at {fmt_value(hz, 1)} Hz"
                     + ("; date unknown (times are UTC time of day)" if st.get("date_known") is False else ""))
    return "; ".join(parts) or "-"


def internal_errors(report: dict[str, Any]) -> int:
    """livefix's own errors over every receiver of the run (livefix.faults); zero when all is well."""
    return sum(int((r.get("analysis") or {}).get("internal_errors") or 0) for r in report.get("receivers", []))


def meta_facts(report: dict[str, Any], site_rows: bool = True) -> list[tuple[str, str]]:
    """The run's facts as (label, plain text) rows, shared by the Markdown and HTML documents
    (`site_rows` False: without the site record, for a document that shows it as its own section)."""
    meta = report["meta"]
    prof = meta.get("profile")
    site = coerce_site(meta.get("site")).rows() if site_rows else []
    facts = [*site, ("Report notes", meta.get("notes") or "-"),
             ("Profile", f"{prof['name']} ({prof['origin']})" if prof else "none: no limits set (figures only)"),
             ("Run started", meta.get("started") or "-"), ("Run ended", meta.get("ended") or "-"),
             ("Run time", fmt_value(meta.get("duration_s"), 0, "s")),
             ("Data", data_span(report)),
             ("Complete", "yes" if meta.get("complete") else f"no: {meta.get('incomplete_reason') or 'stopped'}"),
             ("livefix version", meta.get("livefix_version", "")),
             ("livefix internal errors", report_line(internal_errors(report)))]
    if meta.get("ref"):
        r = meta["ref"]
        facts.append(("Reference point", f"{r['lat']:.9f}, {r['lon']:.9f}, {r['h']:.3f} m (ellipsoidal)"))
    return facts


def position_facts(analysis: dict[str, Any]) -> list[tuple[str, str]]:
    """The static receiver's position figures for people: motion, scatter per fix type, jumps left
    out, convergence and drift as value +- half its 95 % interval (thresholds used are named)."""
    p, m = analysis.get("position") or {}, analysis.get("motion") or {}
    out: list[tuple[str, str]] = []
    state, share = m.get("state"), m.get("moving_share")
    if state == "moving":
        out.append(("Motion", f"the receiver moved ({fmt_value(share * 100 if share is not None else None, 0)} % "
                              "of fixed epochs): static figures not measured (receiver moving)"))
    elif state == "mixed":
        out.append(("Motion", f"the receiver moved for {fmt_value(share * 100, 1)} % of fixed epochs; static "
                              f"figures cover the longest of {p.get('segments')} static segment(s)"))
    elif state == "static":
        out.append(("Motion", "static for the whole session"))
    rule = m.get("rule") or {}
    if rule:
        out.append(("Motion rule", f"moving when the position moves more than {rule.get('spread_m')} m in each "
                                   f"half of {rule.get('window_s')} s and the speed over ground (when given) "
                                   f"exceeds {rule.get('speed_mps')} m/s"))
    for fix, f in (p.get("by_fix") or {}).items():
        out.append((f"Scatter {fix}", f"{fmt_value((f.get('share') or 0) * 100, 1)} % of settled epochs; CEP50 "
                                      f"{fmt_value(f.get('cep50_m'), 3, 'm')}, CEP95 {fmt_value(f.get('cep95_m'), 3, 'm')}, "
                                      f"V95 {fmt_value(f.get('v95_m'), 3, 'm')} (about the mean)"))
    j = p.get("jumps") or {}
    if j:
        out.append(("Jumps left out", f"{j.get('count', 0)} ({j.get('excluded_epochs', 0)} epochs, "
                                      f"{fmt_value(j.get('excluded_s'), 1, 's')}); " + "; ".join(
                                          f"{x.get('start')}: {fmt_value(x.get('size_h_m'), 3, 'm')} for "
                                          f"{fmt_value(x.get('duration_s'), 1, 's')} ({x.get('end')})"
                                          for x in (j.get("items") or [])[-5:])))
    c = p.get("convergence") or {}
    if c:
        out.append(("Convergence", f"horizontal {fmt_value(p.get('convergence_s'), 1, 's')} within "
                                   f"{fmt_value(c.get('radius_h_m'), 3, 'm')}, vertical "
                                   f"{fmt_value(p.get('convergence_v_s'), 1, 's')} within "
                                   f"{fmt_value(c.get('radius_v_m'), 3, 'm')}, from the first fix, of the "
                                   f"{c.get('centre')}"))
    d, ci = p.get("drift_mm_per_h"), p.get("drift_ci95_mm_per_h") or {}
    if isinstance(d, dict):
        axes = []
        for k in ("e", "n", "u"):
            iv = ci.get(k)
            pm = f" ± {fmt_value((iv[1] - iv[0]) / 2, 1)}" if isinstance(iv, list) and None not in iv else ""
            axes.append(f"{k} {fmt_value(d.get(k), 1)}{pm}")
        hi = p.get("drift_h_ci95_mm_per_h")
        hz = (f"; horizontal {fmt_value(p.get('drift_h_mm_per_h'), 1)} (95 % interval {fmt_value(hi[0], 1)} .. "
              f"{fmt_value(hi[1], 1)})") if isinstance(hi, list) and None not in hi else ""
        out.append(("Drift mm/h (95 %)", ", ".join(axes) + hz))
    if p.get("height_datum") == "msl":
        out.append(("Heights", "above mean sea level only (no geoid separation given): not ellipsoidal"))
    return out
