"""`livefix record SOURCE -o FILE`: lossless recording until Ctrl-C, --duration or end of input."""

from __future__ import annotations

import argparse
import sys
import threading
import time

from livefix.site import add_arguments as add_site_arguments
from livefix.site import from_namespace as site_from_args
from livefix.sources.base import Link, LinkEvent, SourceError
from livefix.timefmt import parse_duration

STATUS_EVERY_S = 1.0


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("source", help="device, serial:DEVICE, tcp://HOST:PORT, -, sim:NAME or a file")
    p.add_argument("-o", "--output", required=True, help="recording file to create (.lfr, .lfr.gz)")
    p.add_argument("--note", default="", help="site notes for the header, also written as a marker")
    add_site_arguments(p)  # kept in the recording header, so a replay or report keeps the site record
    p.add_argument("--baud", default="auto", help="serial baud rate or 'auto' (default)")
    p.add_argument("--duration", help="stop after this long, e.g. 90s, 30m, 24h, 7d")
    p.add_argument("--gzip", action="store_true", help="compress (still readable after a crash)")
    p.add_argument("--rotate", help="start a new numbered file every interval, e.g. 1h")
    p.add_argument("--wait", action="store_true", help="keep trying a source that does not answer at start "
                   "(refused or unknown TCP host, device not plugged in yet) and that sends no NMEA; without "
                   "it such a source is an error (exit 2). Once connected, a lost source is always retried")


def _fail(msg: str) -> int:
    print(f"livefix record: {msg}", file=sys.stderr)
    return 2


def _human(n: float) -> str:
    for unit in ("B", "KiB", "MiB", "GiB"):
        if n < 1024 or unit == "GiB":
            return f"{n:.0f} {unit}" if unit == "B" else f"{n:.1f} {unit}"
        n /= 1024
    return f"{n:.1f} GiB"


def run(args: argparse.Namespace) -> int:
    from livefix.probe import check_file, first_contact, no_nmea_watch
    from livefix.record.writer import Recorder
    from livefix.sources import open_source

    try:
        duration = parse_duration(args.duration) if args.duration else None
        rotate = parse_duration(args.rotate) if args.rotate else None
        if rotate is not None and rotate <= 0:
            raise ValueError("--rotate must be positive")
        baud = args.baud if args.baud == "auto" else int(args.baud)
        site = site_from_args(args)  # a bad site file is refused before the source is opened
    except ValueError as exc:
        return _fail(str(exc))
    for warning in site.warnings():
        print(f"livefix record: {warning}", file=sys.stderr)
    try:
        src = open_source(args.source, baud=baud, speed=None, wait=args.wait)
        first_contact(src, wait=args.wait)
        check_file(src)
    except SourceError as exc:
        return _fail(str(exc))
    output = args.output
    if args.gzip and output.endswith(".lfr"):
        output += ".gz"  # keep the documented suffix for compressed recordings
    try:
        rec = Recorder(output, source=src.name, notes=args.note,
                       compress="gzip" if args.gzip else None, rotate_s=rotate,
                       site=None if site.empty else site.to_json())
    except FileExistsError:
        src.close()
        return _fail(f"{output} already exists; choose a new file name")
    except OSError as exc:
        src.close()
        return _fail(f"cannot create {output}: {exc.strerror or exc}")
    stop = threading.Event()
    timer = threading.Timer(duration, stop.set) if duration else None
    if args.note:
        rec.marker(args.note)
    started, last_status = time.monotonic(), 0.0
    link, chunks, nbytes = Link.CONNECTING, 0, 0
    tty = sys.stderr.isatty()
    gen = src.items(stop)
    watch = None if args.wait else no_nmea_watch(src)
    rc = 0
    try:
        if timer:
            timer.daemon = True
            timer.start()
        for item in gen:
            rec.write(item)
            if type(item) is LinkEvent:
                link = item.state
                if not tty:
                    print(f"link {item.state}: {item.detail}", file=sys.stderr)
            else:
                chunks += 1
                nbytes += len(getattr(item, "data", b""))
            if rec.error:
                print(f"\nlivefix record: {rec.error}", file=sys.stderr)
                rc = 2
                break
            if watch is not None and (problem := watch.feed(item)):  # every byte is kept all the same
                print(f"\nlivefix record: {src.name}: {problem} (recorded in {rec.path})", file=sys.stderr)
                rc = 2
                break
            now = time.monotonic()
            if now - last_status >= (STATUS_EVERY_S if tty else 10 * STATUS_EVERY_S):
                last_status = now
                _status(rec, link, chunks, nbytes, now - started, tty)
            if stop.is_set():
                break
    except KeyboardInterrupt:
        pass
    finally:
        stop.set()
        gen.close()
        if timer:
            timer.cancel()
        src.close()
        rec.close()
    _status(rec, link, chunks, nbytes, time.monotonic() - started, tty)
    if tty:
        print(file=sys.stderr)
    if rec.error and rc == 0:
        print(f"livefix record: {rec.error}", file=sys.stderr)
        rc = 2
    return rc


def _status(rec, link: str, chunks: int, nbytes: int, elapsed: float, tty: bool) -> None:  # noqa: ANN001
    h, rem = divmod(int(elapsed), 3600)
    line = (f"recording {rec.path}: {_human(nbytes)} in {chunks} chunks, link {link}, "
            f"{h:02d}:{rem // 60:02d}:{rem % 60:02d}")
    print(("\r" + line + "   ") if tty else line, end="" if tty else "\n", file=sys.stderr, flush=True)
