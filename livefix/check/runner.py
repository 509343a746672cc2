"""Running a check: sources through the pipeline until the duration ends, then verdicts and reports.

Files and recordings go through the pipeline on this thread as fast as it goes (the file is its
own record, nothing is shed). Live sources run in Sessions, which record every byte; this loop
only reads their snapshots, prints progress at most once a second, steps TTFF cycles and serves
metrics. A stop Event (set by SIGINT) ends the run early; the report then says "incomplete".
"""

from __future__ import annotations

import re
import sys
import threading
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, TextIO

from livefix.check.profile import Profile, Result, evaluate
from livefix.report.escape import term_text
from livefix.site import coerce, overlay, site_name

TICK_S = 0.2
PROGRESS_S = 1.0
_NAMED = re.compile(r"^([A-Za-z][A-Za-z0-9_-]{0,31})=(.+)$")


def _site_json(site: Any) -> dict[str, Any] | None:
    """The site record for a recording header (None when nothing was given)."""
    info = coerce(site)
    return None if info.empty else info.to_json()


def name_sources(specs: list[str]) -> list[tuple[str, str]]:
    """'base=tcp://...' keeps its name; unnamed sources become rx1, rx2, ... Names must be unique."""
    out: list[tuple[str, str]] = []
    for i, s in enumerate(specs, 1):
        m = _NAMED.match(s)
        out.append((m.group(1), m.group(2)) if m and "://" not in m.group(1) else (f"rx{i}", s))
    names = [n for n, _ in out]
    dup = next((n for n in names if names.count(n) > 1), None)
    if dup:
        raise ValueError(f"receiver name {dup!r} is used twice")
    return out


@dataclass
class CheckOptions:
    sources: list[tuple[str, str]]
    profile: Profile
    duration_s: float | None = None  # None: whole file / profile default for live sources
    ref: tuple[float, float, float] | None = None
    report_dir: str | None = None
    record_dir: str | None = None
    site: Any = ""  # livefix.site.SiteInfo, or a plain site name
    notes: str = ""
    metrics: tuple[str, int] | None = None
    speed: float | None = None
    jobs: str = "1"  # files at full speed only: "2" or "auto" may run the analysis in a second process
    stop: threading.Event = field(default_factory=threading.Event)
    progress: TextIO | None = None  # None: sys.stderr at the time of printing
    command: str = ""
    wait: bool = False  # keep trying live sources that do not answer at start (--wait)


@dataclass
class _Rx:
    name: str
    spec: str
    source: Any
    session: Any = None
    pipeline: Any = None
    snap: Any = None
    results: list[Result] | None = None
    cycler: Any = None
    recording: str | None = None

    def latest(self) -> Any:
        if self.session is not None:
            self.snap = self.session.latest
        return self.snap


def _record_path(folder: str, name: str) -> str:
    d = Path(folder)
    d.mkdir(parents=True, exist_ok=True)
    p, k = d / f"{name}.lfr", 2
    while p.exists():
        p, k = d / f"{name}-{k}.lfr", k + 1
    return str(p)


