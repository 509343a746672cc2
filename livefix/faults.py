"""livefix's own errors, kept apart from bad input.

A malformed line or binary noise is the receiver's business and is counted as such; an exception
inside livefix is a bug. Stages that must not stop a multi-day run on one bug (the decoder, the
analysis engine) catch it, count it apart, and log it here with its traceback so that it can be
reported; the reports show the count ("livefix internal errors: N — please report").
"""

from __future__ import annotations

import logging

LOG = logging.getLogger("livefix")
# Tracebacks logged in full: the first FULL_LOGS of a counter, then every EVERY-th, so that a bug
# hit on every line of a week-long soak cannot fill the disk (the count itself stays exact).
FULL_LOGS = 20
EVERY = 1000


def log_internal(count: int, where: str, exc: BaseException) -> None:
    """Log the count-th internal error of one counter, raised in `where`, with its traceback."""
    if count <= FULL_LOGS or count % EVERY == 0:
        LOG.error("livefix internal error #%d in %s: %s: %s (please report)", count, where,
                  type(exc).__name__, exc, exc_info=exc)


def report_line(count: int) -> str:
    """The words the reports use for the count."""
    return f"{count} — please report" if count else "0"
