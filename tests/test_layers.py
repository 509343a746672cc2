"""The import layers: every module of livefix imports only modules of its own rank or below, and no
import circle exists, counting function-level (lazy) and TYPE_CHECKING imports too.

The ranks below are the one table of the layer order (docs/architecture.md draws it); a new module
or package must be given a rank here, so that the test says where it belongs.
"""

from __future__ import annotations

import ast
import tomllib
from pathlib import Path

import pytest

PKG = Path(__file__).resolve().parents[1] / "livefix"

# Longest prefix wins. Same rank = siblings that may share; a lower rank never imports a higher one.
RANKS: dict[str, int] = {
    # 0: shared item types and utilities every stage may import
    "livefix": 0,  # the package itself (__version__)
    "livefix.items": 0,
    "livefix.contracts": 0,
    "livefix.timefmt": 0,
    "livefix.dates": 0,
    "livefix.geodesy": 0,
    "livefix.checksum": 0,
    "livefix.refpoint": 0,
    "livefix.site": 0,
    "livefix.faults": 0,
    "livefix.corepick": 0,
    "livefix.batchgc": 0,
    # 1: the simulated receiver, a maker of bytes below the sources
    "livefix.sim": 1,
    # 2: byte sources, and the recording format they read and the reader thread writes
    "livefix.sources": 2,
    "livefix.record": 2,
    # 3..6: the stages
    "livefix.framing": 3,
    "livefix.binframe": 3,
    "livefix.decode": 4,
    "livefix.state": 5,
    "livefix.analysis": 6,
    # 7: running the stages: the pipeline, its two-process split, the threaded session, start-up probes
    "livefix.pipeline": 7,
    "livefix.parallel": 7,
    "livefix.wire": 7,
    "livefix.session": 7,
    "livefix.probe": 7,
    # 8..11: readers of snapshots; where one reuses another, documents < metrics < checks < screen
    "livefix.report": 8,
    "livefix.export": 9,
    "livefix.check": 10,
    "livefix.ui": 11,
    # 12: command glue, 13: the command line
    "livefix.commands": 12,
    "livefix.cli": 13,
    "livefix.__main__": 13,
}


def rank(module: str) -> int:
    """The rank of the longest entry that names the module or a package holding it ("livefix"
    itself names only the package's own __init__, so a new top-level module must be entered)."""
    if module == "livefix":
        return RANKS[module]
    parts = module.split(".")
    for n in range(len(parts), 1, -1):
        key = ".".join(parts[:n])
        if key in RANKS:
            return RANKS[key]
    raise KeyError(f"{module} has no rank in tests/test_layers.py RANKS: give it one")


def modules() -> dict[str, Path]:
    out = {}
    for path in sorted(PKG.rglob("*.py")):
        parts = path.relative_to(PKG.parent).with_suffix("").parts
        out[".".join(parts[:-1] if parts[-1] == "__init__" else parts)] = path
    return out


def imports(name: str, path: Path, known: dict[str, Path]) -> set[tuple[str, int]]:
    """(imported livefix module, line) for every import statement anywhere in the file."""
    package = name if path.name == "__init__.py" else name.rpartition(".")[0]
    found = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            found |= {(a.name, node.lineno) for a in node.names}
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                up = package.split(".")[: len(package.split(".")) - node.level + 1]
                base = ".".join(up + ([base] if base else []))
            for a in node.names:  # `from pkg import module` names the module, not the package
                sub = f"{base}.{a.name}"
                found.add((sub if sub in known else base, node.lineno))
    return {(m, line) for m, line in found if m == "livefix" or m.startswith("livefix.")}


def graph() -> dict[str, set[tuple[str, int]]]:
    known = modules()
    return {name: imports(name, path, known) for name, path in known.items()}


def test_every_module_has_a_rank() -> None:
    missing = []
    for name in modules():
        try:
            rank(name)
        except KeyError:
            missing.append(name)
    assert missing == []


def upward(edges: dict[str, set[tuple[str, int]]]) -> list[str]:
    return [f"{src}:{line} imports {dst} (rank {rank(src)} -> {rank(dst)})"
            for src, deps in sorted(edges.items()) for dst, line in sorted(deps) if rank(dst) > rank(src)]


def test_no_import_goes_up_the_layers() -> None:
    assert upward(graph()) == []


def test_the_rank_rule_flags_an_upward_import() -> None:
    # hand-made edges: the layer order of docs/architecture.md
    assert upward({"livefix.sources.sim": {("livefix.sim.receiver", 14)}}) == []  # sim is below sources
    assert upward({"livefix.sim.x": {("livefix.sources.base", 3)}}) == [
        "livefix.sim.x:3 imports livefix.sources.base (rank 1 -> 2)"]
    assert upward({"livefix.ui.app": {("livefix.commands.check", 9)}}) != []  # glue is above the screen
    assert rank("livefix.commands.watch") == rank("livefix.commands")  # longest prefix wins
    with pytest.raises(KeyError):
        rank("livefix.newmodule")  # not entered in the table: the test asks for a rank


def cycles(edges: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected components with more than one member (Tarjan), i.e. the import circles."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on: set[str] = set()
    out: list[list[str]] = []

    def visit(v: str) -> None:
        index[v] = low[v] = len(index)
        stack.append(v)
        on.add(v)
        for w in sorted(edges.get(v, ())):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            comp = []
            while True:
                w = stack.pop()
                on.discard(w)
                comp.append(w)
                if w == v:
                    break
            if len(comp) > 1 or v in edges.get(v, ()):
                out.append(sorted(comp))

    for v in sorted(edges):
        if v not in index:
            visit(v)
    return out


def test_no_import_circles_between_modules() -> None:
    edges = {src: {dst for dst, _ in deps if dst != src} for src, deps in graph().items()}
    assert cycles(edges) == []


def test_no_import_circles_between_packages() -> None:
    # a package-level circle (report <-> check) is a tangle even when no two modules form one
    def pkg(m: str) -> str:
        return ".".join(m.split(".")[:2])

    edges: dict[str, set[str]] = {}
    for src, deps in graph().items():
        edges.setdefault(pkg(src), set()).update(pkg(d) for d, _ in deps if pkg(d) != pkg(src))
    assert cycles(edges) == []


@pytest.mark.parametrize("edges, expected", [
    ({"a": {"b"}, "b": {"a"}}, [["a", "b"]]),  # hand-made: a two-module circle is found
    ({"a": {"b"}, "b": {"c"}, "c": set()}, []),  # a chain is not a circle
    ({"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}, [["a", "b", "c"]]),
])
def test_the_circle_finder_finds_circles(edges: dict[str, set[str]], expected: list[list[str]]) -> None:
    assert cycles(edges) == expected


def test_the_import_reader_sees_lazy_and_relative_imports(tmp_path: Path) -> None:
    src = tmp_path / "m.py"
    src.write_text("def f():\n    from livefix.ui import app\n    from . import x\n", encoding="utf-8")
    known = {"livefix.ui.app": src, "livefix.record.x": src}
    assert imports("livefix.record.m", src, known) == {("livefix.ui.app", 2), ("livefix.record.x", 3)}


def test_every_package_is_installed() -> None:
    # a package moved or added (commands/) must also be listed for a non-editable install
    listed = set(tomllib.loads((PKG.parent / "pyproject.toml").read_text(encoding="utf-8"))
                 ["tool"]["setuptools"]["packages"])
    packages = {name for name, path in modules().items() if path.name == "__init__.py"}
    assert packages - listed == set()
