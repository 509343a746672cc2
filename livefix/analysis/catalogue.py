"""The metric catalogue: every figure livefix publishes, with one name, unit, path and meaning.

Profiles, check results, reports, the monitor's labels and the Prometheus exporter all read this
one table, so a figure means the same everywhere; docs/metrics.md is generated from it
(`make docs`, or `python -m livefix.analysis.catalogue > docs/metrics.md`) and a test keeps the
file in step. A path is in the language of livefix.analysis.paths; a new figure of the snapshot
that people should name gets an entry here.
"""

from __future__ import annotations

from dataclasses import dataclass

from livefix.analysis.paths import UNITS


@dataclass(frozen=True, slots=True)
class Metric:
    """One published figure."""

    path: str         # dotted JSON path in the analysis snapshot (paths.resolve grammar)
    label: str        # human label
    unit: str         # one of livefix.analysis.paths.UNITS
    description: str  # one sentence: what it measures and why it matters
    better: str       # "higher" | "lower" | "" (neither / informational)
    source: str       # the standard, paper or handbook that defines it; "common practice" when none
    digits: int = 2   # decimals when shown
    kind: str = "gauge"  # "gauge" or "counter" (monotone count): read by the Prometheus exporter
    prom: str = ""    # Prometheus name (livefix_..._unit) when exported, "" when not
    short: str = ""   # label for narrow screen panels; "" = the label


CP = "common practice"
NMEA = "NMEA 0183 4.11 (IEC 61162-1)"
NRC = "The Global Positioning System: A Shared National Asset (National Research Council, 1995)"
RAYLEIGH = "circular normal distribution (Rayleigh quantile)"
DOP_SRC = "Global Positioning System: Signals, Measurements, and Performance, ch. 6"
CN0_SRC = "'Measuring GNSS Signal Strength', Inside GNSS (Nov/Dec 2010)"
GNSSIR = "'Software tools for GNSS interferometric reflectometry (GNSS-IR)', GPS Solutions 22:80 (2018)"
IGS = "IGS Guidelines for Continuously Operating Reference Stations v1.0.0 (2023)"
COUNTER = "counter"


def _dops(group: str, what: str, prom: dict[str, str] | None = None) -> tuple[Metric, ...]:
    """One entry per DOP of a group: the same meaning, so one line each rather than five copies."""
    names = ("gdop", "pdop", "hdop", "vdop", "tdop") if group != "dop.reported" else ("pdop", "hdop", "vdop")
    whose = "from the used satellites' geometry" if "computed" in group else "as the receiver reported it"
    when = "last epoch" if ".current." in group else "median over the session"
    return tuple(Metric(f"{group}.{d}", f"{what} {d.upper()}", "",
                        f"{d.upper()} {whose} ({when}): how the geometry scales range errors into position "
                        "errors.", "lower", DOP_SRC, prom=(prom or {}).get(d, ""))
                 for d in names)


