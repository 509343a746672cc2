"""The site-record facts of a report, renderer-neutral: sections of (label, plain text) rows.

Why one module: the Markdown, HTML and PDF documents all show the same figures in the same order
with the same words and units, so a customer reading any of them reads the same record. Values
are already formatted plain text (units included); renderers only escape and lay them out. The
numbers come from the receiver's `record` (livefix.report.figures), the same object the JSON
carries. Section ids (stable anchors): measurement, site, position, reference, scatter, dop,
satellites, signal, sky, availability, timing, provenance.
"""

from __future__ import annotations

from typing import Any, NamedTuple

from livefix.analysis import catalogue
from livefix.report.document import fmt_value
from livefix.report.figures import record as build_record
from livefix.report.plot_style import fix_style, system_style
from livefix.site import coerce as coerce_site

NOT_MEASURED = "not measured"
NO_DATUM = "datum as reported by the receiver, not stated (no DTM sentence)"
# NMEA 0183 DTM local datum codes livefix names (from memory); others are shown as given
DATUMS = {"W84": "WGS 84", "W72": "WGS 72", "S85": "SGS 85", "P90": "PE 90", "999": "user defined"}
HOST_DIFF_S = 1.0  # host and receiver clocks shown apart when they differ by more than this
VERDICTS = {None: "no limits set", "pass": "PASS", "fail": "FAIL",
            "incomplete": "INCOMPLETE (run ended early)", "inconclusive": "INCONCLUSIVE (run longer)"}


class Section(NamedTuple):
    """One block of the record: `id` is a stable anchor for renderers and tests."""

    id: str
    title: str
    rows: list[tuple[str, str]]
    note: str


def _lab(path: str, default: str) -> str:
    """The catalogue's label of a published figure, `default` for a record-only figure."""
    return catalogue.label(path) if catalogue.known(path) else default


def _v(value: Any, digits: int, unit: str = "") -> str:
    if value is None:
        return NOT_MEASURED
    return fmt_value(value, digits) + "°" if unit == "°" else fmt_value(value, digits, unit)


def fix_label(name: str | None) -> str:
    """A fix type for people ("RTK fixed", "Single")."""
    text = fix_style(name or "").label
    return text[:1].upper() + text[1:]


def _pct(share: float | None, digits: int = 1) -> str:
    return NOT_MEASURED if share is None else f"{fmt_value(share * 100, digits)} %"


def _deg(value: float | None, pos: str, neg: str) -> str:
    return NOT_MEASURED if value is None else f"{abs(value):.9f}° {pos if value >= 0 else neg}"


def record_of(report: dict[str, Any], rx: dict[str, Any]) -> dict[str, Any]:
    """The receiver's record; rebuilt from its analysis for a report written before format 2."""
    rec = rx.get("record")
    if isinstance(rec, dict):
        return rec
    return build_record(rx.get("analysis") or {}, report.get("meta") or {}, source=rx.get("source"),
                        results=rx.get("results"))


def measurement(rec: dict[str, Any]) -> Section:
    m = rec.get("measurement") or {}
    rows = [("Start (receiver UTC)", m.get("start_utc") or NOT_MEASURED),
            ("End (receiver UTC)", m.get("end_utc") or NOT_MEASURED),
            ("Duration", _v(m.get("duration_s"), 1, "s")), ("Epochs", _v(m.get("epochs"), 0))]
    diffs = [d for d in (m.get("host_minus_utc_start_s"), m.get("host_minus_utc_end_s")) if d is not None]
    if m.get("start_utc") is None or any(abs(d) > HOST_DIFF_S for d in diffs):
        rows += [("Start (host clock)", m.get("start_host") or NOT_MEASURED),
                 ("End (host clock)", m.get("end_host") or NOT_MEASURED),
                 ("Host minus receiver time", ", ".join(_v(d, 3, "s") for d in diffs) or NOT_MEASURED)]
    note = "" if m.get("date_known") is not False else "The receiver gave no valid date: times are UTC time of day."
    return Section("measurement", "Measurement", rows, note)


def site(report: dict[str, Any]) -> Section:
    meta = report.get("meta") or {}
    try:
        rows = coerce_site(meta.get("site")).rows()
    except ValueError:  # a hand-edited report JSON: show the raw fields rather than nothing
        rows = [(str(k), str(v)) for k, v in (meta.get("site") or {}).items()] if isinstance(meta.get("site"), dict) else []
    return Section("site", "Site", rows, "")


