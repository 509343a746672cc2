"""Run the analysis in a second process, so a long report uses two cores.

Why it gives the same numbers: the front process runs framing, decoding and the state model exactly
as a single Pipeline does, and hands the Pipeline an `AnalysisProcess` in place of the Analyzer. That
proxy records the four Analyzer calls in order and sends them in batches to a child process, which
replays them into a real Analyzer built from the same AnalysisConfig; `snapshot(counters)` asks the
child for `Analyzer.snapshot(counters)`. Same calls, same order, same values -> same snapshot.

Wire format: length-prefixed pickled messages over two OS pipes; a batch holds the recorded calls
as livefix.wire encodes them, packed by the C core when it is built (M_PACKED) and pickled records
otherwise (M_BATCH). The proxy is a livefix.contracts.Analysis (the feeding calls and the
snapshot), not a SteerableAnalysis: batch runs never reset or move the reference.

Robustness: the front's pipe ends are non-blocking and every wait is a select() with a timeout that
also checks the child is alive, so a crashed, killed or stuck child gives AnalysisProcessError (one
line) instead of a hang; a full pipe is the backpressure that keeps memory bounded. The child runs
in its own process group (Ctrl-C reaches only the front, which stops and reaps it) and exits on
end of input when the front goes away. The child is a fresh interpreter (no fork of a process that
may hold source threads or locks).
"""

from __future__ import annotations

import gc
import os
import pickle
import select
import signal
import struct
import subprocess
import sys
import time
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

from livefix.analysis.config import AnalysisConfig
from livefix.contracts import Analysis
from livefix.state.epoch import Epoch
from livefix.wire import CHUNK, EVENT, REJECTED, Replayer, encode, sink

BATCH_EPOCHS = 256  # epochs per message: large enough to amortise pickling, small enough to stream
STALL_S = 120.0  # no progress writing to / reading from a live child for this long = stuck
TICK_S = 0.5  # how often a wait looks at the child
PROTOCOL = 5
GZIP_RATIO = 9  # NMEA recordings compress about 9:1 (measured on the demo recordings)
# Auto split from this file size: below it the second process's start-up (~0.1 s) eats the gain
# (measured in bench/bench_replay.py; a 5 MB recording is about 7 minutes at 10 Hz).
SPLIT_MIN_BYTES = 5_000_000
PIPE_BYTES = 1 << 20  # front -> child buffer: bounded, and hides the child's ~0.2 s start-up

# Message kinds. M_BATCH carries pickled records, M_PACKED the packed ones (livefix.wire).
M_CONFIG, M_BATCH, M_SNAPSHOT, M_STOP, M_REPLY, M_ERROR, M_PACKED = range(7)
_HEADER = struct.Struct("!Q")


class AnalysisProcessError(RuntimeError):
    """The analysis process failed, died or stopped answering; the message is one line."""


# -- wire helpers ---------------------------------------------------------------------------------
def _dump(kind: int, body: Any) -> bytes:
    data = pickle.dumps((kind, body), PROTOCOL)
    return _HEADER.pack(len(data)) + data


# -- child ----------------------------------------------------------------------------------------
def _read_exact(fd: int, n: int) -> bytes | None:
    parts, left = [], n
    while left:
        b = os.read(fd, min(left, 1 << 20))
        if not b:
            return None
        parts.append(b)
        left -= len(b)
    return b"".join(parts)


def _write_all(fd: int, data: bytes) -> None:
    view = memoryview(data)
    while view:
        view = view[os.write(fd, view):]


