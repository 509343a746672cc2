"""`livefix watch SOURCE`: the full-screen monitor; also the UI side of `livefix replay FILE`.

Everything that can be wrong with the command line (source, theme, reference, profile, colour
setting) is checked before the screen opens, so the user gets one clear line and exit status 2
instead of a broken screen.
"""

from __future__ import annotations

import argparse
import os
import sys
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from livefix.site import add_arguments as add_site_arguments
from livefix.site import from_namespace as site_from_args

COLOR_SYSTEMS = ("standard", "256", "truecolor", "auto")  # what TEXTUAL_COLOR_SYSTEM accepts


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("source", help="device, serial:DEV, tcp://HOST:PORT, -, sim:SCENARIO, or a file")
    p.add_argument("--theme", help="palette name from themes/ (dark, daylight, mono) or a .toml file; "
                   "remembered in the user config")
    p.add_argument("--ref", metavar="LAT,LON,H", help="surveyed reference: degrees, degrees, "
                   "ellipsoidal height in metres")
    p.add_argument("--record", metavar="FILE", help="record losslessly to FILE from the start")
    add_site_arguments(p)  # kept in the header of --record's file
    p.add_argument("--speed", default="1", help="replay speed for files: a factor (default 1 = real "
                   "time) or max")
    p.add_argument("--ascii", action="store_true", help="plain ASCII drawing (automatic when the "
                   "locale is not UTF-8)")
    p.add_argument("--profile", metavar="NAME|FILE", help="show the live verdict against this profile")
    p.add_argument("--baud", default="auto", help="serial baud rate or auto (default)")
    p.add_argument("--wait", action="store_true", help="open the monitor even when the source does not "
                   "answer at start (refused or unknown TCP host, device not plugged in yet) and keep "
                   "trying; without it that is an error (exit 2)")


def needs_ascii(env: Mapping[str, str]) -> bool:
    """True unless the effective locale (LC_ALL, then LC_CTYPE, then LANG) names UTF-8."""
    for var in ("LC_ALL", "LC_CTYPE", "LANG"):
        value = env.get(var)
        if value:
            v = value.upper().replace("-", "")
            return "UTF8" not in v
    return True


def parse_speed(text: str) -> float | None:
    if str(text).lower() in ("max", "0"):
        return None
    try:
        v = float(text)
    except ValueError:
        raise ValueError(f"bad --speed {text!r}: use a factor like 4, or max") from None
    if not v > 0:
        raise ValueError(f"bad --speed {text!r}: must be positive, or max")
    return v


PROG = {"name": "livefix watch"}  # "livefix replay" when entered through run_replay


def _fail(msg: str) -> int:
    print(f"{PROG['name']}: {msg}", file=sys.stderr)
    return 2


def _color_setting() -> None:
    """An invalid TEXTUAL_COLOR_SYSTEM crashes Textual at start-up: drop it with a warning."""
    value = os.environ.get("TEXTUAL_COLOR_SYSTEM")
    if value is not None and value not in COLOR_SYSTEMS:
        print(f"{PROG['name']}: ignoring TEXTUAL_COLOR_SYSTEM={value!r} (use one of "
              f"{', '.join(COLOR_SYSTEMS)})", file=sys.stderr)
        del os.environ["TEXTUAL_COLOR_SYSTEM"]


def _palette(name: str | None) -> tuple[Any, str | None]:
    """(palette, warning). An explicit bad --theme raises; a bad remembered one falls back."""
    from livefix.ui import palette as pal

    if name:
        p = pal.load(name)
        return p, pal.remember_theme(name)
    remembered = pal.remembered_theme()
    if remembered:
        try:
            return pal.load(remembered), None
        except pal.ThemeError as exc:
            return pal.load(pal.DEFAULT_THEME), f"{exc}; using {pal.DEFAULT_THEME}"
    return pal.load(pal.DEFAULT_THEME), None


def _verdict(spec: str | None) -> tuple[Any, str]:
    if not spec:
        return None, ""
    try:
        from livefix.check.profile import evaluate, load_profile
    except ImportError:
        raise ValueError("profiles are not available in this installation") from None
    prof = load_profile(spec)
    return (lambda analysis: evaluate(prof, analysis)), str(getattr(prof, "name", "") or Path(spec).stem)


def run(args: argparse.Namespace) -> int:
    from livefix.refpoint import parse_ref
    from livefix.sources import SourceError, open_source
    from livefix.ui.palette import ThemeError

    _color_setting()
    try:
        palette, warning = _palette(args.theme)
    except ThemeError as exc:
        return _fail(str(exc))
    if warning:
        print(f"{PROG['name']}: {warning}", file=sys.stderr)
    try:
        ref = parse_ref(args.ref) if args.ref else None
        speed = parse_speed(args.speed)
        verdict, profile_name = _verdict(args.profile)
        site = site_from_args(args)
    except ValueError as exc:  # includes the profile and site loaders' own one-line errors
        return _fail(str(exc))
    for line in site.warnings():
        print(f"{PROG['name']}: {line}", file=sys.stderr)
    args.site_record = site
    from livefix.probe import check_file, first_contact

    wait = bool(getattr(args, "wait", False))
    try:
        source = open_source(args.source, speed=speed, baud=_baud(args.baud), wait=wait)
        first_contact(source, wait=wait)  # the screen opens only for a source that answers
        check_file(source)
    except (SourceError, OSError, ValueError) as exc:
        return _fail(str(exc))
    return _run_app(source, args, palette, ref, verdict, profile_name)


def _baud(text: str) -> int | str:
    if str(text) == "auto":
        return "auto"
    try:
        return int(text)
    except ValueError:
        raise ValueError(f"bad --baud {text!r}: a number or auto") from None


def _run_app(source: Any, args: argparse.Namespace, palette: Any, ref: Any, verdict: Any,
             profile_name: str) -> int:
    from livefix.analysis.config import AnalysisConfig
    from livefix.session import Session
    from livefix.ui.app import MonitorApp

    site = getattr(args, "site_record", None)
    session = Session(source, config=AnalysisConfig(ref=ref) if ref else None, record_path=args.record,
                      site=None if site is None or site.empty else site.to_json())
    try:
        session.start()
    except (OSError, ValueError) as exc:
        source.close()
        return _fail(f"cannot record to {args.record}: {exc}")
    try:
        app = MonitorApp(session, palette=palette, ascii_only=bool(args.ascii) or needs_ascii(os.environ),
                         verdict=verdict, profile_name=profile_name,
                         record_dir=str(Path(args.record).parent) if args.record else ".")
        app.run()
    finally:
        session.stop()
        source.close()
    return int(app.return_code or 0)


def run_replay(args: argparse.Namespace) -> int:
    """`livefix replay FILE` with the UI: starts at real time unless a factor is given."""
    speed = str(getattr(args, "speed", "max"))
    PROG["name"] = "livefix replay"
    ns = argparse.Namespace(source=args.file, theme=None, ref=None, record=None,
                            speed="1" if speed == "max" else speed, ascii=False, profile=None, baud="auto",
                            wait=False)
    return run(ns)
