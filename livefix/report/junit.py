"""JUnit XML for CI: one test case per threshold per receiver (the de-facto Ant/Jenkins structure).

<testsuites> > <testsuite name tests failures errors skipped time timestamp hostname> >
<testcase classname name time> with at most one <failure message type> or <error>. A CI job takes
its status from the exit code; this file tells which threshold failed.
"""

from __future__ import annotations

import socket
import xml.etree.ElementTree as ET
from typing import Any

from livefix.report.document import fmt_value
from livefix.report.escape import xml_text as x
from livefix.site import site_name


def _case(suite: ET.Element, classname: str, name: str) -> ET.Element:
    return ET.SubElement(suite, "testcase", {"classname": x(classname), "name": x(name), "time": "0"})


def render_junit(report: dict[str, Any]) -> str:
    meta = report["meta"]
    prof = (meta.get("profile") or {}).get("name", "none")
    root = ET.Element("testsuites", {"name": x(f"livefix check {prof}")})
    total = fails = errors = 0
    host = x(socket.gethostname())
    stamp = (meta.get("started") or meta.get("generated") or "").rstrip("Z")[:19]
    if stamp.startswith("T"):  # a time of day without a date (livefix.timefmt): xs:dateTime needs one
        stamp = ""
    for rx in report.get("receivers", []):
        suite = ET.SubElement(root, "testsuite")
        cls = f"livefix.{prof}.{rx['name']}"
        n = f = e = 0
        for r in rx.get("results") or []:
            case = _case(suite, cls, r["name"])
            n += 1
            if not r["passed"]:
                f += 1
                got = fmt_value(r["measured"], 4, r.get("unit", "")) if r["measured"] is not None else r["note"]
                fail = ET.SubElement(case, "failure", {
                    "message": x(f"{r['metric']}: measured {got}, limit {r['op']} {fmt_value(r['limit'], 4, r.get('unit', ''))}"),
                    "type": "threshold"})
                fail.text = x(f"{r.get('description', '')}\nsource: {r.get('source', '')}")
        cyc = rx.get("ttff_cycles")
        if cyc:
            case = _case(suite, cls, f"ttff_cycles_{cyc.get('kind', '')}")
            n += 1
            if not cyc.get("passed"):
                f += 1
                ET.SubElement(case, "failure", {"message": x(cyc.get("note") or "TTFF cycles failed"),
                                                "type": "ttff"})
        if not meta.get("complete", True):
            case = _case(suite, cls, "run_complete")
            n += 1
            e += 1
            ET.SubElement(case, "error", {"message": x(f"run ended early: {meta.get('incomplete_reason') or 'stopped'}"),
                                          "type": "incomplete"})
        suite.attrib.update({"name": x(f"{rx['name']} ({prof})"), "tests": str(n), "failures": str(f),
                             "errors": str(e), "skipped": "0", "time": f"{meta.get('duration_s') or 0:.3f}",
                             "timestamp": x(stamp or "1970-01-01T00:00:00"), "hostname": host})
        props = ET.Element("properties")
        for k, v in (("source", rx.get("source")), ("site", site_name(meta.get("site"))), ("livefix", meta.get("livefix_version"))):
            ET.SubElement(props, "property", {"name": k, "value": x(v)})
        suite.insert(0, props)
        total, fails, errors = total + n, fails + f, errors + e
    root.attrib.update({"tests": str(total), "failures": str(fails), "errors": str(errors)})
    ET.indent(root)
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(root, encoding="unicode") + "\n"