class CheckRun:
    def __init__(self, opts: CheckOptions) -> None:
        from livefix.sources import open_source

        self.o = opts
        self.config = opts.profile.config(opts.ref)  # the profile may state a convergence radius
        self.rxs = [_Rx(n, s, open_source(s, speed=opts.speed, wait=opts.wait)) for n, s in opts.sources]
        self.complete = True
        self.reason = ""
        self.started = time.time()
        self._t0 = time.monotonic()
        self._last_progress = 0.0
        self.metrics: Any = None
        self.could_not_run = ""  # a live source sent bytes but never NMEA (probe.NoNmeaWatch)

    # -- metrics ---------------------------------------------------------------------------
    def _metrics_view(self) -> dict[str, tuple[Any, dict[str, Any]]]:
        out = {}
        for rx in self.rxs:
            res = rx.results
            extra = {"source": rx.spec, "verdict": None if res is None else all(r.passed for r in res),
                     "failed": 0 if res is None else sum(not r.passed for r in res)}
            out[rx.name] = (rx.snap, extra)
        return out

    # -- running ---------------------------------------------------------------------------
    def run(self) -> dict[str, Any]:
        if self.o.metrics:
            from livefix.export.metrics import MetricsServer

            self.metrics = MetricsServer(self._metrics_view, *self.o.metrics)
            print(f"metrics on http://{self.metrics.addr}:{self.metrics.port}/metrics", file=self.o.progress or sys.stderr)
        try:
            if all(rx.source.finite for rx in self.rxs) and self.o.profile.ttff is None:
                self._run_files()
            else:
                self._run_live()
        finally:
            if self.metrics is not None:
                self.metrics.close()
        return self._report()

    def _run_files(self) -> None:
        from livefix.batchgc import batch_gc

        with batch_gc():
            for rx in self.rxs:
                self._run_file(rx)
                if not self.complete:
                    break

    def _run_file(self, rx: _Rx) -> None:
        """One file through a Pipeline on this thread; with a split its analysis runs in a second
        process (livefix.parallel: same calls, same snapshot). Progress snapshots are taken at most
        once per PROGRESS_S, since each one waits for the analysis to catch up."""
        from livefix.parallel import analyzer_for, want_split
        from livefix.pipeline import Pipeline

        limit = self.o.duration_s
        split = self.o.speed is None and want_split(self.o.jobs, rx.spec)
        with analyzer_for(self.config, split) as analyzer:
            rx.pipeline = p = Pipeline(self.config, rx.source.name, analyzer=analyzer)
            first: float | None = None
            stop = threading.Event()
            for k, item in enumerate(rx.source.items(stop)):
                if first is None:
                    first = item.mono
                if limit is not None and item.mono - first > limit:
                    break
                p.feed(item)
                if k % 2000 == 0:
                    if self._progress_due():
                        rx.snap = p.snapshot()
                        self._tick(item.mono - first, limit)
                    if self.o.stop.is_set():
                        self.complete, self.reason = False, self.reason or "stopped by the user"
                        break
            stop.set()
            rx.source.close()
            p.finish()
            rx.snap = p.snapshot()
        rx.results = evaluate(self.o.profile, rx.snap.analysis)

    def _run_live(self) -> None:
        from livefix.check.ttff import TTFFCycler
        from livefix.session import Session

        prof = self.o.profile
        limit = self.o.duration_s if self.o.duration_s is not None else (None if prof.ttff else prof.duration_s)
        rec_dir = self.o.record_dir or self.o.report_dir
        for rx in self.rxs:
            rx.recording = _record_path(rec_dir, rx.name) if rec_dir else None
            rx.session = Session(rx.source, self.config, record_path=rx.recording, site=_site_json(self.o.site),
                                 notes=site_name(self.o.site) + ("; " + self.o.notes if self.o.notes else ""),
                                 publish_hz=5.0)
            if prof.ttff is not None:
                rx.cycler = TTFFCycler(prof.ttff, rx.session.write, mark=rx.session.add_marker)
        from livefix.probe import no_nmea_watch

        watches = {rx.name: None if self.o.wait else no_nmea_watch(rx.source) for rx in self.rxs}
        for rx in self.rxs:
            rx.session.start()
        try:
            while True:
                elapsed = time.monotonic() - self._t0
                for rx in self.rxs:
                    snap = rx.latest()
                    if rx.cycler is not None:
                        rx.cycler.step(snap)
                    w = watches[rx.name]
                    c = snap.counters if snap is not None else None
                    problem = w.step(snap.mono, c.bytes, c.decoded + c.unknown) if w and c else None
                    if problem and not self.could_not_run:
                        self.could_not_run = f"{rx.name} ({rx.spec}): {problem}"
                        self.complete, self.reason = False, self.could_not_run
                self._tick(elapsed, limit)
                if self.could_not_run:
                    break
                if self.o.stop.is_set():
                    self.complete, self.reason = False, "stopped by the user"
                    break
                if limit is not None and elapsed >= limit:
                    break
                if all(rx.session.done for rx in self.rxs):
                    break
                if prof.ttff is not None and all(rx.cycler.done for rx in self.rxs):
                    break  # a TTFF run ends with its last cycle; the duration only caps it
                self.o.stop.wait(TICK_S)
        finally:
            for rx in self.rxs:
                rx.session.stop()
                rx.snap = rx.session.latest
                if rx.cycler is not None and not rx.cycler.done and self.complete:
                    self.complete, self.reason = False, "duration ended before all TTFF cycles ran"
        for rx in self.rxs:
            rx.results = evaluate(prof, rx.snap.analysis) if rx.snap is not None else evaluate(prof, {})

    def _progress_due(self) -> bool:
        return time.monotonic() - self._last_progress >= PROGRESS_S

    def _tick(self, elapsed: float, limit: float | None) -> None:
        if not self._progress_due():
            return
        from livefix.check import progress

        self._last_progress = time.monotonic()
        parts, frac = [], None
        for rx in self.rxs:
            snap = rx.latest()
            if snap is None:
                parts.append(f"{rx.name}: {progress.rx_state(None, None)}")
                continue
            if rx.source.finite:
                frac = progress.file_fraction(rx.spec, snap.counters.bytes)
            rx.results = evaluate(self.o.profile, snap.analysis)
            state = progress.rx_state(snap, [r.name for r in rx.results if not r.passed])
            fix = f" {snap.epoch.fix}" if snap.epoch is not None else ""
            cyc = f" ttff {len(rx.cycler.cycles)}/{rx.cycler.cfg.n}" if rx.cycler is not None else ""
            parts.append(f"{rx.name}: {snap.link}{fix} {state}{cyc}")
        line = "  ".join([progress.head(elapsed, limit, frac), *parts])
        print(term_text(line), file=self.o.progress or sys.stderr, flush=True)

    # -- results ---------------------------------------------------------------------------
    def _report(self) -> dict[str, Any]:
        from livefix.report.document import ReceiverRun, build_report

        runs = []
        for rx in self.rxs:
            snap = rx.snap
            analysis = snap.analysis if snap is not None else {}
            runs.append(ReceiverRun(
                name=rx.name, source=rx.spec, analysis=analysis, results=rx.results or [],
                recording=rx.recording or (rx.spec if rx.source.finite else None),
                recording_error=getattr(snap, "recording_error", None),
                ttff_cycles=rx.cycler.summary() if rx.cycler is not None else None,
                link=getattr(snap, "link", ""), link_detail=getattr(snap, "link_detail", ""),
                extra={"bytes": snap.counters.bytes if snap is not None else 0}))
        site, note = coerce(self.o.site), None
        if len(self.rxs) == 1:  # one recording replayed: its recorded site record, the command line's on top
            site, note = overlay((getattr(self.rxs[0].source, "header", None) or {}).get("site"), site)
        notes = "; ".join(n for n in (self.o.notes, note) if n)
        return build_report(runs, profile=self.o.profile, site=site, notes=notes, ref=self.o.ref,
                            started=self.started, ended=time.time(), complete=self.complete,
                            incomplete_reason=self.reason, command=self.o.command)
