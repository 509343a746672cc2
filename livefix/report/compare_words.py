"""The words of a spot comparison: why each figure came out as it did, and the overall advice.

Kept apart from the arithmetic (report/compare.py) so the texts can be read and changed in one
place; every renderer (terminal, Markdown, HTML) prints these same plain-text sentences.
"""

from __future__ import annotations

import math
from typing import Any

# figures whose difference says most about the spot itself, named first among the reasons
PRIMARY = ("obstructed_share", "cn0_residual_db")


def duration_text(seconds: Any) -> str:
    """A session length for people: 45 s, 5 min, 1 h 30 min."""
    if not isinstance(seconds, int | float) or not math.isfinite(seconds):
        return "length unknown"
    s = round(seconds)
    if s < 120:
        return f"{s} s"
    h, m = divmod(round(s / 60), 60)
    return f"{h} h {m} min" if h and m else f"{h} h" if h else f"{m} min"


def value_text(v: Any, unit: str, signed: bool = False) -> str:
    if v is None:
        return "not measured"
    if unit == "ratio":
        return f"{v * 100:.1f} %"
    if unit == "dB":
        return f"{v:+.1f} dB" if signed and v else f"{v:.1f} dB"
    if unit == "count":
        return f"{v:.0f}"
    if unit == "m":
        return f"{v:.3f} m"
    return f"{v:g} {unit}".strip()


def _lower(label: str) -> str:
    """Sentence case inside a sentence, keeping abbreviations (C/N0, CEP95) as they are."""
    return label if len(label) > 1 and (label[1].isupper() or label[1] == "/") else label[:1].lower() + label[1:]


def _join(names: list[str]) -> str:
    return names[0] if len(names) == 1 else ", ".join(names[:-1]) + " and " + names[-1]


def _context(f: dict[str, Any], names: list[str]) -> str:
    """What the figure was taken over, and where the worse sessions lose (obstruction sectors)."""
    d = f.get("detail") or []
    key = f["key"]
    if key == "obstructed_share" and d:
        out = f"over the {d[0]['common_cells']} sky cells above the mask seen by every session"
        worse = [i for i in range(len(names)) if i not in f["best"]] if f["outcome"] == "better" else []
        for i in worse:
            secs = [s for s in d[i]["sectors"] if s["obstructed_share"]]
            secs.sort(key=lambda s: -s["obstructed_share"])
            if secs:
                out += (f"; {names[i]} obstructed in " + ", ".join(
                    f"{s['az_from']}–{s['az_to']}° ({s['obstructed_share'] * 100:.0f} %)" for s in secs[:3]))
        return out
    if key in ("cn0_residual_db", "cn0_spread_db") and d:
        n = sum(1 for b in (d[0].get("bands") or []) if b.get("common")) if key == "cn0_residual_db" \
            else d[0].get("bands", 0)
        return (f"equal weight over the {n} elevation bands every session observed" if key == "cn0_residual_db"
                else f"equal weight over the {n} elevation bands where every session saw two sky cells or more")
    if key == "cep95_m" and d:
        return f"fix type {d[0].get('label')}"
    if key == "weak_sectors":
        parts = []
        for name, secs in zip(names, d, strict=False):
            for s in secs[:3]:
                parts.append(f"{name} {s.get('az_from')}–{s.get('az_to')}° at {s.get('el_from')}–{s.get('el_to')}° "
                             f"({s.get('below_curve_db')} dB below its curve)")
        return "; ".join(parts)
    return ""


def why(f: dict[str, Any], names: list[str]) -> str:
    """One sentence: the outcome, the values, the tolerance and what the figure was taken over."""
    if f["outcome"] == "not compared":
        return f"not compared: {f['why_not_compared']}"
    signed = f["key"] == "cn0_residual_db"
    vals = ", ".join(f"{n} {value_text(v, f['unit'], signed)}" for n, v in zip(names, f["values"], strict=False))
    ctx = _context(f, names)
    head = ("equal" if f["outcome"] == "equal" else f"{_join([names[i] for i in f['best']])} better "
            f"({f['better']} is better)")
    return f"{head}: {vals} ({f['tolerance_text']}" + (f"; {ctx})" if ctx else ")")


def recommendation(figures: list[dict[str, Any]], facts: list[dict[str, Any]], rules: Any) -> dict[str, Any]:
    """The spot better on more figures than every other, with its reasons; else no clear winner.
    Always states the session lengths and how strong the evidence is."""
    names = [x["name"] for x in facts]
    decided = [f for f in figures if f["outcome"] == "better"]
    scores = [sum(1 for f in decided if i in f["best"]) for i in range(len(names))]
    top = max(scores, default=0)
    leaders = [i for i, s in enumerate(scores) if s == top]
    winner = leaders[0] if top > 0 and len(leaders) == 1 else None
    lengths = ", ".join(f"{x['name']} {duration_text(x['duration_s'])}" for x in facts)
    weak = [x["name"] for x in facts if x["weak_evidence"]]
    limit = duration_text(rules.weak_evidence_s)
    evidence = (f"Session lengths: {lengths}. " + (
        f"Weak evidence: {_join(weak)} ran for less than {limit}, which samples only part of the "
        f"satellite passes; repeat for at least {limit} at each spot, ideally at the same time of day, "
        "before deciding." if weak else f"Every session ran for at least {limit}."))
    short = [x["name"] for x in facts if not isinstance(x["duration_s"], int | float)
             or x["duration_s"] < rules.min_session_s]
    if short:
        text = (f"No recommendation: {_join(short)} ran for less than {duration_text(rules.min_session_s)} "
                "(or its length is unknown), too short to judge a spot; the figures are shown for reference.")
        return {"spot": None, "scores": dict(zip(names, scores, strict=False)), "reasons": [], "against": [],
                "text": text, "evidence": evidence, "weak_evidence": True}
    if winner is None:
        text = ("No clear winner: " + ("no figure differs beyond its tolerance." if not decided else
                f"{_join([names[i] for i in leaders])} are each better on {top} figure(s)."))
        return {"spot": None, "scores": dict(zip(names, scores, strict=False)), "reasons": [], "against": [],
                "text": text, "evidence": evidence, "weak_evidence": bool(weak)}
    mine = [f for f in decided if winner in f["best"]]
    mine.sort(key=lambda f: (f["key"] not in PRIMARY, PRIMARY.index(f["key"]) if f["key"] in PRIMARY else 0))
    against = [f for f in decided if winner not in f["best"]]
    text = (f"{names[winner]} is the better spot: better on {len(mine)} of {len(decided)} figures that differ "
            f"beyond their tolerance, mainly {' and '.join(_lower(f['label']) for f in mine[:2])}."
            + (f" It is worse on {', '.join(_lower(f['label']) for f in against)}." if against else ""))
    return {"spot": names[winner], "scores": dict(zip(names, scores, strict=False)),
            "reasons": [f"{f['label']}: {f['why']}" for f in mine],
            "against": [f"{f['label']}: {f['why']}" for f in against],
            "text": text, "evidence": evidence, "weak_evidence": bool(weak)}
