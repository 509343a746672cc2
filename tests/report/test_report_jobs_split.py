"""`livefix report --jobs 2`: the analysis in a second process gives byte-identical JSON, and a
failing, killed or interrupted child ends the command cleanly (exit 2 / 130, no hang, no zombie).

The reference here is the single-process command itself (`--jobs 1`), run on real recordings and on
a simulated soak file with scripted faults; every run is a real process reading a real file."""

from __future__ import annotations

import json
import os
import pickle
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from twinkit import bench_module

from livefix.analysis.engine import Analyzer
from livefix.parallel import (
    M_BATCH,
    M_PACKED,
    AnalysisProcess,
    AnalysisProcessError,
    _dump,
    content_bytes,
    want_split,
)
from livefix.pipeline import Pipeline, StreamCounters
from livefix.record.reader import RecordingReader
from livefix.state.epoch import Epoch, SatObs
from livefix.wire import CHUNK, EVENT, REJECTED, SATS_TABLE_MAX, Replayer, encode, wire_core

ROOT = Path(__file__).resolve().parents[2]
RECORDINGS = sorted((ROOT / "recordings").glob("*.lfr"))
TIMEOUT_S = 60


@pytest.fixture(scope="module")
def soak_file(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """10 min of the soak scenario at 10 Hz (outage, jump, stall, garbage, checksum burst,
    restarts) as a plain NMEA log: more distinct satellite lists than the id table holds."""
    from livefix.commands.simulate import write_file
    from livefix.sim.receiver import SimReceiver
    from livefix.sim.scenario import Scenario

    path = tmp_path_factory.mktemp("split") / "soak-faults.nmea"
    write_file(SimReceiver(Scenario.load("soak"), rate_hz=10, seed=3), path, 600.0)
    return path


def _report(path: Path | str, jobs: str, *extra: str, stdin: bytes | None = None) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "livefix", "report", str(path), "--json", "--jobs", jobs, *extra],
                          cwd=ROOT, capture_output=True, timeout=TIMEOUT_S, input=stdin)


def test_epochs_rebuilt_from_the_wire_are_equal_and_share_satellites_like_the_front(soak_file: Path) -> None:
    front = bench_module("fuzz_wire").Sink()  # keeps the calls in the proxy's record form
    p = Pipeline(analyzer=front)
    for it in RecordingReader(soak_file).items():
        p.feed(it)
    p.finish()
    child = bench_module("fuzz_wire").Sink()
    rep = Replayer(child)
    table: dict = {}
    counter = [0]
    raw = front.calls
    for i in range(0, len(raw), 37):  # odd batch size: batches end anywhere
        rep.run(pickle.loads(pickle.dumps(encode(raw[i:i + 37], table, counter), 5)))
    assert child.calls == front.calls
    kinds = {type(c) is Epoch or c[0] for c in raw}
    assert kinds == {True, CHUNK, REJECTED, EVENT}  # every kind of call was exercised
    eps_f = [c for c in front.calls if type(c) is Epoch]
    eps_c = [c for c in child.calls if type(c) is Epoch]
    assert len(eps_f) > 5000
    same_f = [a.sats is b.sats for a, b in zip(eps_f, eps_f[1:], strict=False)]
    same_c = [a.sats is b.sats for a, b in zip(eps_c, eps_c[1:], strict=False)]
    assert same_c == same_f and any(same_f) and not all(same_f)
    assert counter[0] > SATS_TABLE_MAX  # the id table was cleared and refilled at least once


@pytest.mark.parametrize("path", RECORDINGS, ids=lambda p: p.name)
def test_report_json_is_byte_identical_with_two_processes(path: Path) -> None:
    one, two = _report(path, "1"), _report(path, "2")
    assert one.returncode == two.returncode == 0, two.stderr
    assert one.stdout and two.stdout == one.stdout


def test_soak_file_with_faults_and_a_reference_is_byte_identical(soak_file: Path) -> None:
    ref = ("--ref", "47.1,8.2,500.0")  # invented point: the config must reach the child
    one, two = _report(soak_file, "1", *ref), _report(soak_file, "2", *ref)
    assert one.returncode == two.returncode == 0, two.stderr
    stream = json.loads(one.stdout)["stream"]
    assert stream["bad_checksum"] > 0 and stream["stalls"]  # the scripted faults are in the file
    assert two.stdout == one.stdout


def test_stage_errors_are_counted_in_the_child_as_in_one_process() -> None:
    bad = (Epoch(0.1, 1e9, 1e9, 1, lat="x", lon=2.0, h=3.0, sats=(SatObs("G", 1, "1", "e", 10, 40, True),)),
           Epoch(0.2, 1e9, 1e9, 1, lat=1.0, lon=2.0, h=3.0, sats=(SatObs("G", 1, "1", "e", None, 40, True),)))
    local = Analyzer()
    with AnalysisProcess() as remote:
        for a in (local, remote):
            a.on_chunk(0.0, 1e9, 10)
            for ep in bad:
                a.on_epoch(ep)
        got = remote.snapshot(StreamCounters())
    want = local.snapshot(StreamCounters())
    assert want["internal_errors"] > 0 and want["last_error"]
    assert got == want
    assert remote.proc.returncode is not None  # reaped


