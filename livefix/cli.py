"""Command line. Sub-commands are looked up in a table and imported only when used, so that
`livefix --help` stays fast (no textual, numpy or matplotlib import)."""

from __future__ import annotations

import argparse
import gc
import importlib
import os
import sys

# name -> (module with add_arguments(parser) and run(args) -> int, one-line help)
COMMANDS: dict[str, tuple[str, str]] = {
    "watch": ("livefix.commands.watch", "full-screen live monitor of a source (or replay of a recording)"),
    "check": ("livefix.commands.check", "headless pass/fail run of one or more sources against a profile"),
    "report": ("livefix.commands.report", "analyse a recording or NMEA log and write JSON/Markdown/HTML"),
    "record": ("livefix.commands.record", "record a source losslessly to a file"),
    "replay": ("livefix.commands.replay", "replay a recording through the pipeline"),
    "compare": ("livefix.commands.compare", "put sessions from candidate antenna spots side by side"),
    "simulate": ("livefix.commands.simulate", "run the built-in simulated receiver"),
}


def build_parser(only: str | None = None) -> argparse.ArgumentParser:
    from livefix import __version__

    p = argparse.ArgumentParser(prog="livefix", description="Live NMEA 0183 monitor, recorder and "
                                "pass/fail checker for GNSS receiver installations and QA benches.")
    p.add_argument("--version", action="version", version=f"livefix {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")
    for name, (module, help_text) in COMMANDS.items():
        sp = sub.add_parser(name, help=help_text, description=help_text)
        if name == only:
            importlib.import_module(module).add_arguments(sp)
    return p


def _one_blas_thread() -> None:
    """Before numpy loads: one OpenBLAS thread. Its default pool starts a thread per core that spins
    waiting for work; livefix's matrices have a handful of rows (DOP, small fits), so the pool only
    burns CPU on a small computer (about 0.1 s per process on a 2-core host, bench/RESULTS.md). A value
    the user set wins, and child processes (livefix.parallel) inherit it."""
    if "numpy" not in sys.modules:
        os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")


# Commands that always read a file to its end and exit: sparse collection from the first import
# (livefix.batchgc). `check` may watch a live source for days, so it keeps the defaults until its
# file runs (check/runner.py); every command here is frozen at exit.
FILE_COMMANDS = frozenset({"report", "compare"})
FROZEN_AT_EXIT = FILE_COMMANDS | {"check"}


def _command(argv: list[str]) -> str | None:
    chosen = next((a for a in argv if not a.startswith("-")), None)
    return chosen if chosen in COMMANDS else None


def entry() -> int:
    """The program in a process of its own (console script, `python -m livefix`): main(), with two
    changes to garbage collection. A report or comparison collects sparsely from the start (the
    imports alone ran about 50 young collections at the default thresholds), and at the end of a
    report, comparison or check the objects left are frozen, so the interpreter's last cycle
    collection at exit does not walk them: the command has closed what it wrote (with blocks) and
    the interpreter still flushes the standard streams. Together about 3 % of a one-hour report
    (bench/RESULTS.md). Tests call main() and keep the defaults."""
    command = _command(sys.argv[1:])
    if command in FILE_COMMANDS:
        from livefix.batchgc import BATCH_GC_THRESHOLD

        gc.set_threshold(*BATCH_GC_THRESHOLD)
    code = main()
    if command in FROZEN_AT_EXIT:
        gc.freeze()
    return code


def main(argv: list[str] | None = None) -> int:
    _one_blas_thread()
    argv = list(sys.argv[1:] if argv is None else argv)
    only = _command(argv)
    parser = build_parser(only)
    args = parser.parse_args(argv)
    if not args.command:
        parser.print_help()
        return 2
    module = importlib.import_module(COMMANDS[args.command][0])
    try:
        return int(module.run(args) or 0)
    except KeyboardInterrupt:
        return 130
    except BrokenPipeError:
        return 0
    except (OSError, ValueError) as exc:  # one clear line, never a traceback, for expected trouble
        print(f"livefix {args.command}: {exc}", file=sys.stderr)
        return 2


if __name__ == "__main__":
    raise SystemExit(entry())
