"""`livefix check`: headless pass/fail run of one or more receivers against a profile.

Exit status: 0 every receiver passed, 1 a threshold failed or the run was stopped early
(the report says "incomplete"), 2 the check could not run (bad profile or source, no data).
"""

from __future__ import annotations

import argparse
import shlex
import signal
import sys
import threading
from typing import Any

from livefix.refpoint import parse_ref
from livefix.report.escape import term_text
from livefix.site import add_arguments as add_site_arguments
from livefix.site import from_namespace as site_from_args


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("sources", nargs="+", metavar="SOURCE",
                   help="device, tcp://HOST:PORT, -, sim:NAME or a file; name it with NAME=SOURCE")
    p.add_argument("--profile", default="commission", help="built-in profile (commission, soak) or a .toml file")
    p.add_argument("--duration", help="run length, e.g. 90s, 30m, 24h (default: the profile's for live "
                   "sources, the whole file for files)")
    p.add_argument("--ref", help="surveyed point LAT,LON,H (WGS 84, ellipsoidal height)")
    p.add_argument("--report", metavar="DIR", help="write report.json, report.md, report.html, junit.xml")
    p.add_argument("--pdf", action="store_true", help="with --report: also write report.pdf (A4; needs the "
                   "extra: pip install 'livefix[pdf]')")
    add_site_arguments(p)
    p.add_argument("--notes", default="", help="free notes for the report")
    p.add_argument("--metrics", metavar="[HOST:]PORT", help="serve Prometheus metrics (default host 127.0.0.1)")
    p.add_argument("--record-dir", metavar="DIR", help="where live sources are recorded (default: the report dir)")
    p.add_argument("--speed", type=float, default=None, help="replay/simulation speed factor (files default: "
                   "as fast as possible)")
    p.add_argument("--jobs", choices=("auto", "1", "2"), default="auto",
                   help="for files judged as fast as possible: 2 runs the analysis on a second core; auto "
                        "(default) does so for files of 5 MB or more on 2+ cores (see livefix report)")
    p.add_argument("--wait", action="store_true",
                   help="keep trying live sources that do not answer at start (refused or unknown TCP "
                        "host, device not plugged in yet) and that send no NMEA; without it they are an "
                        "error (exit 2). Once connected, a lost source is always retried")


def run(args: argparse.Namespace) -> int:
    from livefix.check.profile import ProfileError, load_profile
    from livefix.check.runner import CheckOptions, CheckRun, name_sources
    from livefix.parallel import AnalysisProcessError
    from livefix.probe import check_file, first_contact
    from livefix.sources import SourceError
    from livefix.timefmt import parse_duration

    err = sys.stderr
    if args.pdf:
        from livefix.report.pdf import MISSING, available

        if not args.report or not available():  # said before the run, not after it
            print(f"livefix check: could not run: {MISSING if args.report else '--pdf needs --report DIR'}",
                  file=err)
            return 2
    try:
        profile = load_profile(args.profile)
        duration = parse_duration(args.duration) if args.duration else None
        ref = parse_ref(args.ref) if args.ref else None
        site = site_from_args(args)
        for warning in site.warnings():
            print(f"livefix check: {term_text(warning)}", file=err)
        metrics = None
        if args.metrics:
            from livefix.export.metrics import parse_listen

            metrics = parse_listen(args.metrics)
        opts = CheckOptions(sources=name_sources(args.sources), profile=profile, duration_s=duration, ref=ref,
                            report_dir=args.report, record_dir=args.record_dir, site=site, notes=args.notes,
                            metrics=metrics, speed=args.speed, jobs=args.jobs, wait=args.wait,
                            command="livefix check " + " ".join(shlex.quote(a) for a in sys.argv[2:]))
        check = CheckRun(opts)
        try:
            for rx in check.rxs:  # before any run: a source that cannot work is named at once
                first_contact(rx.source, wait=args.wait)
                check_file(rx.source)
        except SourceError as exc:
            for rx in check.rxs:
                rx.source.close()
            raise SourceError(f"{rx.name}: {exc}" if len(check.rxs) > 1 else str(exc)) from None
    except (ProfileError, SourceError, ValueError, OSError) as exc:
        print(f"livefix check: could not run: {term_text(exc)}", file=err)
        return 2
    stop = opts.stop
    old: Any = None
    if threading.current_thread() is threading.main_thread():
        old = signal.signal(signal.SIGINT, lambda *_: stop.set())
    try:
        report = check.run()
    except (SourceError, OSError, AnalysisProcessError) as exc:
        print(f"livefix check: could not run: {term_text(exc)}", file=err)
        return 2
    finally:
        if old is not None:
            signal.signal(signal.SIGINT, old)
    if args.report:
        from livefix.report.write import write_all

        try:
            for path in write_all(report, args.report, junit=True, pdf=args.pdf):
                print(f"wrote {term_text(path)}", file=err)
        except OSError as exc:
            print(f"livefix check: cannot write the report: {term_text(exc)}", file=err)
            return 2
    print_summary(report, sys.stdout)
    if check.could_not_run:
        print(f"livefix check: could not run: {term_text(check.could_not_run)}", file=err)
        return 2
    silent = [rx["name"] for rx in report["receivers"] if not rx.get("bytes")]
    if silent:
        print(f"livefix check: could not run: no data from {', '.join(term_text(n) for n in silent)}", file=err)
        return 2
    return 0 if report["verdict"] == "pass" else 1


