"""junit.xml: one test case per threshold per receiver, valid against tests/report/junit.xsd."""

import xml.etree.ElementTree as ET
from pathlib import Path

from junit_xsd_lite import load, validate
from report_sample_data import sample_analysis

from livefix.check.profile import evaluate, load_profile
from livefix.report.document import ReceiverRun, build_report
from livefix.report.junit import render_junit

SCHEMA = load(str(Path(__file__).with_name("junit.xsd")))


def _report(**kw):
    prof = load_profile("commission")
    good = sample_analysis()
    bad = sample_analysis(2)
    bad["sky"]["clear_above_deg"] = 60.0
    bad["events"][0]["text"] = "\x00\x1b[31m<![CDATA[ ]]> & </testcase>"
    runs = [ReceiverRun("rx1", "a.lfr", good, evaluate(prof, good)),
            ReceiverRun("rx<2>", "tcp://127.0.0.1:1", bad, evaluate(prof, bad))]
    return build_report(runs, profile=prof, site="Demo \x07 site", started=0.0, ended=30.0, **kw), prof


def test_valid_and_one_case_per_threshold():
    report, prof = _report()
    root = ET.fromstring(render_junit(report))
    assert validate(root, SCHEMA) == []
    suites = root.findall("testsuite")
    assert len(suites) == 2
    for s in suites:
        assert int(s.get("tests")) == len(prof.thresholds) == len(s.findall("testcase"))
    fails = suites[1].findall("testcase/failure")
    assert len(fails) == 1 and "sky.clear_above_deg" in fails[0].get("message")
    assert root.get("failures") == "1" and suites[0].findall("testcase/failure") == []


def test_incomplete_run_adds_an_error_case():
    report, _ = _report(complete=False, incomplete_reason="stopped by the user")
    root = ET.fromstring(render_junit(report))
    assert validate(root, SCHEMA) == []
    assert root.get("errors") == "2"
    assert root.find("testsuite/testcase[@name='run_complete']/error") is not None


def test_validator_rejects_broken_structure():
    bad = ET.fromstring('<testsuites><testsuite name="x" tests="1" failures="0" errors="0" time="1" '
                        'timestamp="2026-01-01T00:00:00" hostname="h"><testcase classname="c" name="n" '
                        'time="0"><failure/><error/></testcase></testsuite></testsuites>')
    assert any("choice" in e for e in validate(bad, SCHEMA))
    bad2 = ET.fromstring('<testsuites><testsuite name="x"/></testsuites>')
    assert any("required" in e for e in validate(bad2, SCHEMA))