def test_a_child_failure_is_one_clear_line() -> None:
    remote = AnalysisProcess()
    try:
        remote._send(_dump(M_BATCH, [(99,)]))  # a record kind the child does not know
        with pytest.raises(AnalysisProcessError, match=r"^analysis process failed: IndexError"):
            remote.snapshot(StreamCounters())
    finally:
        remote.kill()
    assert remote.proc.returncode is not None


@pytest.mark.skipif(wire_core() is None, reason="the packed wire needs the C core")
def test_a_corrupt_packed_batch_is_one_clear_line() -> None:
    remote = AnalysisProcess()
    try:
        remote._send(_dump(M_PACKED, (bytes([77]), [])))  # a record kind the packed wire does not have
        with pytest.raises(AnalysisProcessError,
                           match=r"^analysis process failed: ValueError: packed batch: unknown record kind$"):
            remote.snapshot(StreamCounters())
    finally:
        remote.kill()
    assert remote.proc.returncode is not None


def _children(pid: int) -> list[int]:
    out = []
    for d in Path("/proc").iterdir():
        if d.name.isdigit():
            try:
                stat = (d / "stat").read_text()
            except OSError:
                continue
            if int(stat.rsplit(")", 1)[1].split()[1]) == pid:
                out.append(int(d.name))
    return out


def _default_sigint() -> None:
    signal.signal(signal.SIGINT, signal.SIG_DFL)


def _start_on_stdin(data: bytes) -> tuple[subprocess.Popen, int]:
    """`report - --json --jobs 2` with the first part of data written; returns (front, child pid)."""
    # A shell without job control starts background jobs with SIGINT ignored, and children
    # inherit that; the front must see Ctrl-C as a terminal user's process would.
    front = subprocess.Popen([sys.executable, "-m", "livefix", "report", "-", "--json", "--jobs", "2"], cwd=ROOT,
                             stdin=subprocess.PIPE, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                             preexec_fn=_default_sigint)
    assert front.stdin is not None
    front.stdin.write(data[: len(data) // 3])
    front.stdin.flush()
    deadline = time.monotonic() + 20
    kids: list[int] = []
    while not kids and time.monotonic() < deadline:
        kids = _children(front.pid)
        time.sleep(0.05)
    assert len(kids) == 1, kids
    time.sleep(0.5)  # let the child start reading batches
    return front, kids[0]


def _finish(front: subprocess.Popen, rest: bytes) -> tuple[int, bytes, bytes]:
    try:
        front.stdin.write(rest)  # type: ignore[union-attr]
    except BrokenPipeError:
        pass  # the front has already given up: what we want
    out, err = front.communicate(timeout=TIMEOUT_S)
    return front.returncode, out, err


def _gone(pid: int) -> bool:
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except OSError:
        return True
    return state == "X"  # a zombie ("Z") would mean nobody reaped it


def test_a_killed_child_gives_exit_2_and_a_clear_message(soak_file: Path) -> None:
    data = soak_file.read_bytes()
    front, child = _start_on_stdin(data)
    os.kill(child, signal.SIGKILL)
    rc, out, err = _finish(front, data[len(data) // 3:])
    assert rc == 2, err
    lines = err.decode().strip().splitlines()
    assert lines == ["livefix report: analysis process ended unexpectedly (killed by signal 9)"]
    assert out == b""
    assert _gone(child)


def test_ctrl_c_in_the_front_stops_and_reaps_the_child(soak_file: Path) -> None:
    data = soak_file.read_bytes()
    front, child = _start_on_stdin(data)
    front.send_signal(signal.SIGINT)
    out, err = front.communicate(timeout=TIMEOUT_S)
    assert front.returncode == 130, err
    assert b"Traceback" not in err
    assert _gone(child)


def test_auto_splits_only_big_files(tmp_path: Path) -> None:
    small = RECORDINGS[0]
    assert not want_split("auto", str(small), 5_000_000)
    assert want_split("2", str(small), 5_000_000) and not want_split("1", str(small), 1)
    assert content_bytes("-") == 0 and not want_split("auto", "-", 1)  # stdin: not a file
    assert content_bytes(str(small)) > small.stat().st_size  # gzip recordings count uncompressed
    plain = tmp_path / "x.nmea"
    plain.write_bytes(b"$GPGGA\r\n" * 1000)
    assert content_bytes(str(plain)) == 8000
    assert want_split("auto", str(plain), 8000) == (len(os.sched_getaffinity(0)) >= 2)


def test_a_stuck_child_times_out_instead_of_hanging() -> None:
    remote = AnalysisProcess(stall_s=1.0)
    try:
        os.kill(remote.proc.pid, signal.SIGSTOP)  # alive but never reading again
        big = _dump(M_BATCH, [(CHUNK, 0.0, 0.0, 1)] * 100_000)  # more than the pipe holds
        t0 = time.monotonic()
        with pytest.raises(AnalysisProcessError, match="did not answer for 1 s"):
            for _ in range(10):
                remote._send(big)
        assert time.monotonic() - t0 < 30
    finally:
        remote.kill()
    assert remote.proc.returncode == -signal.SIGKILL