METRICS: tuple[Metric, ...] = (
    # -- stream: what came over the wire ------------------------------------------------------
    Metric("stream.lines", "Sentences framed", "count", "Complete lines framed from the byte stream.", "",
           NMEA, 0, COUNTER, "livefix_sentences"),
    Metric("stream.bad_checksum", "Checksum errors", "count",
           "Sentences refused for a wrong checksum: cabling, baud rate or interference on the data line.",
           "lower", f"{NMEA} checksum", 0, COUNTER, "livefix_checksum_errors"),
    Metric("stream.malformed", "Malformed sentences", "count",
           "Sentences with a good checksum that could not be decoded.", "lower", NMEA, 0, COUNTER,
           "livefix_malformed_sentences"),
    Metric("stream.unknown", "Unknown sentences", "count", "Sentence types no decoder knows (kept, counted).",
           "", NMEA, 0, COUNTER),
    Metric("stream.proprietary", "Proprietary sentences", "count",
           "Vendor sentences ($P...), counted apart from errors.", "", f"{NMEA} proprietary sentences", 0, COUNTER),
    Metric("stream.junk_bytes", "Junk bytes", "bytes",
           "Bytes between sentences that are neither NMEA nor a known binary frame: noise on the line.",
           "lower", CP, 0, COUNTER),
    Metric("stream.overlong", "Over-long lines", "count",
           "Lines dropped for exceeding the framer's length limit (the standard's nominal limit is 82).",
           "lower", NMEA, 0, COUNTER),
    Metric("stream.binary_frames", "Binary frames", "count",
           "Verified binary frames (RTCM 3 and the 0xB5 0x62 frame) skipped in the stream.", "",
           "RTCM 10403 transport frame; common practice for the 0xB5 0x62 frame", 0, COUNTER),
    Metric("stream.binary_bytes", "Binary bytes", "bytes", "Bytes inside the skipped binary frames.", "",
           "RTCM 10403 transport frame", 0, COUNTER),
    Metric("stream.epochs", "Epochs", "count", "Epochs assembled (one per time of fix).", "", NMEA, 0,
           COUNTER, "livefix_epochs"),
    Metric("stream.rate_hz", "Epoch rate", "Hz",
           "Epochs per second, from the median of the recent epoch intervals.", "", CP, 1,
           prom="livefix_epoch_rate_hertz", short="rate"),
    Metric("stream.epoch_interval_s", "Epoch interval", "s", "Nominal time between epochs.", "", CP, 3),
    Metric("stream.epoch_jitter_ms", "Epoch jitter", "ms",
           "Spread of the epoch intervals around the nominal one: a steady receiver stays near zero.",
           "lower", CP, 1),
    Metric("stream.gaps", "Epoch gaps", "count", "Missing epochs at the nominal rate.", "lower", CP, 0,
           COUNTER),
    Metric("stream.stall_count", "Stalls", "count", "Pauses of the data stream while the link stayed up.",
           "lower", CP, 0, COUNTER, "livefix_stalls"),
    Metric("stream.data_gaps.count", "Data gaps", "count",
           "Spans with no bytes at all; they are kept out of availability.", "lower", CP, 0, COUNTER),
    Metric("stream.data_gaps.total_s", "Data gap time", "s", "Total length of the data gaps.", "lower", CP, 1),
    Metric("stream.time_jumps", "Time jumps", "count", "Unexpected steps of the receiver's time of fix.",
           "lower", CP, 0, COUNTER),
    Metric("stream.rollbacks", "Time rollbacks", "count", "Times of fix that went backwards.", "lower", CP, 0,
           COUNTER),
    Metric("stream.time_faults", "Time faults", "count", "Unconfirmed jumps of a plain log's clock.", "lower",
           CP, 0, COUNTER),
    Metric("stream.receiver_dates_invalid", "Invalid receiver dates", "count",
           "Dates before GPS time began, default dates or dates 1024 weeks early (week rollover).", "lower",
           "IS-GPS-200 (GPS epoch, 10-bit week number)", 0, COUNTER),
    Metric("stream.checksum_bursts", "Checksum error bursts", "count",
           "Runs of checksum errors close together: a fault on the line rather than one stray bit.",
           "lower", CP, 0, COUNTER),
    Metric("stream.duration_s", "Stream duration", "s", "Span of the stream's time stamps.", "", CP, 1),
    # -- fix: acquisition, availability, outages ------------------------------------------------
    Metric("fix.ttff_s", "TTFF", "s",
           "Time to first fix from the start of the stream or a restart; null unless observed.", "lower",
           CP, 1, prom="livefix_ttff_seconds", short="TTFF"),
    Metric("fix.ttff_dgnss_s", "Time to DGNSS", "s", "Time to the first differential fix.", "lower", CP, 1),
    Metric("fix.ttff_rtk_fixed_s", "Time to RTK fixed", "s",
           "Time to the first RTK fixed solution: how long before centimetre work can begin.", "lower", CP, 1,
           prom="livefix_ttff_rtk_fixed_seconds", short="RTK"),
    Metric("fix.starts_total", "Starts", "count", "Acquisitions seen: the stream start and each restart.", "",
           CP, 0, COUNTER),
    Metric("fix.restarts.commanded", "Commanded restarts", "count", "Restarts livefix sent to the receiver.",
           "", CP, 0, COUNTER),
    Metric("fix.restarts.receiver", "Receiver restarts", "count",
           "Restarts the receiver made on its own (seen as a fresh acquisition).", "lower", CP, 0, COUNTER),
    *(Metric(f"fix.availability.{f}", f"{name} share (whole run)", "ratio",
             f"Share of the known time spent in {name} fixes.", better, f"{CP}; fix types from {NMEA} GGA quality",
             4) for f, name, better in (("rtk_fixed", "RTK fixed", "higher"), ("rtk_float", "RTK float", ""),
                                         ("dgnss", "DGNSS", ""), ("single", "Single", ""),
                                         ("none", "No-fix", "lower"))),
    Metric("fix.epochs", "Fix epochs", "count", "Epochs counted by the fix statistics.", "", CP, 0, COUNTER),
    Metric("fix.no_position_epochs", "Epochs without a position", "count",
           "Epochs that claim a fix but carry no coordinates.", "lower", CP, 0, COUNTER),
    Metric("fix.outages_total", "Outages", "count", "Spans without a fix after the first fix.", "lower", CP, 0,
           COUNTER, "livefix_outages"),
    Metric("fix.longest_outage_s", "Longest outage", "s", "Longest span without a fix after the first fix.",
           "lower", CP, 1, prom="livefix_longest_outage_seconds"),
    Metric("fix.fix_losses", "Fix losses", "count", "Every loss of the fix, however short.", "lower", CP, 0,
           COUNTER),
    Metric("fix.jumps_total", "Jumps", "count", "Sudden position steps beyond the fix type's radius.",
           "lower", CP, 0, COUNTER, "livefix_jumps"),
    # -- derived: simple functions of the snapshot (livefix.analysis.paths.DERIVED) -------------
    Metric("derived.fix_share", "Fix availability (whole run)", "ratio",
           "Share of the known time with any fix, acquisition included.", "higher", CP, 4,
           prom="livefix_fix_availability_ratio"),
    Metric("derived.fix_share_after_first_fix", "Fix availability after first fix", "ratio",
           "Share of epochs with any fix once the first fix came (acquisition is TTFF's business).",
           "higher", CP, 4),
    Metric("derived.rtk_fixed_share_after_first", "RTK fixed share after first", "ratio",
           "Share of epochs with an RTK fixed solution once the first one came.", "higher", CP, 4),
    Metric("derived.checksum_error_share", "Checksum error share", "ratio",
           "Checksum errors per framed line.", "lower", f"{NMEA} checksum", 6),
    Metric("derived.drift_h_mm_per_h", "Horizontal drift", "mm/h",
           "Horizontal speed of the static position (least-squares slope of block means).", "lower",
           f"{CP} (slope with a correlated-noise 95 % interval)", 1, short="drift"),
    # -- position: scatter of a static antenna --------------------------------------------------
    Metric("position.n", "Scatter epochs", "count", "Epochs behind the horizontal scatter figures.", "", CP, 0),
    Metric("position.cep50_m", "CEP50", "m", "Radius of the horizontal circle holding 50 % of the fixes.",
           "lower", NRC, 3, prom="livefix_cep50_meters", short="CEP50"),
    Metric("position.cep95_m", "CEP95", "m", "Radius of the horizontal circle holding 95 % of the fixes.",
           "lower", NRC, 3, prom="livefix_cep95_meters", short="CEP95"),
    Metric("position.r95_m", "R95", "m", "Horizontal 95 % radius (the empirical percentile).", "lower", NRC, 3),
    Metric("position.r95_gauss_m", "R95 (Gaussian)", "m",
           "Horizontal 95 % radius of a circular normal with the observed sigmas.", "lower", RAYLEIGH, 3),
    Metric("position.drms2_m", "2DRMS", "m",
           "Twice the horizontal RMS error: holds 95-98 % of fixes depending on the ellipse.", "lower",
           f"{NRC}; US Federal Radionavigation Plan, Appendix A", 3, short="2DRMS"),
    Metric("position.v95_m", "Vertical 95 %", "m", "Vertical error bound holding 95 % of the fixes.", "lower",
           RAYLEIGH, 3, prom="livefix_vertical95_meters", short="vert 95%"),
    Metric("position.ellipse.major_m", "Error ellipse major axis", "m",
           "One-sigma semi-major axis of the horizontal error ellipse.", "lower", NRC, 3),
    Metric("position.ellipse.minor_m", "Error ellipse minor axis", "m",
           "One-sigma semi-minor axis of the horizontal error ellipse.", "lower", NRC, 3),
    Metric("position.ellipse.orient_deg", "Error ellipse orientation", "deg",
           "Bearing of the major axis from north: a stretched ellipse points at an obstruction.", "", CP, 1),
    Metric("position.window.cep95_m", "CEP95 (recent window)", "m",
           "CEP95 over the recent epochs only: shows a site getting worse during the run.", "lower", NRC, 3),
    Metric("position.offset_m.h", "Offset from reference", "m",
           "Horizontal distance of the mean position from the reference point.", "lower", CP, 3),
    Metric("position.offset_m.u", "Height offset from reference", "m",
           "Height of the mean position above the reference point.", "", CP, 3),
    Metric("position.convergence_s", "Convergence after first fix", "s",
           "Time from the first fix until the position stays within the convergence radius.", "lower", CP, 1),
    Metric("position.convergence_v_s", "Vertical convergence", "s",
           "The same for height, within the vertical convergence radius.", "lower", CP, 1),
    Metric("position.jumps.count", "Position jumps left out of the scatter", "count",
           "Jumps whose epochs are kept out of the scatter figures.", "lower", CP, 0, COUNTER),
    Metric("position.jumps.excluded_s", "Time left out after jumps", "s",
           "Time of re-convergence after jumps kept out of the scatter.", "lower", CP, 1),
    Metric("position.drift_mm_per_h.u", "Vertical drift", "mm/h", "Vertical speed of the static position.",
           "lower", f"{CP} (slope with a correlated-noise 95 % interval)", 1),
    Metric("position.drift_span_s", "Drift span", "s", "Time span the drift slope is fitted over.", "", CP, 0),
    *(Metric(f"position.honesty.{k}_ratio", f"Observed/reported sigma ({k})", "ratio",
             f"Observed {k} scatter over the receiver's own GST sigma: near 1 when the receiver is honest.",
             "", f"{CP}; GST from {NMEA}", 3) for k in ("lat", "lon", "h")),
    Metric("position.honesty.ure_m", "Effective range error", "m",
           "Observed horizontal RMS divided by the median HDOP: a range error as the geometry sees it.",
           "lower", DOP_SRC, 3),
    Metric("position.segments", "Static segments", "count", "Static spans the scatter is split into.", "",
           CP, 0),
    # -- motion -----------------------------------------------------------------------------------
    Metric("motion.moving_share", "Share of the session moving", "ratio",
           "Share of the time the receiver moved; scatter figures need a still antenna.", "", CP, 3),
    Metric("motion.moves", "Moves", "count", "Changes from static to moving.", "", CP, 0, COUNTER),
    Metric("motion.max_speed_mps", "Highest speed", "m/s", "Highest speed over ground reported.", "", CP, 2),
    # -- dop: geometry ------------------------------------------------------------------------------
    *_dops("dop.computed", "Computed", {"hdop": "livefix_hdop_computed"}),
    *_dops("dop.reported", "Reported"),
    *_dops("dop.current.computed", "Current computed"),
    Metric("dop.current.used", "Satellites used", "count",
           "Satellites in the last epoch's solution with a known direction (the DOP geometry).", "higher",
           DOP_SRC, 0),
    Metric("dop.current.used_listed", "Satellites listed as used", "count",
           "Satellites the receiver listed as used in the last epoch, direction known or not.", "higher",
           NMEA, 0),
    Metric("dop.disagree_share", "DOP disagreement share", "ratio",
           "Share of epochs whose reported DOP differs from the geometry: a wrong used list.", "lower",
           DOP_SRC, 4),
    Metric("dop.disagreements", "DOP disagreements", "count", "Epochs where reported and computed DOP differ.",
           "lower", DOP_SRC, 0, COUNTER),
    # -- signal --------------------------------------------------------------------------------------
    Metric("signal.cn0_mean_dbhz", "Mean C/N0", "dB-Hz", "Mean carrier-to-noise density of tracked signals.",
           "higher", CN0_SRC, 1, prom="livefix_cn0_mean_dbhz"),
    Metric("signal.top4_mean_dbhz", "Mean C/N0 of the strongest four", "dB-Hz",
           "Mean C/N0 of the four strongest signals: the antenna and cable without the low satellites.",
           "higher", CN0_SRC, 1),
    Metric("signal.current.cn0_mean_dbhz", "Current mean C/N0", "dB-Hz", "Mean C/N0 in the last epoch.",
           "higher", CN0_SRC, 1),
    Metric("signal.current.tracked", "Signals tracked", "count", "Signals with a C/N0 in the last epoch.",
           "higher", NMEA, 0),
    Metric("signal.interference_count", "Interference events", "count",
           "Drops of C/N0 on every satellite at once, whatever their direction.", "lower",
           "Interference detection by C/N0 (NAVITEC 2010)", 0, COUNTER),
    # -- sky ------------------------------------------------------------------------------------------
    Metric("sky.clear_above_deg", "Clear sky above", "deg",
           "Elevation above which every direction was tracked: the obstruction height.", "lower", IGS, 0,
           prom="livefix_sky_clear_above_degrees"),
    Metric("sky.visible_share", "Visible share of the sky", "ratio",
           "Share of in-view satellite listings that were tracked.", "higher", CP, 4),
    # -- reflection: GNSS interferometric reflectometry ----------------------------------------------
    Metric("reflection.height_m", "Reflector height", "m",
           "Height of the antenna above the dominant horizontal reflector (median of the arcs).", "", GNSSIR, 2),
    Metric("reflection.spread_m", "Reflector height spread", "m", "Spread of the arc heights.", "lower",
           GNSSIR, 2),
    Metric("reflection.mp_db", "Multipath amplitude", "dB",
           "Peak-to-peak C/N0 swing of the reflection, 20·log10((1+a)/(1-a)): how strongly it disturbs.",
           "lower", f"two-ray multipath model ({CP}); amplitude a from {GNSSIR}", 1),
    Metric("reflection.arcs", "Reflection arcs", "count", "Satellite arcs accepted for the reflector height.",
           "higher", GNSSIR, 0, COUNTER),
    Metric("reflection.arcs_evaluated", "Reflection arcs evaluated", "count", "Arcs tried, accepted or not.",
           "", GNSSIR, 0, COUNTER),
    # -- livefix itself -------------------------------------------------------------------------------
    Metric("events_dropped", "Events dropped", "count", "Events beyond the bounded event list.", "", CP, 0,
           COUNTER),
    Metric("internal_errors", "livefix internal errors", "count",
           "livefix's own errors (never bad input): anything above zero should be reported.", "lower", CP, 0,
           COUNTER, "livefix_internal_errors"),
)
_BY_PATH: dict[str, Metric] = {m.path: m for m in METRICS}

