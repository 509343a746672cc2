"""`python -m livefix` runs the command line."""

from livefix.cli import entry

raise SystemExit(entry())
