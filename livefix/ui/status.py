"""Top strip: source and link state, data rate, fix, satellites per constellation, clocks,
recording and the verdict. Always visible; states are words, colour only repeats them."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from rich.text import Text

from livefix.analysis import catalogue as cat
from livefix.pipeline import Snapshot
from livefix.report.escape import term_text
from livefix.ui.fmt import DASH, clock, dig, num, utc_text
from livefix.ui.panel import TextPanel
from livefix.ui.stability import DRIFT_LABEL, SCATTER_LABEL, drift_text, scatter_text

# link state -> (word, role); the word is the state, the role only adds emphasis
LINK_LOOK: dict[str, tuple[str, str]] = {
    "connecting": ("CONNECTING", "warn"), "streaming": ("LIVE", "ok"), "stalled": ("QUIET", "stale"),
    "lost": ("LOST", "bad"), "reconnecting": ("RETRYING", "warn"), "ended": ("END OF DATA", "warn"),
}
FIX_LOOK: dict[str, str] = {
    "none": "NO FIX", "single": "SINGLE", "dgnss": "DGNSS", "pps": "PPS", "rtk_fixed": "RTK FIXED",
    "rtk_float": "RTK FLOAT", "estimated": "ESTIMATED", "manual": "MANUAL", "simulator": "SIMULATOR",
}
SYSTEM_ORDER = "GRECJIS"


@dataclass(frozen=True, slots=True)
class Mode:
    """What the source is, for the header word: live, or a replay at a speed with position/length."""

    replay: bool = False
    speed: float | None = None  # None = the source has no speed; 0 = as fast as possible
    position_s: float | None = None
    length_s: float | None = None


def state_word(link: str, mode: Mode, paused: bool) -> tuple[str, str]:
    """The header's first word: PAUSED, REPLAY ×N pos/len, LIVE, or the link trouble."""
    if paused:
        return ("PAUSED", "warn")
    if link != "streaming":
        return LINK_LOOK.get(link, (link.upper() or DASH, "warn"))
    speed = "" if mode.speed is None else (" max" if mode.speed <= 0 else f" ×{mode.speed:g}")
    if not mode.replay:
        return ("LIVE" + ("" if mode.speed in (None, 1.0) else speed), "ok")
    where = ""
    if mode.position_s is not None:
        where = f" {clock(mode.position_s)}" + (f"/{clock(mode.length_s)}" if mode.length_s else "")
    return (f"REPLAY{speed}{where}", "ok")


def sat_counts(snap: Snapshot) -> dict[str, tuple[int, int, int]]:
    """{system: (used, tracked, in view)} over unique satellites (not signals)."""
    seen: dict[tuple[str, int], tuple[bool, bool]] = {}
    for o in snap.sky:
        u, t = seen.get((o.system, o.prn), (False, False))
        seen[(o.system, o.prn)] = (u or o.used, t or o.cn0 is not None)
    out: dict[str, list[int]] = {}
    for (sysl, _), (u, t) in seen.items():
        c = out.setdefault(sysl, [0, 0, 0])
        c[0] += u
        c[1] += t
        c[2] += 1
    return {k: (v[0], v[1], v[2]) for k, v in sorted(out.items(), key=lambda kv: SYSTEM_ORDER.find(kv[0]))}