# The report's key-figure table, in its order (labels, units and digits come from the entries).
KEY_PATHS = (
    "stream.epochs", "derived.fix_share", "fix.availability.rtk_fixed", "fix.ttff_s", "fix.ttff_rtk_fixed_s",
    "position.cep50_m", "position.cep95_m", "position.v95_m", "fix.longest_outage_s", "fix.jumps_total",
    "position.jumps.count", "motion.moving_share", "position.convergence_s", "derived.drift_h_mm_per_h",
    "stream.stall_count", "stream.bad_checksum", "signal.cn0_mean_dbhz", "sky.clear_above_deg",
    "dop.computed.hdop",
)


def metric(path: str) -> Metric:
    """The catalogue entry of `path`; KeyError listing the valid names when there is none."""
    try:
        return _BY_PATH[path]
    except KeyError:
        raise KeyError(unknown_text(path)) from None


def unknown_text(path: str) -> str:
    """The one error text for a name outside the catalogue: it lists every valid name."""
    return f"unknown metric {path!r}: valid names are {', '.join(sorted(_BY_PATH))}"


def known(path: str) -> bool:
    return path in _BY_PATH


def label(path: str) -> str:
    """Human label; the path itself for selector paths and names outside the catalogue."""
    m = _BY_PATH.get(path)
    return m.label if m else path


