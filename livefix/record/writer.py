"""Recorder: appends every item to a .lfr file, flushed to the OS at least twice a second.

Why a flusher thread: a quiet serial line may produce nothing for seconds, and the last bytes
before a SIGKILL or power cut must still be on disk. Why never raise: a full disk must not stop
the live monitor; it stops the recording and says so in `error`.
"""

from __future__ import annotations

import os
import threading
import time
import zlib
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from livefix import __version__
from livefix.items import Item, Marker
from livefix.record import fmt
from livefix.timefmt import iso

FLUSH_S = 0.5
BUFFER_MAX = 256 * 1024  # flush early when this much is waiting


class Recorder:
    def __init__(self, path: str | os.PathLike, source: str = "", notes: str = "",
                 compress: str | None = None, rotate_s: float | None = None,
                 start_wall: float | None = None, *, exclusive: bool = True,
                 flush_s: float = FLUSH_S, site: Mapping[str, Any] | None = None) -> None:
        """Open the first file (raises OSError if it cannot be created: an existing file is never
        overwritten unless exclusive=False, which also allows devices and FIFOs). `site` is the
        site record (livefix.site.SiteInfo.to_json()), kept in every part's header so a replay
        reports the installation it was made at."""
        if compress not in (None, "gzip"):
            raise ValueError(f"unknown compression {compress!r}: use gzip or none")
        if rotate_s is not None and rotate_s <= 0:
            raise ValueError("rotation interval must be positive")
        self.source, self.notes, self.compress, self.rotate_s = source, notes, compress, rotate_s
        self.exclusive = exclusive
        self.site = dict(site) if site else None
        self.error: str | None = None
        self.records = 0
        self.bytes_in = 0  # payload bytes recorded (before compression)
        self.paths: list[Path] = []
        self._given = Path(path)
        self._stem, self._suffix = fmt.split_name(self._given)
        if compress and self._suffix == ".lfr" and rotate_s:
            self._suffix = ".lfr.gz"
        self._lock = threading.Lock()
        self._buf = bytearray()
        self._fd: int | None = None
        self._z = None
        self._part_mono: float | None = None
        self._closed = False
        self._open_part(1, start_wall if start_wall is not None else time.time())
        self._done = threading.Event()
        self._flusher = threading.Thread(target=self._flush_loop, args=(flush_s,),
                                         name="livefix-recorder-flush", daemon=True)
        self._flusher.start()

    @property
    def path(self) -> Path:
        """The file being written now (the last part when rotating)."""
        return self.paths[-1]

    # -- files -----------------------------------------------------------------------------
    def _open_part(self, num: int, wall: float) -> None:
        p = fmt.part_path(self._stem, num, self._suffix) if self.rotate_s else self._given
        flags = os.O_WRONLY | os.O_APPEND | os.O_CREAT | (os.O_EXCL if self.exclusive else 0)
        self._fd = os.open(p, flags | getattr(os, "O_CLOEXEC", 0), 0o644)
        self.paths.append(p)
        self._z = zlib.compressobj(6, zlib.DEFLATED, 16 + zlib.MAX_WBITS) if self.compress else None
        head = {"source": self.source, "start_wall": round(wall, 6), "start_utc": iso(wall),
                "livefix": __version__, "notes": self.notes, "part": num,
                "rotate_s": self.rotate_s, "compress": self.compress}
        if self.site:
            head["site"] = self.site
        self._buf += fmt.header_line(head)
        try:
            self._flush_locked()
        except OSError as exc:  # e.g. a full disk already: the caller goes on, `error` says why
            self._fail(exc)

    def _finish_part(self, mono: float, wall: float, reason: str, next_part: str | None) -> None:
        self._buf += fmt.end_record(mono, wall, reason, next_part)
        self._flush_locked(final=True)
        if self._fd is not None:
            os.close(self._fd)
            self._fd = None

    # -- writing ---------------------------------------------------------------------------
    def write(self, item: Item) -> None:
        """Append one item; never raises for I/O trouble (see `error`)."""
        with self._lock:
            if self.error or self._closed:
                return
            try:
                if self.rotate_s:
                    self._maybe_rotate(item.mono, item.wall)
                rec = fmt.encode(item)
                self._buf += rec
                self.records += 1
                self.bytes_in += len(rec)
                if len(self._buf) >= BUFFER_MAX:
                    self._flush_locked()
            except OSError as exc:
                self._fail(exc)

    def marker(self, note: str, mono: float | None = None, wall: float | None = None) -> Marker:
        """Write an operator marker now (or at the given stream times) and return it."""
        m = Marker(time.monotonic() if mono is None else mono, time.time() if wall is None else wall, note)
        self.write(m)
        return m

    def _maybe_rotate(self, mono: float, wall: float) -> None:
        if self._part_mono is None:
            self._part_mono = mono
            return
        if mono - self._part_mono >= self.rotate_s:
            num = len(self.paths) + 1
            nxt = fmt.part_path(self._stem, num, self._suffix).name
            self._finish_part(mono, wall, "rotated", nxt)
            self._open_part(num, wall)
            self._part_mono = mono

    def _flush_locked(self, final: bool = False) -> None:
        if self._fd is None:
            return
        data = bytes(self._buf)
        self._buf.clear()
        if self._z is not None:
            data = self._z.compress(data) + self._z.flush(zlib.Z_FINISH if final else zlib.Z_SYNC_FLUSH)
        view = memoryview(data)
        while view:
            n = os.write(self._fd, view)
            view = view[n:]

    def flush(self) -> None:
        with self._lock:
            if not self.error and self._buf:
                try:
                    self._flush_locked()
                except OSError as exc:
                    self._fail(exc)

    def _flush_loop(self, every: float) -> None:
        while not self._done.wait(every):
            self.flush()

    def _fail(self, exc: OSError) -> None:
        where = self.paths[-1] if self.paths else self._given
        self.error = f"recording stopped: {where}: {exc.strerror or exc}"
        self._buf.clear()
        if self._fd is not None:
            try:
                os.close(self._fd)
            except OSError:
                pass
            self._fd = None

    def close(self) -> None:
        """Write the end record, close the file and stop the flusher; safe to call twice."""
        with self._lock:
            if not self._closed:
                self._closed = True
                if not self.error:
                    try:
                        self._finish_part(time.monotonic(), time.time(), "closed", None)
                    except OSError as exc:
                        self._fail(exc)
        self._done.set()
        if self._flusher is not threading.current_thread():
            self._flusher.join(timeout=2.0)