def print_summary(report: dict[str, Any], out: Any) -> None:
    """Final verdicts on stdout; every stream-derived text escaped for the terminal."""
    from livefix.report.document import fmt_value

    verdict = report.get("verdict") or "none"
    prof = (report["meta"].get("profile") or {}).get("name", "")
    print(f"livefix check {term_text(prof)}: {verdict.upper()}", file=out)
    for rx in report["receivers"]:
        print(f"  {term_text(rx['name'])} ({term_text(rx['source'])}): {(rx.get('verdict') or 'none').upper()}", file=out)
        for r in rx.get("results") or []:
            got = fmt_value(r["measured"], 4, r["unit"]) if r["measured"] is not None else r["note"]
            mark = "ok  " if r["passed"] else "FAIL"
            print(f"    {mark} {term_text(r['name'])}: {term_text(got)} (limit {r['op']} "
                  f"{fmt_value(r['limit'], 4, r['unit'])})", file=out)
        cyc = rx.get("ttff_cycles")
        if cyc:
            print(f"    {'ok  ' if cyc['passed'] else 'FAIL'} ttff cycles ({cyc['kind']}): min "
                  f"{fmt_value(cyc['min_s'], 1, 's')}, median {fmt_value(cyc['median_s'], 1, 's')}, p95 "
                  f"{fmt_value(cyc['p95_s'], 1, 's')}; {term_text(cyc['note'])}", file=out)
        if (rx.get("analysis") or {}).get("sky", {}).get("obstructed"):
            for s in rx["analysis"]["sky"]["obstructed"]:
                print(f"    sky blocked: azimuth {s.get('az_from')}-{s.get('az_to')} deg below "
                      f"{s.get('below_el')} deg", file=out)
    comp = report.get("comparison") or {}
    names = [term_text(n) for n in comp.get("receivers", [])]
    if len(names) > 1:
        width = max(12, *(len(n) for n in names))
        label_w = 30
        print("  side by side:", file=out)
        print(f"    {'':<{label_w}}" + "".join(f"{n:>{width + 2}}" for n in names), file=out)
        for row in comp.get("rows", []):
            cells = "".join(f"{fmt_value(v, row['digits'], row['unit']):>{width + 2}}" for v in row["values"])
            print(f"    {row['label']:<{label_w}}{cells}", file=out)
    if not report["meta"].get("complete", True):
        print(f"  incomplete: {term_text(report['meta'].get('incomplete_reason'))}", file=out)