class StatusStrip(TextPanel):
    """Five lines that answer "is this installation good?" at 80 columns, whatever else folds away:
    link/mode, clocks, verdict, fix/satellites/DOP, scatter/drift."""

    DEFAULT_CSS = "StatusStrip { height: 5; text-wrap: nowrap; text-overflow: ellipsis; }"

    def __init__(self, **kw) -> None:  # noqa: ANN003
        super().__init__(**kw)
        self.snap: Snapshot | None = None
        self.session_s: float | None = None
        self.verdict: tuple[str, str] = ("no profile", "dim")
        self.frozen_s: float | None = None  # host seconds stale (None = fresh)
        self.recording: str | None = None
        self.paused = False
        self.mode: Mode = Mode()

    def show(self, snap: Snapshot, session_s: float | None, verdict: tuple[str, str], frozen_s: float | None,
             recording: str | None, paused: bool = False, mode: Mode | None = None) -> None:
        self.snap, self.session_s, self.verdict = snap, session_s, verdict
        self.frozen_s, self.recording, self.paused = frozen_s, recording, paused
        self.mode = mode or Mode()
        self.refresh()

    def _text(self) -> Text:
        pal = self.app.palette  # type: ignore[attr-defined]
        st = pal.style
        t = Text(no_wrap=True, overflow="ellipsis")
        s = self.snap
        if s is None:
            t.append(" waiting for the first data …", st("dim"))
            return t
        word, role = state_word(s.link, self.mode, self.paused)
        t.append(" ")
        t.append(f" {word} ", st(role))
        if self.frozen_s is not None:  # host seconds in a stale state (quiet link or no new snapshots)
            extra = "NO UPDATES " if s.link not in ("stalled", "lost", "reconnecting") else ""
            t.append(f" {extra}{self.frozen_s:.0f} s — last data kept, marked stale ", st("stale"))
        rec = self.recording
        t.append(" ")
        if rec:
            t.append(" ● REC ", st("rec"))
        else:
            t.append("not recording", st("dim"))
        t.append(f"  {term_text(s.source) or DASH}", st("value"))  # stream/CLI text: no raw ESC
        if s.link_detail:
            t.append(f" ({term_text(s.link_detail)})", st("dim"))
        rate = dig(s.analysis, "stream", "rate_hz")
        t.append("  ")
        t.append(num(rate, ".1f", " " + cat.unit("stream.rate_hz")), st("value"))
        if rec:
            t.append(f"  → {term_text(rec)}", st("value"))
        err = getattr(s, "error", None)
        if err:
            t.append(f"  SESSION ERROR: {term_text(err)}", st("bad"))
        if s.recording_error:
            t.append(f"  RECORDING FAILED: {term_text(s.recording_error)}", st("bad"))
        self._clocks(t, s, st)
        t.append("\n verdict ", st("dim"))
        t.append(self.verdict[0], st(self.verdict[1]))
        self._fix(t, s, st)
        p = dig(s.analysis, "position") or {}
        t.append(f"\n {SCATTER_LABEL} ", st("dim"))
        t.append(scatter_text(s.analysis, short=True), st("value"))
        t.append(f"  {DRIFT_LABEL} ", st("dim"))
        t.append(drift_text(p, "+-" if getattr(self.app, "ascii_only", False) else "±"), st("value"))
        return t

    def _clocks(self, t: Text, s: Snapshot, st: Any) -> None:
        """Receiver UTC when the epoch carries it, else host time said to be host time."""
        t.append("\n ")
        if s.epoch is not None and s.epoch.utc is not None and not s.epoch.date_known:
            # a default or rolled-over receiver date (livefix.dates): the time of day only
            t.append(utc_text(s.epoch.utc % 86400.0).replace("date unknown", "receiver date invalid,"),
                     st("warn"))
        elif s.epoch is not None and s.epoch.utc is not None:
            t.append(utc_text(s.epoch.utc), st("value"))
        else:
            t.append(utc_text(s.wall).replace(" UTC", " host"), st("value"))
        t.append("  session ", st("dim"))
        t.append(clock(self.session_s), st("value"))

    def _fix(self, t: Text, s: Snapshot, st: Any) -> None:
        ep = s.epoch
        fix = ep.fix if ep is not None else "none"
        t.append("\n ")
        t.append(f"{FIX_LOOK.get(fix, fix.upper())}", st("bad" if fix == "none" else "value"))
        if ep is not None and ep.fix_dim in (2, 3):
            t.append(f" {ep.fix_dim}D", st("value"))
        if ep is not None:  # stream seconds since that epoch: a frozen fix shows its age
            t.append(" age ", st("dim"))
            t.append(num(max(0.0, s.mono - ep.mono), ".1f", " s"), st("value"))
        counts = sat_counts(s)
        tot = [sum(c[i] for c in counts.values()) for i in range(3)]
        t.append("  sats used/trk/view ", st("dim"))
        t.append(f"{tot[0]}/{tot[1]}/{tot[2]}", st("value"))
        t.append("  DOP ", st("dim"))
        t.append(" ".join(f"{k} {num(getattr(ep, a, None), '.1f')}"
                          for k, a in (("P", "pdop"), ("H", "hdop"), ("V", "vdop"))), st("value"))
        for sysl, (u, tr, v) in counts.items() if self.size.width >= 100 else ():  # wide screens add these
            t.append("  ")
            t.append(sysl, st("head"))  # spaces outside the underline
            t.append(f" {u}/{tr}/{v}", st("value"))
