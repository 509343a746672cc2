"""`python -m livefix` runs the command line."""

from livefix.cli import main

raise SystemExit(main())
