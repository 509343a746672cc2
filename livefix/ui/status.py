"""Top strip: source and link state, data rate, fix, satellites per constellation, clocks,
recording and the verdict. Always visible; states are words, colour only repeats them."""

from __future__ import annotations

from rich.text import Text

from livefix.pipeline import Snapshot
from livefix.report.escape import term_text
from livefix.ui.fmt import DASH, clock, dig, num, utc_text
from livefix.ui.panel import TextPanel

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
    DEFAULT_CSS = "StatusStrip { height: 3; text-wrap: nowrap; text-overflow: ellipsis; }"

    def __init__(self, **kw) -> None:  # noqa: ANN003
        super().__init__(**kw)
        self.snap: Snapshot | None = None
        self.session_s: float | None = None
        self.verdict: tuple[str, str] = ("no profile", "dim")
        self.frozen_s: float | None = None  # host seconds stale (None = fresh)
        self.recording: str | None = None
        self.paused = False
        self.speed: float | None = None  # replay speed, 0 = as fast as possible, None = live

    def show(self, snap: Snapshot, session_s: float, verdict: tuple[str, str], frozen_s: float | None,
             recording: str | None, paused: bool = False, speed: float | None = None) -> None:
        self.snap, self.session_s, self.verdict = snap, session_s, verdict
        self.frozen_s, self.recording, self.paused, self.speed = frozen_s, recording, paused, speed
        self.refresh()

    def _text(self) -> Text:
        pal = self.app.palette  # type: ignore[attr-defined]
        st = pal.style
        t = Text(no_wrap=True, overflow="ellipsis")
        s = self.snap
        if s is None:
            t.append(" waiting for the first data …", st("dim"))
            return t
        word, role = LINK_LOOK.get(s.link, (s.link.upper() or DASH, "warn"))
        t.append(" ")
        t.append(f" {word} ", st(role))
        if self.frozen_s is not None:  # host seconds in a stale state (quiet link or no new snapshots)
            extra = "NO UPDATES " if s.link not in ("stalled", "lost", "reconnecting") else ""
            t.append(f" {extra}{self.frozen_s:.0f} s — last data kept, marked stale ", st("stale"))
        if self.paused:
            t.append(" ")
            t.append(" PAUSED ", st("warn"))
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
        t.append(num(rate, ".1f", " Hz"), st("value"))
        if rec:
            t.append(f"  → {term_text(rec)}", st("value"))
        err = getattr(s, "error", None)
        if err:
            t.append(f"  SESSION ERROR: {term_text(err)}", st("bad"))
        if s.recording_error:
            t.append(f"  RECORDING FAILED: {term_text(s.recording_error)}", st("bad"))
        t.append("\n ")
        utc = s.epoch.utc if s.epoch is not None and s.epoch.utc is not None else s.wall
        t.append(utc_text(utc), st("value"))
        t.append("  session ", st("dim"))
        t.append(clock(self.session_s), st("value"))
        if self.speed is not None:
            t.append("  speed ", st("dim"))
            t.append("max" if self.speed <= 0 else f"×{self.speed:g}", st("value"))
        t.append("  verdict ", st("dim"))
        t.append(self.verdict[0], st(self.verdict[1]))
        t.append("\n ")
        fix = s.epoch.fix if s.epoch is not None else "none"
        t.append(f"{FIX_LOOK.get(fix, fix.upper())}", st("bad" if fix == "none" else "value"))
        if s.epoch is not None and s.epoch.fix_dim in (2, 3):
            t.append(f" {s.epoch.fix_dim}D", st("value"))
        t.append("  sats used/tracked/view", st("dim"))
        counts = sat_counts(s)
        tot = [sum(c[i] for c in counts.values()) for i in range(3)]
        t.append(" all ", st("head"))
        t.append(f"{tot[0]}/{tot[1]}/{tot[2]}", st("value"))
        for sysl, (u, tr, v) in counts.items():
            t.append(f"  {sysl} ", st("head"))
            t.append(f"{u}/{tr}/{v}", st("value"))
        if self.size.width < 100:  # narrow: the stability panel is folded away, keep its essence
            p = dig(s.analysis, "position") or {}
            t.append("\n CEP50 ", st("dim"))
            t.append(num(p.get("cep50_m"), ".3f", " m"), st("value"))
            t.append("  CEP95 ", st("dim"))
            t.append(num(p.get("cep95_m"), ".3f", " m"), st("value"))
            t.append("  v95 ", st("dim"))
            t.append(num(p.get("v95_m"), ".3f", " m"), st("value"))
            conv = p.get("convergence_s")
            t.append("  converged ", st("dim"))
            t.append("no" if conv is None else f"after {conv:.0f} s", st("value"))
        return t