def position(rec: dict[str, Any]) -> Section:
    p = rec.get("position") or {}
    if p.get("lat_deg") is None:
        return Section("position", "Median position", [("Position", "no fix: " + NOT_MEASURED)], "")
    local, ref = p.get("datum_local"), p.get("datum_reference")
    datum = NO_DATUM if not local else (
        f"{DATUMS.get(local, local)} (DTM local datum {local}"
        + (f", reference {DATUMS.get(ref, ref)})" if ref else ")"))
    res = p.get("resolution_m") or {}
    rows = [("Fix type", f"{fix_label(p.get('fix'))} ({p.get('epochs')} epochs)"),
            ("Latitude", _deg(p.get("lat_deg"), "N", "S")), ("Longitude", _deg(p.get("lon_deg"), "E", "W")),
            ("Ellipsoidal height", _v(p.get("h_ellipsoidal_m"), 3, "m")),
            ("Geoid separation", _v(p.get("geoid_separation_m"), 3, "m") if p.get("geoid_separation_m")
             is not None else "not given by the receiver"),
            ("Height above mean sea level", _v(p.get("h_msl_m"), 3, "m") if p.get("h_msl_m")
             is not None else "not given by the receiver"),
            ("Datum", datum)]
    note = (f"Median of each coordinate over the {fix_label(p.get('fix'))} epochs, within "
            f"{fmt_value(max(res.values(), default=0), 4, 'm')} of the exact sample median.")
    return Section("position", "Median position", rows, note)


def reference(rec: dict[str, Any]) -> Section:
    r = rec.get("reference")
    if not r:
        return Section("reference", "Offset from the reference",
                       [("Reference", "none given (livefix report --ref LAT,LON,H)")], "")
    rows = [("Reference", f"{_deg(r.get('lat_deg'), 'N', 'S')}, {_deg(r.get('lon_deg'), 'E', 'W')}, "
                          f"{_v(r.get('h_ellipsoidal_m'), 3, 'm')} ellipsoidal"),
            ("Reference from", str(r.get("source"))),
            ("East", _v(r.get("offset_e_m"), 3, "m")), ("North", _v(r.get("offset_n_m"), 3, "m")),
            ("Up", _v(r.get("offset_u_m"), 3, "m")), ("Horizontal", _v(r.get("offset_horizontal_m"), 3, "m"))]
    return Section("reference", "Offset from the reference", rows,
                   "The median position minus the reference, in east/north/up about the reference.")


def scatter(rec: dict[str, Any]) -> Section:
    rows = []
    for fix, f in (rec.get("scatter") or {}).items():
        rows.append((fix_label(fix),
                     f"{_pct(f.get('share'))} of settled epochs ({f.get('epochs')}); "
                     f"{_lab('position.cep50_m', 'CEP50')} {_v(f.get('cep50_m'), 3, 'm')}, "
                     f"{_lab('position.cep95_m', 'CEP95')} {_v(f.get('cep95_m'), 3, 'm')}, "
                     f"{_lab('position.v95_m', 'Vertical 95 %')} {_v(f.get('v95_m'), 3, 'm')}"))
    return Section("scatter", "Scatter per fix type", rows or [("Scatter", NOT_MEASURED)],
                   "About the mean of each fix type; jumps and re-convergence left out.")


def dop(rec: dict[str, Any]) -> Section:
    d = rec.get("dop") or {}
    rows = []
    for k in ("pdop", "hdop", "vdop"):
        cells = [f"{kind} median {_v(d[kind][k].get('median'), 2)}, 95th percentile {_v(d[kind][k].get('p95'), 2)}"
                 for kind in ("reported", "computed") if isinstance(d.get(kind), dict) and k in d[kind]]
        rows.append((k.upper(), "; ".join(cells) or NOT_MEASURED))
    return Section("dop", "Dilution of precision", rows,
                   "Reported: as the receiver gave it (GSA/GGA). Computed: from the used satellites' azimuth "
                   "and elevation. DOP has no unit; percentiles within about 0.25 %.")


