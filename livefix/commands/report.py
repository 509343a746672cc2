"""`livefix report FILE`: analyse a recording or NMEA log and write JSON/Markdown/HTML (+ JUnit with
a profile). `--json` prints the final analysis snapshot to stdout instead. No verdict unless a
profile is given."""

from __future__ import annotations

import argparse
import sys
import threading
from typing import TYPE_CHECKING

from livefix.report.escape import term_text
from livefix.site import add_arguments as add_site_arguments

if TYPE_CHECKING:
    from livefix.analysis.config import AnalysisConfig
    from livefix.pipeline import Snapshot
    from livefix.sources import Source

FORMATS = ("json", "md", "html")


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("file", help="a livefix recording or a plain NMEA log")
    p.add_argument("--json", action="store_true", help="print the analysis snapshot as JSON on stdout")
    p.add_argument("--format", choices=FORMATS, action="append",
                   help="document to write (repeatable; default all three)")
    p.add_argument("--pdf", action="store_true",
                   help="also write report.pdf, the same document on A4 (needs the extra: pip install 'livefix[pdf]')")
    p.add_argument("-o", "--output", metavar="DIR", default=".", help="folder for the documents (default .)")
    p.add_argument("--ref", help="surveyed point LAT,LON,H (WGS 84, ellipsoidal height)")
    p.add_argument("--profile", help="also judge against a profile (built-in name or .toml); adds junit.xml")
    add_site_arguments(p)  # over the site record a recording carries
    p.add_argument("--jobs", choices=("auto", "1", "2"), default="auto",
                   help="processes: 2 runs the analysis beside the decoding on a second core; auto (default) "
                        "does so for files of 5 MB or more on 2+ cores")  # livefix.parallel.SPLIT_MIN_BYTES


def _analyse(src: Source, config: AnalysisConfig, split: bool) -> Snapshot:
    """The whole stream through one Pipeline; with split, its analysis runs in a second process
    (same calls, same snapshot: see livefix.parallel)."""
    from livefix.batchgc import batch_gc
    from livefix.parallel import analyzer_for
    from livefix.pipeline import Pipeline

    stop = threading.Event()
    with batch_gc(), analyzer_for(config, split) as analyzer:
        p = Pipeline(config, src.name, analyzer=analyzer)
        for item in src.items(stop):
            p.feed(item)
        src.close()
        p.finish()
        return p.snapshot()


def run(args: argparse.Namespace) -> int:
    from livefix.analysis.config import AnalysisConfig
    from livefix.parallel import AnalysisProcessError, want_split
    from livefix.probe import check_file
    from livefix.refpoint import parse_ref
    from livefix.report.document import ReceiverRun, build_report, to_json
    from livefix.site import from_namespace, overlay
    from livefix.sources import SourceError, open_source

    if args.pdf:
        from livefix.report.pdf import MISSING, available

        if args.json or not available():  # said before the run, not after minutes of analysis
            print(f"livefix report: {'--pdf writes documents, not with --json' if args.json else MISSING}",
                  file=sys.stderr)
            return 2
    try:
        ref = parse_ref(args.ref) if args.ref else None
        site = from_namespace(args)
        profile = None
        if args.profile:  # imported only when asked for: --json's start-up is timed (bench/bench_native.py)
            from livefix.check.profile import load_profile

            profile = load_profile(args.profile)
        src = open_source(args.file, speed=None)
        check_file(src)  # no NMEA at all: say what the file holds instead of an empty report
    except (SourceError, ValueError) as exc:  # ProfileError is a ValueError
        print(f"livefix report: {term_text(exc)}", file=sys.stderr)
        return 2
    if not src.finite:
        print(f"livefix report: {term_text(args.file)} is not a file or recording", file=sys.stderr)
        return 2
    site, site_note = overlay((getattr(src, "header", None) or {}).get("site"), site)  # the recording's
    for line in [*site.warnings(), *([site_note] if site_note else [])]:
        print(f"livefix report: {term_text(line)}", file=sys.stderr)
    try:
        cfg = profile.config(ref) if profile is not None else AnalysisConfig(ref=ref)  # profile: convergence radius
        snap = _analyse(src, cfg, want_split(args.jobs, args.file))
    except AnalysisProcessError as exc:
        print(f"livefix report: {term_text(exc)}", file=sys.stderr)
        return 2
    if args.json:
        sys.stdout.write(to_json(snap.analysis) + "\n")
        return 0
    from livefix.report.write import write_all

    results = None
    if profile is not None:
        from livefix.check.profile import evaluate

        results = evaluate(profile, snap.analysis)
    run_ = ReceiverRun(name="rx1", source=args.file, analysis=snap.analysis, results=results,
                       recording=args.file, link=snap.link, link_detail=snap.link_detail,
                       extra={"bytes": snap.counters.bytes})
    report = build_report([run_], profile=profile, site=site, notes=site_note or "", ref=ref,
                          started=None, ended=None,
                          command="livefix report " + args.file)
    for path in write_all(report, args.output, tuple(args.format or FORMATS), junit=profile is not None,
                          pdf=args.pdf):
        print(f"wrote {term_text(path)}", file=sys.stderr)
    if profile is None:
        return 0
    return 0 if report["verdict"] == "pass" else 1