def serve(rfd: int, wfd: int) -> int:
    """The analysis process: config, then batches and snapshot requests until stop or end of input."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # the front handles Ctrl-C and stops us
    from livefix.batchgc import BATCH_GC_THRESHOLD

    gc.set_threshold(*BATCH_GC_THRESHOLD)  # this process only ever runs a batch (livefix.batchgc), imports too
    from livefix.analysis.engine import Analyzer

    replay: Replayer | None = None
    try:
        while True:
            head = _read_exact(rfd, _HEADER.size)
            if head is None:
                return 0  # the front went away
            body = _read_exact(rfd, _HEADER.unpack(head)[0])
            if body is None:
                return 0
            kind, payload = pickle.loads(body)
            if kind == M_CONFIG:
                replay = Replayer(Analyzer(payload))
            elif kind == M_BATCH and replay is not None:
                replay.run(payload)
            elif kind == M_PACKED and replay is not None:
                replay.run_packed(*payload)
            elif kind == M_SNAPSHOT and replay is not None:
                _write_all(wfd, _dump(M_REPLY, replay.analyzer.snapshot(payload)))
            elif kind == M_STOP:
                return 0
    except BrokenPipeError:
        return 0
    except Exception as exc:  # noqa: BLE001 - reported to the front as one line
        try:
            _write_all(wfd, _dump(M_ERROR, f"{type(exc).__name__}: {exc}"))
        except OSError:
            pass
        return 1


# -- front ----------------------------------------------------------------------------------------
class AnalysisProcess:
    """Stands in for the Analyzer in a Pipeline; the real one runs in a child process."""

    def __init__(self, config: AnalysisConfig | None = None, batch_epochs: int = BATCH_EPOCHS,
                 stall_s: float = STALL_S, native: bool | None = None) -> None:
        self.batch_epochs = batch_epochs
        self.stall_s = stall_s
        # front CPU seconds spent encoding (or, with the sink, taking) and pickling batches (for the bench)
        self.pickle_s = 0.0
        self.sent_bytes = 0
        self._calls: list = []
        self._append = self._calls.append
        self._epochs = 0
        self._table: dict[int, tuple[tuple, int]] = {}
        self._next_id = [0]
        # the packed wire: the C sink takes the four calls itself (None: pickled records; native as
        # livefix.corepick.pick_core says)
        self._sink = sink(batch_epochs, self.flush, native)
        if self._sink is not None:
            self.on_chunk, self.on_rejected = self._sink.on_chunk, self._sink.on_rejected  # type: ignore[method-assign]
            self.on_event, self.on_epoch = self._sink.on_event, self._sink.on_epoch  # type: ignore[method-assign]
        self._closed = False
        c_read, f_write = os.pipe()
        f_read, c_write = os.pipe()
        root = str(Path(__file__).resolve().parents[1])
        # os._exit: nothing to flush, and skipping interpreter teardown saves ~30 ms per run
        code = (f"import os, sys; sys.path.insert(0, {root!r}); from livefix.parallel import serve; "
                f"os._exit(serve({c_read}, {c_write}))")
        try:
            self.proc = subprocess.Popen([sys.executable, "-c", code], pass_fds=(c_read, c_write),
                                         stdin=subprocess.DEVNULL, process_group=0, close_fds=True)
        finally:
            os.close(c_read)
            os.close(c_write)
        self._wfd, self._rfd = f_write, f_read
        _widen(f_write)
        os.set_blocking(f_write, False)
        os.set_blocking(f_read, False)
        self._send(_dump(M_CONFIG, config or AnalysisConfig()))

    # -- the Analyzer's feeding methods, recorded ---------------------------------------------
    def on_chunk(self, mono: float, wall: float, nbytes: int) -> None:
        self._append((CHUNK, mono, wall, nbytes))

    def on_rejected(self, reason: str, mono: float, wall: float) -> None:
        self._append((REJECTED, reason, mono, wall))

    def on_event(self, ev: Any) -> None:
        self._append((EVENT, ev))

    def on_epoch(self, ep: Epoch) -> None:
        self._append(ep)
        self._epochs += 1
        if self._epochs >= self.batch_epochs:
            self.flush()

    def flush(self) -> None:
        if not (self._sink.pending if self._sink is not None else self._calls):
            return
        t0 = time.thread_time()
        try:
            if self._sink is not None:
                data = _dump(M_PACKED, self._sink.take())
            else:
                data = _dump(M_BATCH, encode(self._calls, self._table, self._next_id))
        except (pickle.PicklingError, TypeError, AttributeError) as exc:  # e.g. an odd value in Event.data
            raise AnalysisProcessError(f"cannot send to the analysis process: {type(exc).__name__}: {exc}") from None
        self.pickle_s += time.thread_time() - t0
        self._calls.clear()
        self._epochs = 0
        self._send(data)

    def snapshot(self, counters: Any) -> dict[str, Any]:
        """Analyzer.snapshot(counters), computed by the child after every call sent so far."""
        self.flush()
        self._send(_dump(M_SNAPSHOT, counters))
        kind, body = self._receive()
        if kind != M_REPLY:
            raise AnalysisProcessError(f"analysis process failed: {body}")
        return body

    def close(self) -> None:
        """Stop the child and reap it (idempotent; kills it if it does not stop promptly)."""
        if self._closed:
            return
        self._closed = True
        for fd in (self._wfd, self._rfd):  # end of input: the child returns from serve() and exits
            try:
                os.close(fd)
            except OSError:
                pass
        try:
            self.proc.wait(timeout=5.0)
        except subprocess.TimeoutExpired:
            self.proc.kill()
            self.proc.wait()

    def kill(self) -> None:
        """Stop at once (Ctrl-C, errors): kill and reap the child."""
        if self.proc.poll() is None:
            self.proc.kill()
        self.close()

    def __enter__(self) -> AnalysisProcess:
        return self

    def __exit__(self, *exc: object) -> None:
        if exc[0] is None:
            self.close()
        else:
            self.kill()

    # -- transport -----------------------------------------------------------------------------
    def _dead(self) -> AnalysisProcessError:
        """Why the child is gone: its own error message if it sent one, else how it ended."""
        try:
            kind, body = self._receive(wait=False)
            if kind == M_ERROR:
                return AnalysisProcessError(f"analysis process failed: {body}")
        except AnalysisProcessError:
            pass
        try:
            rc = self.proc.wait(timeout=2.0)
        except subprocess.TimeoutExpired:
            return AnalysisProcessError("analysis process stopped reading")
        how = f"killed by signal {-rc}" if rc < 0 else f"exit code {rc}"
        return AnalysisProcessError(f"analysis process ended unexpectedly ({how})")

    def _wait(self, read: bool, deadline: float) -> None:
        fd = self._rfd if read else self._wfd
        while True:
            ready = select.select([fd] if read else [], [] if read else [fd], [], TICK_S)
            if ready[0] or ready[1]:
                return
            if self.proc.poll() is not None:
                raise self._dead()
            if time.monotonic() > deadline:
                raise AnalysisProcessError(f"analysis process did not answer for {self.stall_s:g} s")

    def _send(self, data: bytes) -> None:
        if self._closed:
            raise AnalysisProcessError("analysis process already closed")
        view = memoryview(data)
        deadline = time.monotonic() + self.stall_s
        while view:
            try:
                n = os.write(self._wfd, view)
            except BlockingIOError:
                self._wait(False, deadline)
                continue
            except (BrokenPipeError, ConnectionResetError):
                raise self._dead() from None
            view = view[n:]
            deadline = time.monotonic() + self.stall_s
        self.sent_bytes += len(data)

    def _read(self, n: int, wait: bool) -> bytes:
        parts, left = [], n
        deadline = time.monotonic() + self.stall_s
        while left:
            try:
                b = os.read(self._rfd, left)
            except BlockingIOError:
                if not wait:
                    raise AnalysisProcessError("no message") from None
                self._wait(True, deadline)
                continue
            if not b:
                raise self._dead() if wait else AnalysisProcessError("end of input")
            parts.append(b)
            left -= len(b)
            deadline = time.monotonic() + self.stall_s
        return b"".join(parts)

    def _receive(self, wait: bool = True) -> tuple[int, Any]:
        head = self._read(_HEADER.size, wait)
        kind, body = pickle.loads(self._read(_HEADER.unpack(head)[0], wait))
        return kind, body


def _widen(fd: int) -> None:
    """A bigger pipe lets the front run ahead while the child is still importing (Linux only)."""
    try:
        import fcntl

        fcntl.fcntl(fd, fcntl.F_SETPIPE_SZ, PIPE_BYTES)
    except (ImportError, AttributeError, OSError):
        pass  # the default pipe size only costs the start-up overlap


def usable_cpus() -> int:
    """CPUs this process may run on (affinity mask where the platform has one)."""
    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


def content_bytes(path: str) -> int:
    """About how many bytes of NMEA a file holds: its size, times GZIP_RATIO when gzip-compressed;
    0 for anything but a regular file (stdin, devices, pipes)."""
    import stat

    try:
        st = os.stat(path)
        if not stat.S_ISREG(st.st_mode):
            return 0
        with open(path, "rb") as f:
            gz = f.read(2) == b"\x1f\x8b"
    except (OSError, ValueError):
        return 0
    return st.st_size * (GZIP_RATIO if gz else 1)


def want_split(jobs: str, path: str, min_bytes: int = SPLIT_MIN_BYTES) -> bool:
    """--jobs auto|1|2: auto splits only a file of at least min_bytes of content on >= 2 usable CPUs."""
    if jobs != "auto":
        return jobs == "2"
    return usable_cpus() >= 2 and content_bytes(path) >= min_bytes


@contextmanager
def analyzer_for(config: AnalysisConfig, split: bool) -> Iterator[Analysis]:
    """The analyzer to hand a batch run's Pipeline: a started analysis process (split), closed when
    the block ends and killed and reaped if it ends by an error or Ctrl-C; else an Analyzer in this
    process that takes the calls in runs (livefix.analysis.batched: same calls, same snapshot)."""
    if not split:
        from livefix.analysis.batched import BatchedAnalysis
        from livefix.analysis.engine import Analyzer

        yield BatchedAnalysis(Analyzer(config))
        return
    proxy = AnalysisProcess(config)
    try:
        yield proxy
    except BaseException:
        proxy.kill()
        raise
    proxy.close()
