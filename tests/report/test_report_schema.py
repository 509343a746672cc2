"""The report JSON against its published schema (docs/report.schema.json, JSON Schema draft 2020-12),
checked with the `jsonschema` library: reports of the three demo recordings without a profile, one
with a profile, and a two-receiver check report; and the schema refuses a report missing a field."""

from __future__ import annotations

import copy
import json
from pathlib import Path
from typing import Any

import pytest

jsonschema = pytest.importorskip("jsonschema", reason="jsonschema not installed (pip install '.[test]')")

from livefix.cli import main  # noqa: E402
from livefix.report.document import FORMAT  # noqa: E402

ROOT = Path(__file__).resolve().parents[2]
SCHEMA = json.loads((ROOT / "docs" / "report.schema.json").read_text(encoding="utf-8"))
RECORDINGS = ("rooftop-5min.lfr", "building-5min.lfr", "soak-10min.lfr")


def _validator() -> Any:
    jsonschema.Draft202012Validator.check_schema(SCHEMA)  # the schema itself is valid draft 2020-12
    return jsonschema.Draft202012Validator(SCHEMA)


def _report(tmp_path: Path, *args: str) -> dict[str, Any]:
    """`livefix report ARGS -o DIR` through the real command line; the JSON it wrote."""
    out = tmp_path / "out"
    assert main(["report", *args, "-o", str(out)]) in (0, 1)  # 1: a profile's check failed
    doc = json.loads((out / "report.json").read_text(encoding="utf-8"))
    for rx in doc["receivers"]:
        assert rx["analysis"]["internal_errors"] == 0  # livefix's own errors stay zero
    return doc


@pytest.fixture(scope="module")
def reports(tmp_path_factory: pytest.TempPathFactory) -> dict[str, dict[str, Any]]:
    docs = {}
    for name in RECORDINGS:
        docs[name] = _report(tmp_path_factory.mktemp(name), str(ROOT / "recordings" / name),
                             "--format", "json")
    docs["profile"] = _report(tmp_path_factory.mktemp("prof"), str(ROOT / "recordings" / RECORDINGS[0]),
                              "--format", "json", "--profile", "commission")
    chk = tmp_path_factory.mktemp("check")
    assert main(["check", "--profile", "commission", "--report", str(chk / "out"),
                 str(ROOT / "recordings" / RECORDINGS[0]), str(ROOT / "recordings" / RECORDINGS[1])]) in (0, 1)
    docs["check"] = json.loads((chk / "out" / "report.json").read_text(encoding="utf-8"))
    return docs


@pytest.mark.parametrize("which", [*RECORDINGS, "profile", "check"])
def test_reports_follow_the_schema(reports: dict[str, dict[str, Any]], which: str) -> None:
    doc = reports[which]
    errors = [f"{e.json_path}: {e.message}" for e in _validator().iter_errors(doc)]
    assert errors == []
    assert doc["format"] == FORMAT == "livefix-report/2" == SCHEMA["properties"]["format"]["const"]


def test_profile_and_check_reports_carry_threshold_sources(reports: dict[str, dict[str, Any]]) -> None:
    assert reports["rooftop-5min.lfr"]["receivers"][0]["record"]["provenance"]["thresholds"] is None
    for which in ("profile", "check"):
        for rx in reports[which]["receivers"]:
            th = rx["record"]["provenance"]["thresholds"]
            assert th and all(t["source"] for t in th)  # every built-in limit names its source
    assert len(reports["check"]["receivers"]) == 2


@pytest.mark.parametrize("path", [("format",), ("meta", "site"), ("receivers", 0, "record"),
                                  ("receivers", 0, "record", "position", "lat_deg"),
                                  ("receivers", 0, "record", "dop", "reported", "hdop", "p95"),
                                  ("receivers", 0, "record", "provenance", "input_sha256")])
def test_schema_refuses_a_report_missing_a_field(reports: dict[str, dict[str, Any]], path: tuple) -> None:
    doc = copy.deepcopy(reports["rooftop-5min.lfr"])
    parent = doc
    for key in path[:-1]:
        parent = parent[key]
    del parent[path[-1]]
    assert not _validator().is_valid(doc)


def test_schema_refuses_a_wrong_type_and_an_unknown_format(reports: dict[str, dict[str, Any]]) -> None:
    doc = copy.deepcopy(reports["rooftop-5min.lfr"])
    doc["receivers"][0]["record"]["position"]["h_ellipsoidal_m"] = "612 m"  # a number with units in the key
    assert not _validator().is_valid(doc)
    doc = copy.deepcopy(reports["rooftop-5min.lfr"])
    doc["format"] = "livefix-report/1"
    assert not _validator().is_valid(doc)
