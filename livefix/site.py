"""The site record: what was installed where, by whom — the facts a site acceptance report is made of
and that no NMEA sentence carries (antenna height above the mark, how it was measured, the mount).

One table (`FIELDS`) names every field once: its TOML key, its label for people, its type and unit.
The record comes from a small TOML file (`docs/site.example.toml`), from command-line values that
override the file, from a recording's header (so a replay keeps it) and, for the receiver model and
firmware only, from what the receiver announces (TXT); the user's values win over announced ones.
Unknown keys are kept and shown with a warning, never dropped. Neutral (rank 0): every command,
the recorder and every report read it.
"""

from __future__ import annotations

import argparse
import math
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

NOT_RECORDED = "not recorded"
ANNOUNCED = "(announced by the receiver)"
HEIGHT_METHODS = ("vertical", "slant")  # how antenna heights are measured in the trade (common practice)
# A mast or roof antenna sits at most tens of metres above its mark; 200 m catches a height typed in
# centimetres or millimetres (common practice).
MAX_HEIGHT_M = 200.0
MAX_TEXT = 2000  # characters of one text field (notes included): a record, not a document
MAX_EXTRA = 50  # unknown keys kept from one file

# (key, label for people, type, unit): the one list of site fields, in the order reports show them
FIELDS: tuple[tuple[str, str, type, str], ...] = (
    ("name", "Site", str, ""),
    ("antenna_model", "Antenna model", str, ""),
    ("antenna_height_m", "Antenna height above the mark", float, "m"),
    ("height_method", "Antenna height measured", str, ""),  # vertical | slant
    ("height_to", "Antenna height measured to", str, ""),  # ARP, bottom of mount, ... (free text)
    ("mount", "Mount", str, ""),
    ("receiver_model", "Receiver model", str, ""),
    ("receiver_firmware", "Receiver firmware", str, ""),
    ("operator", "Operator", str, ""),
    ("notes", "Notes", str, ""),
)
KEYS = tuple(k for k, *_ in FIELDS)
ANNOUNCEABLE = ("receiver_model", "receiver_firmware")  # what a receiver may say about itself


class SiteError(ValueError):
    """A site file or value that cannot be used; the message is one line for the user."""


@dataclass(frozen=True)
class SiteInfo:
    """One site record; None = not recorded. `announced` holds what the receiver said about itself
    (model, firmware), shown only where the user gave nothing."""

    name: str | None = None
    antenna_model: str | None = None
    antenna_height_m: float | None = None
    height_method: str | None = None
    height_to: str | None = None
    mount: str | None = None
    receiver_model: str | None = None
    receiver_firmware: str | None = None
    operator: str | None = None
    notes: str | None = None
    extra: Mapping[str, str] = field(default_factory=dict)  # unknown keys, as text
    announced: Mapping[str, str] = field(default_factory=dict)

    # -- reading -----------------------------------------------------------------------------
    def to_json(self) -> dict[str, Any]:
        """All fields (None when not recorded), then `extra` and `announced`: the report's meta.site
        and the recording header's `site`."""
        out: dict[str, Any] = {k: getattr(self, k) for k in KEYS}
        out["extra"] = dict(self.extra)
        out["announced"] = dict(self.announced)
        return out

    @property
    def empty(self) -> bool:
        return all(getattr(self, k) is None for k in KEYS) and not self.extra and not self.announced

    def warnings(self) -> list[str]:
        """One line per unknown key: kept and shown, but probably a typing slip."""
        known = ", ".join(KEYS)
        return [f"site: unknown field {k!r} kept as given (known fields: {known})" for k in self.extra]

    def rows(self) -> list[tuple[str, str]]:
        """(label, text) for every field in FIELDS order, "not recorded" where missing, then the
        unknown fields under their own keys."""
        return [(label, _text(self, key, unit)) for key, label, _t, unit in FIELDS] + [
            (f"{k} (unknown field)", " ".join(v.split())) for k, v in self.extra.items()]

    # -- combining ---------------------------------------------------------------------------
    def merged(self, over: SiteInfo) -> SiteInfo:
        """This record with every field `over` sets put on top (extra keys merged likewise)."""
        vals = {k: getattr(over, k) for k in KEYS if getattr(over, k) is not None}
        return replace(self, **vals, extra={**self.extra, **over.extra},
                       announced={**self.announced, **over.announced})

    def with_announced(self, announced: Mapping[str, str | None]) -> SiteInfo:
        """Attach what the receiver said about itself (model, firmware; others ignored)."""
        got = {k: _clean(str(v)) for k, v in announced.items() if k in ANNOUNCEABLE and v}
        return replace(self, announced={**self.announced, **got})


def _text(site: SiteInfo, key: str, unit: str) -> str:
    v = getattr(site, key)
    if v is None:
        said = site.announced.get(key)
        return f"{' '.join(said.split())} {ANNOUNCED}" if said else NOT_RECORDED
    if isinstance(v, float):
        return f"{v:.3f} {unit}".strip()  # millimetres: a tape's resolution (common practice)
    return " ".join(str(v).split())  # one line: table cells and terminals have no room for breaks


def _clean(text: str) -> str:
    """Printable text only (no control characters, which could move a terminal's cursor), capped."""
    return "".join(c if c.isprintable() or c == "\n" else " " for c in text)[:MAX_TEXT].strip()