def short(path: str) -> str:
    """Label for narrow panels (the label when the entry has no short one)."""
    m = _BY_PATH.get(path)
    return (m.short or m.label) if m else path


def unit(path: str) -> str:
    """Unit of `path` ("" when unknown)."""
    m = _BY_PATH.get(path)
    return m.unit if m else ""


def key_figures() -> tuple[tuple[str, str, str, int], ...]:
    """(label, path, unit, digits) rows of the report's comparison table."""
    return tuple((m.label, m.path, m.unit, m.digits) for m in map(metric, KEY_PATHS))


def exported(kind: str) -> tuple[Metric, ...]:
    """Entries with a Prometheus name, of one kind ("gauge" or "counter"), in catalogue order."""
    return tuple(m for m in METRICS if m.prom and m.kind == kind)


def _cell(text: str) -> str:
    return text.replace("|", "\\|") or "—"


def markdown_table() -> str:
    """The docs table (docs/metrics.md), generated so it cannot drift from the code."""
    out = ["# Metrics", "",
           "Every figure livefix names, generated from `livefix/analysis/catalogue.py` by `make docs`",
           "(do not edit by hand; a test compares this file with the catalogue). *Path* is the dotted path",
           "into the analysis snapshot (`livefix report FILE --json`) that profiles use as `metric`;",
           "*better* says which way is good. Profiles may also use selector paths such as",
           "`signal.by_elevation[from>=30].mean` (see `livefix/analysis/paths.py`).", "",
           "| path | label | unit | better | description | source | Prometheus |",
           "| --- | --- | --- | --- | --- | --- | --- |"]
    for m in METRICS:
        prom = f"`{m.prom}{'_total' if m.kind == COUNTER else ''}`" if m.prom else ""
        out.append(f"| `{m.path}` | {_cell(m.label)} | {_cell(m.unit)} | {_cell(m.better)} | "
                   f"{_cell(m.description)} | {_cell(m.source)} | {_cell(prom)} |")
    return "\n".join(out) + "\n"


def problems() -> list[str]:
    """Entries that break the catalogue's own rules (checked by the tests)."""
    bad = [f"{m.path}: unit {m.unit!r} not in paths.UNITS" for m in METRICS if m.unit not in UNITS]
    bad += [f"{m.path}: better {m.better!r}" for m in METRICS if m.better not in ("higher", "lower", "")]
    bad += [f"{m.path}: kind {m.kind!r}" for m in METRICS if m.kind not in ("gauge", COUNTER)]
    if len(_BY_PATH) != len(METRICS):
        bad.append("a path is listed twice")
    return bad


if __name__ == "__main__":
    print(markdown_table(), end="")
