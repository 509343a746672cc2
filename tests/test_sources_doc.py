"""docs/sources.md is the one sources file: every cited anchor exists, nothing cites a file outside.

Why: comments that cite a file outside the repository cannot be checked by a reader of the
repository. Every published fact lives in docs/sources.md and comments cite its entries as
`docs/sources.md#anchor`; this test keeps those citations resolvable.
"""

from __future__ import annotations

import os
import re
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
SOURCES = ROOT / "docs" / "sources.md"
CITE = re.compile(r"docs/sources\.md#([\w-]+)")
# the old, outside sources file; built from parts so this file does not cite it itself
OUTSIDE = "REFERENCES" + ".md"
TEXT_SUFFIXES = {".py", ".md", ".toml", ".json", ".txt", ".c", ".h", ".tcss", ".cfg", ".ini", ".yml", ".yaml", ""}
SKIP_DIRS = {".git", ".venv", "build", "dist", "__pycache__", ".pytest_cache", ".ruff_cache", ".hypothesis"}


def slug(heading: str) -> str:
    """GitHub's heading anchor (common practice): lowercase, drop punctuation but '-' and '_',
    spaces -> '-'."""
    return re.sub(r"[^\w\- ]", "", heading.strip().lower()).replace(" ", "-")


def anchors(markdown: str) -> set[str]:
    """Anchors of every ATX heading outside fenced code blocks (repeats get -1, -2 as on GitHub)."""
    seen: dict[str, int] = {}
    out: set[str] = set()
    fenced = False
    for line in markdown.splitlines():
        if line.startswith("```"):
            fenced = not fenced
        m = None if fenced else re.match(r"#{1,6} +(.+?) *#* *$", line)
        if m:
            base = slug(m.group(1))
            n = seen.get(base, 0)
            seen[base] = n + 1
            out.add(base if n == 0 else f"{base}-{n}")
    return out


def repo_files(*tops: str) -> list[Path]:
    """Text files under the given folders or files of the repository (build output and caches pruned)."""
    files: list[Path] = []
    for top in tops:
        start = ROOT / top
        if start.is_file():
            files.append(start)
            continue
        for folder, dirs, names in os.walk(start):
            dirs[:] = [d for d in dirs if d not in SKIP_DIRS and not d.endswith(".egg-info")]
            files += [Path(folder) / n for n in names if Path(n).suffix in TEXT_SUFFIXES]
    return files


def read(p: Path) -> str:
    try:
        return p.read_text(encoding="utf-8")
    except (UnicodeDecodeError, OSError):
        return ""


def test_slug_follows_github_rules() -> None:
    # GitHub heading anchors (common practice): "Typical C/N0" -> "typical-cn0", "WGS 84" -> "wgs-84"
    assert slug("Typical C/N0") == "typical-cn0"
    assert slug("WGS 84") == "wgs-84"
    assert slug("0xB5 0x62 frame") == "0xb5-0x62-frame"
    assert slug("Reflections (GNSS interferometric reflectometry)") == "reflections-gnss-interferometric-reflectometry"
    assert anchors("# A\n## A\n```\n# B\n```\n") == {"a", "a-1"}  # repeats numbered; code is not a heading


def test_every_cited_anchor_exists() -> None:
    have = anchors(SOURCES.read_text(encoding="utf-8"))
    cited = {(p.relative_to(ROOT).as_posix(), a) for p in repo_files("livefix", "tests", "bench", "docs",
                                                                      "README.md", "DEVELOPERS.md")
             for a in CITE.findall(read(p))}
    assert len(cited) >= 20  # the citations exist at all (about 80 when this test was written)
    # "docs/sources.md#anchor" itself is how the docs describe the form, not a citation
    cited |= {("docs/sources.md", a) for a in re.findall(r"\]\(#([\w-]+)\)", SOURCES.read_text(encoding="utf-8"))}
    missing = sorted(f"{f}: #{a}" for f, a in cited if a not in have and a != "anchor")
    assert not missing, "cited anchors not in docs/sources.md:\n" + "\n".join(missing)


def test_nothing_cites_the_outside_references_file() -> None:
    me = Path(__file__).resolve()
    hits = sorted(f"{p.relative_to(ROOT).as_posix()}:{i}" for p in repo_files(".") if p.resolve() != me
                  for i, line in enumerate(read(p).splitlines(), 1) if OUTSIDE in line)
    assert not hits, f"cite docs/sources.md instead of {OUTSIDE}:\n" + "\n".join(hits)


def test_sources_doc_has_no_author_citations() -> None:
    # papers are cited by title, journal, volume and year only (DEVELOPERS.md, "No real names")
    text = SOURCES.read_text(encoding="utf-8")
    assert not re.search(r"\bet al\b", text)