def _value(key: str, raw: Any, where: str) -> Any:
    """One field checked against FIELDS; SiteError with one line otherwise."""
    kind = next(t for k, _l, t, _u in FIELDS if k == key)
    if kind is float:
        if isinstance(raw, bool) or not isinstance(raw, (int, float)):
            raise SiteError(f"{where}: {key} must be a number of metres, not {raw!r}")
        v = float(raw)
        if not math.isfinite(v) or v < 0:
            raise SiteError(f"{where}: {key} must be a height of 0 m or more, not {raw!r}")
        if v > MAX_HEIGHT_M:
            raise SiteError(f"{where}: {key} {v:g} m is not plausible (at most {MAX_HEIGHT_M:g} m; "
                            "give metres, not centimetres)")
        return v
    if not isinstance(raw, str):
        raise SiteError(f"{where}: {key} must be text (in quotes), not {raw!r}")
    text = _clean(raw)
    if key == "height_method":
        text = text.lower()
        if text not in HEIGHT_METHODS:
            raise SiteError(f"{where}: height_method must be one of {', '.join(HEIGHT_METHODS)}, not {raw!r}")
    return text or None


def _keep(extra: dict[str, str], key: Any, raw: Any) -> None:
    """An unknown field, as text, while there is room (MAX_EXTRA)."""
    if len(extra) < MAX_EXTRA:
        extra[_clean(str(key))[:80]] = _clean(raw if isinstance(raw, str) else repr(raw))


def from_mapping(data: Mapping[str, Any], where: str = "site") -> SiteInfo:
    """A SiteInfo from a parsed TOML table or a recording header's `site` dict."""
    vals: dict[str, Any] = {}
    extra: dict[str, str] = {}
    for key, raw in data.items():
        if key in KEYS:
            if raw is not None:
                vals[key] = _value(key, raw, where)
        elif key == "extra" and isinstance(raw, Mapping):  # a recording's or report's own record
            for k, v in raw.items():
                _keep(extra, k, v)
        elif key == "announced" and isinstance(raw, Mapping):
            vals["announced"] = {k: _clean(str(v)) for k, v in raw.items() if k in ANNOUNCEABLE and v}
        else:
            _keep(extra, key, raw)
    return SiteInfo(**vals, extra=extra)


def load_site(path: str | Path) -> SiteInfo:
    """Read a site TOML file (keys of FIELDS at the top level, or under a [site] table)."""
    import tomllib  # here: a report without a site file does not pay for the parser at start-up

    p = Path(path)
    try:
        data = tomllib.loads(p.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise SiteError(f"site file {p}: not found") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise SiteError(f"site file {p}: cannot read it ({getattr(exc, 'strerror', None) or exc})") from None
    except tomllib.TOMLDecodeError as exc:
        raise SiteError(f"site file {p}: not valid TOML ({exc})") from None
    if isinstance(data.get("site"), dict) and len(data) == 1:
        data = data["site"]
    return from_mapping(data, where=f"site file {p}")


def is_site_file(text: str) -> bool:
    """--site takes a file (a name ending .toml, or an existing file) or a plain site name."""
    return text.lower().endswith(".toml") or Path(text).is_file()


def from_args(site: str | None = None, antenna_height: float | str | None = None,
              operator: str | None = None) -> SiteInfo:
    """The command line's site: --site FILE.toml or NAME, with --antenna-height and --operator on top."""
    base = SiteInfo()
    if site:
        base = load_site(site) if is_site_file(site) else from_mapping({"name": site}, "--site")
    over: dict[str, Any] = {}
    if antenna_height is not None:
        try:
            h = float(antenna_height)
        except ValueError:
            raise SiteError(f"--antenna-height {antenna_height!r}: a number of metres") from None
        over["antenna_height_m"] = _value("antenna_height_m", h, "--antenna-height")
    if operator:
        over["operator"] = _value("operator", operator, "--operator")
    return replace(base, **over) if over else base


def add_arguments(p: argparse.ArgumentParser) -> None:
    """The site options every command that records or reports shares."""
    p.add_argument("--site", default="", metavar="FILE.toml|NAME",
                   help="site record: a TOML file (see docs/site.example.toml) or just the site's name")
    p.add_argument("--antenna-height", metavar="M", help="antenna height above the mark in metres "
                   "(overrides the site file)")
    p.add_argument("--operator", metavar="NAME", help="who measured (overrides the site file)")


def from_namespace(args: argparse.Namespace) -> SiteInfo:
    return from_args(getattr(args, "site", None), getattr(args, "antenna_height", None),
                     getattr(args, "operator", None))


def overlay(recorded: Mapping[str, Any] | None, given: SiteInfo) -> tuple[SiteInfo, str | None]:
    """A recording's site with the command line's values on top, and a note naming what the
    command line changed (None when nothing recorded was overridden)."""
    if not recorded:
        return given, None
    try:
        base = from_mapping(recorded, "recorded site")
    except SiteError:
        return given, "the recorded site record is damaged and was not used"
    changed = [k for k in KEYS if getattr(given, k) is not None and getattr(base, k) is not None
               and getattr(given, k) != getattr(base, k)]
    note = ("command-line site values override the recorded ones: " + ", ".join(changed)) if changed else None
    return base.merged(given), note


def site_name(site: Any) -> str:
    """The site's name from a SiteInfo, its JSON or an old report's plain text ("" when none)."""
    if isinstance(site, SiteInfo):
        return site.name or ""
    if isinstance(site, Mapping):
        return str(site.get("name") or "")
    return str(site or "")


def coerce(site: SiteInfo | Mapping[str, Any] | str | None) -> SiteInfo:
    """Whatever a caller holds (SiteInfo, JSON dict, plain name) as a SiteInfo."""
    if isinstance(site, SiteInfo):
        return site
    if isinstance(site, Mapping):
        try:
            return from_mapping(site)
        except SiteError as exc:  # a hand-edited report or header: show what is wrong, never fail a reader
            return SiteInfo(name=_clean(site_name(site)) or None, extra={"site record": f"damaged: {exc}"})
    return SiteInfo(name=_clean(site) or None) if site else SiteInfo()

