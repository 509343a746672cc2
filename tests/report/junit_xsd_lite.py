"""A small validator for the XSD subset used by junit.xsd (no XSD library is installed here).

Understands: global xs:element with inline xs:complexType; xs:sequence / xs:choice of element refs
with minOccurs/maxOccurs; xs:attribute name/type/use; mixed content; types xs:string,
xs:decimal, xs:nonNegativeInteger, xs:dateTime. Anything else in the schema raises, so the subset
cannot silently grow. Undeclared attributes and elements are errors, as in XSD.
"""

from __future__ import annotations

import datetime as _dt
import re
import xml.etree.ElementTree as ET

XS = "{http://www.w3.org/2001/XMLSchema}"
_DEC = re.compile(r"^[+-]?(\d+(\.\d*)?|\.\d+)$")


def _dt_ok(v: str) -> bool:
    try:
        _dt.datetime.fromisoformat(v.replace("Z", "+00:00"))
        return "T" in v
    except ValueError:
        return False


TYPES = {
    "xs:string": lambda v: True,
    "xs:decimal": lambda v: bool(_DEC.match(v)),
    "xs:nonNegativeInteger": lambda v: v.isdigit(),
    "xs:dateTime": _dt_ok,
}


def _occurs(el: ET.Element, key: str, default: int) -> float:
    v = el.get(key)
    return default if v is None else (float("inf") if v == "unbounded" else int(v))


def load(path: str) -> dict[str, ET.Element]:
    root = ET.parse(path).getroot()
    return {e.get("name"): e for e in root.findall(f"{XS}element")}


def validate(doc: ET.Element, schema: dict[str, ET.Element]) -> list[str]:
    errors: list[str] = []
    if doc.tag not in schema:
        return [f"root element {doc.tag!r} is not declared"]
    _check(doc, schema, errors, doc.tag)
    return errors


def _check(el: ET.Element, schema: dict[str, ET.Element], errors: list[str], where: str) -> None:
    decl = schema.get(el.tag)
    if decl is None:
        errors.append(f"{where}: element {el.tag!r} not declared")
        return
    ctype = decl.find(f"{XS}complexType")
    attrs = {a.get("name"): a for a in ctype.findall(f"{XS}attribute")}
    for name, a in attrs.items():
        if a.get("use") == "required" and name not in el.attrib:
            errors.append(f"{where}: missing required attribute {name!r}")
    for name, value in el.attrib.items():
        if name not in attrs:
            errors.append(f"{where}: undeclared attribute {name!r}")
        elif not TYPES[attrs[name].get("type")](value):
            errors.append(f"{where}: attribute {name}={value!r} is not {attrs[name].get('type')}")
    model = [c for c in ctype if c.tag in (f"{XS}sequence", f"{XS}choice")]
    for c in ctype:
        if c.tag not in (f"{XS}sequence", f"{XS}choice", f"{XS}attribute"):
            raise ValueError(f"schema construct {c.tag} outside the supported subset")
    children = list(el)
    if ctype.get("mixed") != "true" and (el.text or "").strip():
        errors.append(f"{where}: text content not allowed")
    if not model:
        if children:
            errors.append(f"{where}: no child elements allowed")
        return
    group = model[0]
    refs = [r.get("ref") for r in group.findall(f"{XS}element")]
    if group.tag == f"{XS}sequence":
        pos = 0
        for r in group.findall(f"{XS}element"):
            n = 0
            while pos < len(children) and children[pos].tag == r.get("ref"):
                pos, n = pos + 1, n + 1
            if not _occurs(r, "minOccurs", 1) <= n <= _occurs(r, "maxOccurs", 1):
                errors.append(f"{where}: {n} <{r.get('ref')}> outside minOccurs/maxOccurs")
        if pos != len(children):
            errors.append(f"{where}: unexpected <{children[pos].tag}> (allowed in order: {refs})")
    else:
        if not _occurs(group, "minOccurs", 1) <= len(children) <= _occurs(group, "maxOccurs", 1):
            errors.append(f"{where}: {len(children)} children, choice allows "
                          f"{group.get('minOccurs', 1)}..{group.get('maxOccurs', 1)}")
        for ch in children:
            if ch.tag not in refs:
                errors.append(f"{where}: <{ch.tag}> not one of {refs}")
    for i, ch in enumerate(children):
        _check(ch, schema, errors, f"{where}/{ch.tag}[{i}]")