def satellites(rec: dict[str, Any]) -> Section:
    by = (rec.get("satellites") or {}).get("by_system") or {}
    rows = []
    for letter, c in by.items():
        name = "All systems" if letter == "all" else system_style(letter).label
        rows.append((name, "; ".join(
            f"{word} median {_v((c.get(kind) or {}).get('median'), 1)}, minimum {_v((c.get(kind) or {}).get('min'), 0)}"
            for kind, word in (("in_view", "in view"), ("tracked", "tracked"), ("used", "used")))))
    return Section("satellites", "Satellites per constellation", rows or [("Satellites", NOT_MEASURED)],
                   "Counts of satellites per epoch; tracked: with a C/N0; used: in the solution (GSA).")


def signal(rec: dict[str, Any], analysis: dict[str, Any]) -> Section:
    rows = [(_lab("signal.cn0_mean_dbhz", "Mean C/N0"),
             _v((analysis.get("signal") or {}).get("cn0_mean_dbhz"), 1, "dB-Hz"))]
    for b in rec.get("cn0_by_elevation") or []:
        if b.get("samples"):
            rows.append((f"Elevation {b.get('from_deg')}–{b.get('to_deg')}°",
                         f"{_v(b.get('mean_dbhz'), 1, 'dB-Hz')} ({b.get('samples')} samples)"))
    return Section("signal", "C/N0 by elevation", rows, "Mean carrier-to-noise density of the tracked signals.")


def sky(rec: dict[str, Any]) -> Section:
    s = rec.get("sky") or {}
    blocked = [f"blocked {x.get('az_from_deg')}–{x.get('az_to_deg')}° below {x.get('below_el_deg')}°"
               for x in s.get("obstructed") or []]
    weak = [f"weak {x.get('az_from_deg')}–{x.get('az_to_deg')}° at {x.get('el_from_deg')}–{x.get('el_to_deg')}° "
            f"elevation, {_v(x.get('below_curve_db'), 1, 'dB')} below the C/N0 curve" for x in s.get("weak_sectors") or []]
    rows = [("Obstructed sectors", "; ".join(blocked) or "none found"),
            ("Weak-signal sectors", "; ".join(weak) or "none found"),
            (_lab("sky.clear_above_deg", "Clear sky above"), _v(s.get("clear_above_deg"), 0, "°")),
            (_lab("sky.visible_share", "Visible share of the sky"), _pct(s.get("visible_share")))]
    return Section("sky", "Sky: obstructions and weak signal", rows,
                   f"A sector is weak when its mean C/N0 lies {fmt_value(s.get('weak_sector_db'), 1, 'dB')} or more "
                   "below the session's C/N0-against-elevation curve.")


def availability(rec: dict[str, Any]) -> Section:
    a = rec.get("availability") or {}
    rows = [(_lab("derived.fix_share", "Fix availability (whole run)"), _pct(a.get("fix_share"), 2))]
    rows += [(f"{fix_label(k) if k != 'none' else 'No fix'} share", _pct(v, 2))
             for k, v in (a.get("by_fix_share") or {}).items()]
    rows += [(_lab("fix.outages_total", "Outages"), _v(a.get("outages"), 0)),
             (_lab("fix.longest_outage_s", "Longest outage"), _v(a.get("longest_outage_s"), 1, "s")),
             (_lab("fix.jumps_total", "Jumps"), _v(a.get("jumps"), 0)),
             (_lab("position.jumps.count", "Position jumps left out of the scatter"), _v(a.get("position_jumps"), 0)),
             (_lab("stream.stall_count", "Stalls"), _v(a.get("stalls"), 0)),
             (_lab("stream.data_gaps.count", "Data gaps"),
              f"{_v(a.get('data_gaps'), 0)} ({_v(a.get('data_gap_s'), 1, 's')})")]
    return Section("availability", "Availability and interruptions", rows,
                   "Shares of the known time; data gaps (no bytes) are kept out of availability.")


