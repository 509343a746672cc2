"""Shared parts of the C twins' differential tests: the real-data corpus and the bench fuzz inputs.

Why tests read bench/: `make fuzz` runs millions of the same random inputs through the C twins under
the sanitizers; the tests run a sample of exactly those inputs, so the generators live in one place.
"""

from __future__ import annotations

import functools
import importlib.util
from pathlib import Path
from types import ModuleType

ROOT = Path(__file__).resolve().parents[1]
# Public logs from real receivers; each file's repository, commit and licence are listed in
# shared/realdata/SOURCES.md (read in place, never copied into the project).
CORPUS = ROOT.parent / "shared" / "realdata" / "corpus"
CORPUS_FILES = sorted(p.name for p in CORPUS.iterdir()) if CORPUS.is_dir() else []


@functools.cache
def bench_fuzz() -> ModuleType:
    """bench/fuzz.py as a module (it also re-exports bench/fuzz_twins.py's generators)."""
    spec = importlib.util.spec_from_file_location("livefix_bench_fuzz", ROOT / "bench" / "fuzz.py")
    assert spec is not None and spec.loader is not None
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod
