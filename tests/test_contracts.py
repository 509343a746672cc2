"""Every concrete source, sink and analyzer satisfies its Protocol in livefix.contracts, at run time
(runtime_checkable isinstance, which is what the session, the probe and the pipeline ask) and
statically (mypy, when installed: it checks signatures, which isinstance cannot)."""

from __future__ import annotations

import subprocess
import sys
import textwrap
from collections.abc import Iterator
from pathlib import Path

import pytest

from livefix.analysis.batched import BatchedAnalysis
from livefix.analysis.engine import Analyzer
from livefix.contracts import Analysis, ItemSink, Paced, Probed, Seekable, Source, SteerableAnalysis
from livefix.parallel import AnalysisProcess
from livefix.pipeline import Pipeline
from livefix.record.writer import Recorder
from livefix.sources.file import FileSource
from livefix.sources.serial_port import SerialSource
from livefix.sources.sim import SimSource
from livefix.sources.stdin import StdinSource
from livefix.sources.tcp import TcpSource

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "recordings" / "rooftop-5min.lfr"


@pytest.fixture
def sources() -> Iterator[dict[str, object]]:
    made = {"file": FileSource(str(DEMO)), "sim": SimSource("rooftop", speed=1.0, duration=5.0),
            "stdin": StdinSource(), "tcp": TcpSource("tcp://127.0.0.1:9"), "serial": SerialSource("/dev/null-x")}
    yield made
    for s in made.values():
        s.close()  # type: ignore[attr-defined]


# Which capability each source has (from what the source does: a recording can be paced and sought,
# the simulator paced, serial and TCP are live links that can be probed before starting).
CAPABILITIES = {
    "file": {Source, Paced, Seekable},
    "sim": {Source, Paced},
    "stdin": {Source},
    "tcp": {Source, Probed},
    "serial": {Source, Probed},
}


def test_every_source_has_exactly_its_capabilities(sources: dict[str, object]) -> None:
    for name, src in sources.items():
        has = {p for p in (Source, Paced, Seekable, Probed) if isinstance(src, p)}
        assert has == CAPABILITIES[name], name


def test_recorder_is_an_item_sink(tmp_path: Path) -> None:
    rec = Recorder(tmp_path / "x.lfr", source="test")
    try:
        assert isinstance(rec, ItemSink)
        assert not isinstance(rec, Source)
    finally:
        rec.close()


def test_analyzer_and_its_process_stand_in_are_analyses() -> None:
    a = Analyzer()
    assert isinstance(a, Analysis) and isinstance(a, SteerableAnalysis)
    proc = AnalysisProcess()
    try:
        # the stand-in takes the feeding calls and the snapshot, but cannot be steered ...
        assert isinstance(proc, Analysis) and not isinstance(proc, SteerableAnalysis)
        # ... so a pipeline built on it says so instead of failing with an AttributeError
        p = Pipeline(analyzer=proc)
        with pytest.raises(TypeError, match="cannot be steered"):
            p.reset_analysis()
    finally:
        proc.close()
    assert Pipeline().analyzer.__class__ is Analyzer  # the default is the real one
    Pipeline().reset_analysis()  # and it can be steered
    # the batch runs' in-process wrapper takes the same calls and can be steered like what it wraps
    b = BatchedAnalysis(Analyzer())
    assert isinstance(b, Analysis) and isinstance(b, SteerableAnalysis)
    Pipeline(analyzer=b).reset_analysis()
    assert a.internal_errors == 0 and b.inner.internal_errors == 0


STATIC = """
from livefix.analysis.batched import BatchedAnalysis
from livefix.analysis.engine import Analyzer
from livefix.contracts import Analysis, ItemSink, Paced, Probed, Seekable, Source, SteerableAnalysis
from livefix.parallel import AnalysisProcess
from livefix.record.writer import Recorder
from livefix.sources.file import FileSource
from livefix.sources.serial_port import SerialSource
from livefix.sources.sim import SimSource
from livefix.sources.stdin import StdinSource
from livefix.sources.tcp import TcpSource


def check(f: FileSource, m: SimSource, i: StdinSource, t: TcpSource, s: SerialSource, r: Recorder,
          a: Analyzer, p: AnalysisProcess, b: BatchedAnalysis) -> None:
    sources: list[Source] = [f, m, i, t, s]
    paced: list[Paced] = [f, m]
    seekable: Seekable = f
    probed: list[Probed] = [t, s]
    sink: ItemSink = r
    analyses: list[Analysis] = [a, p, b]
    steerable: list[SteerableAnalysis] = [a, b]
    print(sources, paced, seekable, probed, sink, analyses, steerable)
"""


def test_concrete_classes_satisfy_their_protocols_statically(tmp_path: Path) -> None:
    pytest.importorskip("mypy", reason="mypy is not installed (pip install mypy): static half skipped")
    path = tmp_path / "contracts_static.py"
    path.write_text(textwrap.dedent(STATIC))
    bad = tmp_path / "contracts_bad.py"  # the check must be able to fail: a live link is not seekable
    bad.write_text("from livefix.contracts import Seekable\nfrom livefix.sources.tcp import TcpSource\n\n"
                   "def f(t: TcpSource) -> Seekable:\n    return t\n")
    base = [sys.executable, "-m", "mypy", "--follow-imports=silent", "--ignore-missing-imports",
            "--no-error-summary", "--cache-dir", str(tmp_path / ".mypy_cache")]
    ok = subprocess.run(base + [str(path)], capture_output=True, text=True, cwd=ROOT, timeout=600)
    assert ok.returncode == 0, ok.stdout + ok.stderr
    no = subprocess.run(base + [str(bad)], capture_output=True, text=True, cwd=ROOT, timeout=600)
    assert no.returncode == 1 and "Seekable" in no.stdout, no.stdout + no.stderr
