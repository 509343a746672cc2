"""Shared helpers for the UI tests: deterministic Snapshot sequences made by pushing a demo
recording (recordings/, made by our simulator) through the real Pipeline. Cached per process."""

from __future__ import annotations

import functools
from pathlib import Path

from livefix.pipeline import Pipeline, Snapshot
from livefix.record.reader import RecordingReader

ROOT = Path(__file__).resolve().parents[2]
RECORDINGS = ROOT / "recordings"


@functools.lru_cache(maxsize=4)
def snapshots(name: str = "building-5min.lfr", every_s: float = 30.0) -> tuple[Snapshot, ...]:
    """One snapshot every `every_s` seconds of stream time, plus the final one."""
    reader = RecordingReader(str(RECORDINGS / name))
    p = Pipeline(source=name)
    out: list[Snapshot] = []
    next_t: float | None = None
    for item in reader.items():
        p.feed(item)
        if next_t is None:
            next_t = item.mono + every_s
        elif item.mono >= next_t:
            out.append(p.snapshot())
            next_t += every_s
    p.finish()
    out.append(p.snapshot())
    return tuple(out)


def screen_text(app) -> str:  # noqa: ANN001
    """The app's current screen as plain text lines (what a user would read)."""
    strips = app.screen._compositor.render_strips()
    return "\n".join("".join(seg.text for seg in strip) for strip in strips)


def sync(fn):  # noqa: ANN001, ANN201
    """Run an async test body with asyncio.run (no async pytest plugin is installed)."""
    import asyncio

    @functools.wraps(fn)
    def wrapper(*args, **kwargs):  # noqa: ANN002, ANN003, ANN202
        return asyncio.run(fn(*args, **kwargs))

    return wrapper