def timing(rec: dict[str, Any]) -> Section:
    t = rec.get("timing") or {}
    ttff = _v(t.get("ttff_s"), 1, "s") if t.get("ttff_observed") is not False else "not observed (the run began with a fix)"
    rows = [(_lab("fix.ttff_s", "TTFF"), ttff),
            (_lab("fix.ttff_rtk_fixed_s", "Time to RTK fixed"), _v(t.get("ttff_rtk_fixed_s"), 1, "s")),
            (_lab("position.convergence_s", "Convergence after first fix"), _v(t.get("convergence_h_s"), 1, "s")),
            (_lab("position.convergence_v_s", "Vertical convergence"), _v(t.get("convergence_v_s"), 1, "s"))]
    d, half = t.get("drift_mm_per_h"), t.get("drift_ci95_half_mm_per_h") or {}
    if d:
        rows.append(("Drift (east, north, up)", ", ".join(
            f"{_v(d.get(k), 1)}" + (f" ± {_v(half.get(k), 1)}" if half.get(k) is not None else "")
            for k in ("e", "n", "u")) + " mm/h (± half the 95 % interval)"))
    hi = t.get("drift_h_ci95_mm_per_h")
    rows.append((_lab("derived.drift_h_mm_per_h", "Horizontal drift"), _v(t.get("drift_h_mm_per_h"), 1, "mm/h")
                 + (f" (95 % interval {_v(hi[0], 1)} to {_v(hi[1], 1)} mm/h)" if hi else "")))
    return Section("timing", "TTFF, convergence and drift", rows, "")


def provenance(report: dict[str, Any], rec: dict[str, Any]) -> Section:
    p = rec.get("provenance") or {}
    prof = (report.get("meta") or {}).get("profile")
    rows = [("Input", str(p.get("input") or "-")), ("Input SHA-256", p.get("input_sha256") or "not a file"),
            ("Input size", _v(p.get("input_bytes"), 0, "bytes")),
            ("livefix version", str(p.get("livefix_version") or "-")),
            ("Profile", f"{prof.get('name')} ({prof.get('origin')})" if prof else "none: no limits set")]
    for th in p.get("thresholds") or []:
        rows.append((f"Limit: {th.get('description') or th.get('name')}", f"{th.get('op')} {_v(th.get('limit'), 4, th.get('unit') or '')}; "
                                                 f"source: {th.get('source') or 'not given'}"))
    return Section("provenance", "Input and provenance", rows, "")


def sections(report: dict[str, Any], rx: dict[str, Any]) -> list[Section]:
    """The record of one receiver `rx` of `report`, in reading order."""
    rec = record_of(report, rx)
    return [measurement(rec), site(report), position(rec), reference(rec), scatter(rec), dop(rec),
            satellites(rec), signal(rec, rx.get("analysis") or {}), sky(rec), availability(rec), timing(rec),
            provenance(report, rec)]


def verdict_text(verdict: str | None) -> str:
    return VERDICTS.get(verdict, str(verdict))


def summary(report: dict[str, Any]) -> list[tuple[str, str]]:
    """The one-screen summary: the verdict first, then a handful of headline figures per receiver
    (labels carry the receiver's name when there are several)."""
    rows = [("Verdict", verdict_text(report.get("verdict")))]
    rxs = report.get("receivers") or []
    for rx in rxs:
        tag = f"{rx.get('name')}: " if len(rxs) > 1 else ""
        rows += [(tag + k, v) for k, v in _headline(record_of(report, rx))]
    return rows


def _headline(rec: dict[str, Any]) -> list[tuple[str, str]]:
    m, p, a, t = (rec.get(k) or {} for k in ("measurement", "position", "availability", "timing"))
    by_fix = (rec.get("scatter") or {}).get(p.get("fix") or "") or {}
    used = (((rec.get("satellites") or {}).get("by_system") or {}).get("all") or {}).get("used") or {}
    hdop = ((rec.get("dop") or {}).get("reported") or {}).get("hdop") or {}
    return [("Measured", f"{m.get('start_utc') or NOT_MEASURED} for {_v(m.get('duration_s'), 0, 's')}"),
            ("Median position", NOT_MEASURED if p.get("lat_deg") is None else
             f"{_deg(p.get('lat_deg'), 'N', 'S')}, {_deg(p.get('lon_deg'), 'E', 'W')}, "
             f"{_v(p.get('h_ellipsoidal_m'), 3, 'm')} ellipsoidal ({fix_label(p.get('fix'))})"),
            (_lab("derived.fix_share", "Fix availability"), _pct(a.get("fix_share"), 2)),
            (f"CEP95 ({fix_label(p.get('fix'))})", _v(by_fix.get("cep95_m"), 3, "m")),
            ("Satellites used (median, minimum)", f"{_v(used.get('median'), 1)}, {_v(used.get('min'), 0)}"),
            ("HDOP (median, reported)", _v(hdop.get("median"), 2)),
            (_lab("fix.ttff_s", "TTFF"), _v(t.get("ttff_s"), 1, "s")),
            (_lab("fix.outages_total", "Outages"), _v(a.get("outages"), 0))]
