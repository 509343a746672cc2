"""`livefix report` on a built-in scenario's recording with `--site site.toml` (issue 16, "done when"):
every site field the file gives is in the JSON, the Markdown and the HTML; a field the file leaves out
is taken from the receiver's own TXT announcement or shown as "not recorded"; the cautions close the
human documents. Expected values are read from the site file itself with tomllib, not from livefix."""

from __future__ import annotations

import html
import json
import tomllib
from pathlib import Path
from typing import Any

import pytest

from livefix.cli import main

ROOT = Path(__file__).resolve().parents[2]
ROOFTOP = ROOT / "recordings" / "rooftop-5min.lfr"
SITE = ROOT / "docs" / "site.example.toml"
# The file's keys and the label a reader sees beside each (our own wording, livefix.site.FIELDS).
LABELS = {"name": "Site", "antenna_model": "Antenna model", "antenna_height_m": "Antenna height above the mark",
          "height_method": "Antenna height measured", "height_to": "Antenna height measured to",
          "mount": "Mount", "receiver_model": "Receiver model", "operator": "Operator"}
CAUTION_WORDS = ("Work at height", "Lightning and surges", "not a survey certificate", "Local codes")


@pytest.fixture(scope="module")
def docs(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    out = tmp_path_factory.mktemp("site")
    assert main(["report", str(ROOFTOP), "--site", str(SITE), "-o", str(out)]) == 0
    return {"json": json.loads((out / "report.json").read_text(encoding="utf-8")),
            "md": (out / "report.md").read_text(encoding="utf-8"),
            "html": html.unescape((out / "report.html").read_text(encoding="utf-8")),
            "site": tomllib.loads(SITE.read_text(encoding="utf-8"))}


def _shown(value: Any) -> str:
    return f"{value:g} m" if isinstance(value, float) else str(value)


def test_every_site_field_is_in_all_three_formats(docs: dict[str, Any]) -> None:
    site, meta = docs["site"], docs["json"]["meta"]["site"]
    for key, label in LABELS.items():
        assert meta[key] == site[key], key  # JSON keeps the value as given
        row_md = next(ln for ln in docs["md"].splitlines() if ln.startswith(f"| {label} |"))
        assert _shown(site[key]) in row_md.replace("\\", ""), (key, row_md)
        assert label in docs["html"] and _shown(site[key]) in docs["html"], key
    # the notes keep their text (one table cell per line break in Markdown)
    assert meta["notes"] == site["notes"]
    assert "stair tower to the south-west" in docs["md"] and "stair tower to the south-west" in docs["html"]


def test_a_field_the_file_leaves_out_comes_from_the_receiver_or_says_not_recorded(docs: dict[str, Any]) -> None:
    meta = docs["json"]["meta"]["site"]
    assert "receiver_firmware" not in docs["site"] and meta["receiver_firmware"] is None
    # the simulated receiver announces its firmware in a TXT sentence at start (NMEA 0183 TXT)
    announced = meta["announced"].get("receiver_firmware")
    if announced:
        assert f"{announced} (announced by the receiver)" in docs["md"]
        assert f"{announced} (announced by the receiver)" in docs["html"]
    else:
        assert "| Receiver firmware | not recorded |" in docs["md"]
    # the user's model wins over the announced one (the site file is the technician's word)
    assert meta["receiver_model"] == docs["site"]["receiver_model"]


def test_cautions_close_markdown_and_html(docs: dict[str, Any]) -> None:
    for words in CAUTION_WORDS:
        assert words in docs["md"][docs["md"].rindex("## "):], words  # in the last section: the footer
        assert words in docs["html"][docs["html"].rindex("<footer"):], words
