"""The one place for the look of the report plots: colours, markers, labels, time axes, output.

Why one table: a constellation has the same colour and marker in every plot (sky, C/N0, compare),
and a fix type the same colour in the scatter and the time plots. The colours are the eight-colour
"Color Universal Design" palette, chosen to stay distinct for the common kinds of colour-blindness; every series also has
its own marker or line style and a legend entry, so nothing is told by colour alone.
"""

from __future__ import annotations

import datetime as _dt
import io
import math
import re
from typing import Any, NamedTuple

# Colour-blind-safe palette ("Color Universal Design", 2008; hex values from memory;
# docs/sources.md#colour-blind-safe-palette)
BLUE, VERMILION, GREEN, ORANGE, PURPLE, SKY, YELLOW, BLACK = (
    "#0072B2", "#D55E00", "#009E73", "#E69F00", "#CC79A7", "#56B4E9", "#F0E442", "#000000")
GREY = "#7f7f7f"


class Style(NamedTuple):
    label: str
    colour: str
    marker: str


# RINEX constellation letters (RINEX 3/4 satellite system identifiers) -> plot style
SYSTEMS: dict[str, Style] = {
    "G": Style("GPS (G)", BLUE, "o"),
    "R": Style("GLONASS (R)", VERMILION, "s"),
    "E": Style("Galileo (E)", GREEN, "^"),
    "C": Style("BeiDou (C)", ORANGE, "D"),
    "J": Style("QZSS (J)", PURPLE, "v"),
    "I": Style("NavIC (I)", SKY, "P"),
    "S": Style("SBAS (S)", BLACK, "X"),
}
OTHER_SYSTEM = Style("other", GREY, ".")

# fix types as the analysis names them (livefix.state.epoch.FIX_NAMES), best first
FIXES: dict[str, Style] = {
    "rtk_fixed": Style("RTK fixed", GREEN, "o"),
    "rtk_float": Style("RTK float", SKY, "s"),
    "dgnss": Style("DGNSS", ORANGE, "^"),
    "pps": Style("PPS", PURPLE, "v"),
    "single": Style("single", VERMILION, "D"),
    "estimated": Style("estimated (dead reckoning)", GREY, "x"),
    "manual": Style("manual", GREY, "+"),
    "simulator": Style("simulator", GREY, "+"),
}

# marks on time plots: outages (no fix), stalls (no data) and position jumps
OUTAGE_COLOUR, STALL_COLOUR, JUMP_COLOUR = VERMILION, GREY, BLACK

_XML_HEAD = re.compile(r"^.*?(<svg\b)", re.S)


def system_style(letter: str) -> Style:
    return SYSTEMS.get(letter, OTHER_SYSTEM)


def fix_style(name: str) -> Style:
    return FIXES.get(name, Style(name, GREY, "."))


def plt() -> Any:
    """pyplot on the Agg backend, imported on first use (a report without plots never loads it)."""
    import matplotlib

    matplotlib.use("Agg", force=True)
    import matplotlib.pyplot as pyplot

    matplotlib.rcParams.update({"svg.fonttype": "none", "svg.hashsalt": "livefix", "font.size": 9,
                                "figure.dpi": 96, "legend.fontsize": 8, "axes.titlesize": 10})
    return pyplot


def render(fig: Any, fmt: str = "svg") -> str | bytes:
    """SVG text without the XML prolog (to inline in HTML), or PNG bytes (for the PDF)."""
    pyplot = plt()
    try:
        if fmt == "png":
            buf = io.BytesIO()
            fig.savefig(buf, format="png", dpi=150, bbox_inches="tight", metadata={"Software": None})
            return buf.getvalue()
        sbuf = io.StringIO()
        fig.savefig(sbuf, format="svg", bbox_inches="tight", metadata={"Date": None})
        return _XML_HEAD.sub(r"\1", sbuf.getvalue(), count=1)
    finally:
        pyplot.close(fig)


def num(v: Any) -> bool:
    return isinstance(v, int | float) and not isinstance(v, bool) and math.isfinite(v)


def parse_iso(text: Any) -> _dt.datetime | None:
    if not isinstance(text, str) or not text:
        return None
    try:
        t = _dt.datetime.fromisoformat(text.replace("Z", "+00:00"))
    except ValueError:
        return None
    return t if t.tzinfo else t.replace(tzinfo=_dt.UTC)


# tick spacings (minutes) for clock-time axes: at most about 8 labels whatever the session length
_STEPS_MIN = (1, 2, 5, 10, 15, 30, 60, 120, 180, 360, 720, 1440)
_STEPS_S = (1, 2, 5, 10, 15, 20, 30)  # divisors of 60, for runs under three minutes


def utc_axis(ax: Any, t_first: _dt.datetime, t_last: _dt.datetime) -> None:
    """Label a datetime x axis in UTC clock time: HH:MM, with seconds for runs under three minutes and
    the day of month for runs of a day or more."""
    import matplotlib.dates as mdates

    span_s = (t_last - t_first).total_seconds()
    if span_s < 180:  # under three minutes: minute ticks would be one or two, so seconds too
        step_s = next((s for s in _STEPS_S if span_s / s <= 8), 30)
        ax.xaxis.set_major_locator(mdates.SecondLocator(bysecond=range(0, 60, step_s), tz=_dt.UTC))
        ax.xaxis.set_major_formatter(mdates.DateFormatter("%H:%M:%S", tz=_dt.UTC))
        ax.set_xlabel(f"time (UTC, HH:MM:SS) from {t_first:%Y-%m-%d %H:%M:%S}")
        ax.set_xlim(t_first, t_last if t_last > t_first else t_first + _dt.timedelta(seconds=1))
        return
    span_min = span_s / 60.0
    step = next((s for s in _STEPS_MIN if span_min / s <= 8), 2880)
    if step < 60:
        ax.xaxis.set_major_locator(mdates.MinuteLocator(byminute=range(0, 60, step), tz=_dt.UTC))
    else:
        ax.xaxis.set_major_locator(mdates.HourLocator(byhour=range(0, 24, max(1, step // 60)), tz=_dt.UTC))
    long_run = (t_last - t_first).total_seconds() >= 86400  # HH:MM alone would repeat
    ax.xaxis.set_major_formatter(mdates.DateFormatter("%d %H:%M" if long_run else "%H:%M", tz=_dt.UTC))
    ax.set_xlabel(f"time (UTC, {'day HH:MM' if long_run else 'HH:MM'}) from {t_first:%Y-%m-%d %H:%M:%S}")
    ax.set_xlim(t_first, t_last if t_last > t_first else t_first + _dt.timedelta(seconds=1))
