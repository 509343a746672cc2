"""Check profiles: TOML thresholds over figures of the analysis snapshot, addressed by dotted path.

Grammar of one threshold (a `[[threshold]]` table):
  name        short id, unique in the profile (JUnit test case name)
  metric      a name of the metric catalogue (livefix.analysis.catalogue, docs/metrics.md), e.g.
              "sky.clear_above_deg", or a path with list selectors that starts at a published figure,
              e.g. "signal.by_elevation[from>=30].mean"; the path language is livefix.analysis.paths.
  op          <=  <  >=  >  ==
  limit       number
  fix         optional fix type ("rtk_fixed", "single", ...): take the figure for epochs of that fix
              only ("position.X" -> "position.by_fix.FIX.X", "fix.availability" -> its FIX share)
  reduce      optional for lists: min max mean sum count first last (a list defaults to count)
  unit        optional; when given it must be the catalogue unit of the metric (the default)
  description, source   text; source names the published guideline or says "common practice"
[profile] may state converge_h_m / converge_v_m: the convergence radius (metres) the figures use.
A missing figure fails with the note "not measured": a check that could not look did not pass.
"""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from typing import Any

from livefix.analysis import catalogue
from livefix.analysis.paths import (
    OPS,
    REDUCERS,
    UNITS,
    Missing,
    figure,
    is_num,
    resolve,
    unknown_metric,
    valid_path,
)
from livefix.check.interval import INTERVALS, STATIC_PREFIXES, judge
from livefix.checksum import with_checksum

# fix qualifier: how the metric path is narrowed to one fix type
FIX_SCOPES: tuple[tuple[str, str], ...] = (("position.", "position.by_fix.{fix}."),
                                           ("fix.availability", "fix.availability.{fix}"))
FIX_KINDS = ("cold", "warm", "hot")
_THRESHOLD_KEYS = {"name", "metric", "op", "limit", "fix", "reduce", "unit", "description", "source"}
_TTFF_KEYS = {"n", "kind", "send", "send_hex", "command", "timeout_s", "settle_s"}
_PROFILE_KEYS = {"name", "title", "description", "duration", "source", "converge_h_m", "converge_v_m"}


class ProfileError(ValueError):
    """A profile that cannot be used; the message names the file and the key."""


@dataclass(frozen=True, slots=True)
class Threshold:
    name: str
    metric: str
    op: str
    limit: float
    fix: str | None = None
    reduce: str | None = None
    unit: str = ""
    description: str = ""
    source: str = "common practice"

    @property
    def path(self) -> str:
        """The metric path after the fix qualifier is applied."""
        if not self.fix:
            return self.metric
        for prefix, scoped in FIX_SCOPES:
            if self.metric.startswith(prefix):
                return scoped.format(fix=self.fix) + self.metric[len(prefix):]
        return self.metric


@dataclass(frozen=True, slots=True)
class TTFFCycles:
    n: int
    kind: str
    send: bytes | None = None
    command: str | None = None
    timeout_s: float = 300.0
    settle_s: float = 3.0


@dataclass(frozen=True, slots=True)
class Profile:
    name: str
    title: str = ""
    description: str = ""
    duration_s: float | None = None
    thresholds: tuple[Threshold, ...] = ()
    ttff: TTFFCycles | None = None
    origin: str = ""  # "built-in" or the file path
    source: str = ""
    converge_radius: tuple[float | None, float | None] = (None, None)  # [profile] converge_h_m / converge_v_m

    def config(self, ref: tuple[float, float, float] | None = None) -> Any:
        """The AnalysisConfig this profile's figures need (the convergence radius it states)."""
        from livefix.analysis.config import AnalysisConfig

        return AnalysisConfig(ref=ref, converge_radius=self.converge_radius)


@dataclass(frozen=True, slots=True)
class Result:
    name: str
    metric: str
    measured: float | None
    limit: float
    op: str
    passed: bool
    source: str
    note: str = ""
    description: str = ""
    unit: str = ""
    fix: str | None = None
    inconclusive: bool = False  # the 95 % interval straddles the limit: neither pass nor fail
    interval: tuple[float, float] | None = None  # 95 % interval of the measured value, when it has one
    label: str = ""  # the metric's label in the catalogue (the path itself for a selector path)

    def to_json(self) -> dict[str, Any]:
        return {"name": self.name, "metric": self.metric, "label": self.label, "fix": self.fix,
                "measured": self.measured,
                "op": self.op, "limit": self.limit, "unit": self.unit, "passed": self.passed,
                "inconclusive": self.inconclusive, "interval95": None if self.interval is None else list(self.interval),
                "note": self.note, "description": self.description, "source": self.source}


# -- loading ---------------------------------------------------------------------------------------
def builtin_names() -> list[str]:
    folder = resources.files("livefix.check") / "profiles"
    return sorted(p.name[:-5] for p in folder.iterdir() if p.name.endswith(".toml"))


def load_profile(name_or_path: str) -> Profile:
    """A built-in profile by name, or the user's own TOML file by path."""
    path = Path(name_or_path)
    if name_or_path.endswith(".toml") or path.exists():
        try:
            text = path.read_text(encoding="utf-8")
        except OSError as exc:
            raise ProfileError(f"profile {name_or_path}: cannot read ({exc.strerror or exc})") from exc
        return parse_profile(text, origin=str(path), builtin=False)
    folder = resources.files("livefix.check") / "profiles"
    res = folder / f"{name_or_path}.toml"
    if not re.fullmatch(r"[A-Za-z0-9_-]+", name_or_path) or not res.is_file():
        raise ProfileError(f"no profile {name_or_path!r}: built-in profiles are "
                           f"{', '.join(builtin_names())}, or give a path to a .toml file")
    return parse_profile(res.read_text(encoding="utf-8"), origin="built-in", builtin=True)


def parse_profile(text: str, origin: str = "<text>", builtin: bool = False) -> Profile:
    where = f"profile {origin}"
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ProfileError(f"{where}: not valid TOML ({exc})") from exc
    unknown = set(data) - {"profile", "threshold", "ttff_cycles"}
    if unknown:
        raise ProfileError(f"{where}: unknown section {sorted(unknown)[0]!r} "
                           "(expected [profile], [[threshold]], [ttff_cycles])")
    head = data.get("profile", {})
    _no_unknown(head, _PROFILE_KEYS, f"{where}: [profile]")
    duration = None
    if "duration" in head:
        from livefix.timefmt import parse_duration

        try:
            duration = parse_duration(str(head["duration"]))
        except ValueError as exc:
            raise ProfileError(f"{where}: [profile] key 'duration': {exc}") from exc
    raw = data.get("threshold", [])
    if not isinstance(raw, list):
        raise ProfileError(f"{where}: 'threshold' must be an array of tables ([[threshold]])")
    thresholds = tuple(_threshold(t, f"{where}: [[threshold]] #{i + 1}") for i, t in enumerate(raw))
    names = [t.name for t in thresholds]
    dup = next((n for n in names if names.count(n) > 1), None)
    if dup:
        raise ProfileError(f"{where}: threshold name {dup!r} is used twice")
    ttff = _ttff(data["ttff_cycles"], f"{where}: [ttff_cycles]", builtin) if "ttff_cycles" in data else None
    if not thresholds and ttff is None:
        raise ProfileError(f"{where}: no [[threshold]] and no [ttff_cycles]: nothing to check")
    name = str(head.get("name") or Path(origin).stem)
    radius = []
    for key in ("converge_h_m", "converge_v_m"):
        v = head.get(key)
        if v is not None and (isinstance(v, bool) or not isinstance(v, int | float) or v <= 0):
            raise ProfileError(f"{where}: [profile] key {key!r} must be a distance in metres > 0, got {v!r}")
        radius.append(None if v is None else float(v))
    return Profile(name=name, title=str(head.get("title", "")), description=str(head.get("description", "")),
                   duration_s=duration, thresholds=thresholds, ttff=ttff, origin=origin,
                   source=str(head.get("source", "")), converge_radius=(radius[0], radius[1]))


def _no_unknown(table: dict[str, Any], allowed: set[str], where: str) -> None:
    if not isinstance(table, dict):
        raise ProfileError(f"{where}: must be a table")
    extra = sorted(set(table) - allowed)
    if extra:
        raise ProfileError(f"{where}: unknown key {extra[0]!r} (allowed: {', '.join(sorted(allowed))})")


def _threshold(t: Any, where: str) -> Threshold:
    _no_unknown(t, _THRESHOLD_KEYS, where)
    for key in ("name", "metric", "op", "limit"):
        if key not in t:
            raise ProfileError(f"{where}: missing key {key!r}")
    where = f"{where} ({t['name']!r})"
    if not isinstance(t["metric"], str) or not valid_path(t["metric"]):
        raise ProfileError(f"{where}: key 'metric' is not a dotted path: {t['metric']!r}")
    if t["op"] not in OPS:
        raise ProfileError(f"{where}: key 'op' must be one of {' '.join(OPS)}, got {t['op']!r}")
    if isinstance(t["limit"], bool) or not isinstance(t["limit"], int | float):
        raise ProfileError(f"{where}: key 'limit' must be a number, got {t['limit']!r}")
    if t.get("reduce") is not None and t["reduce"] not in REDUCERS:
        raise ProfileError(f"{where}: key 'reduce' must be one of {', '.join(REDUCERS)}, got {t['reduce']!r}")
    fix = t.get("fix")
    if fix is not None:
        from livefix.state.epoch import FIX_NAMES

        if fix not in FIX_NAMES.values():
            raise ProfileError(f"{where}: key 'fix' must be one of {', '.join(FIX_NAMES.values())}")
        if not any(t["metric"].startswith(p) for p, _ in FIX_SCOPES):
            raise ProfileError(f"{where}: key 'fix' applies only to position.* or fix.availability")
    entry = _catalogued(t["metric"], fix, where)
    stated = str(t.get("unit") or "")  # an empty unit is not a statement
    if stated not in UNITS:
        raise ProfileError(f"{where}: unknown unit {t['unit']!r}: use one of {', '.join(u for u in UNITS if u)}")
    if stated and entry is not None and stated != entry.unit:
        raise ProfileError(f"{where}: unit {stated!r} does not match {entry.path!r}, which is in "
                           f"{entry.unit or 'no unit'!r} (docs/metrics.md)")
    return Threshold(name=str(t["name"]), metric=t["metric"], op=t["op"], limit=float(t["limit"]), fix=fix,
                     reduce=t.get("reduce"), unit=stated or (entry.unit if entry else ""),
                     description=str(t.get("description", "")), source=str(t.get("source", "common practice")))


def _catalogued(metric: str, fix: str | None, where: str) -> catalogue.Metric | None:
    """The catalogue entry a threshold names (directly, or once its fix qualifier is applied); None
    for a selector path, which must still start at a published figure. Anything else is refused
    with the list of valid names."""
    scoped = Threshold("", metric, "<=", 0.0, fix=fix).path
    for path in (metric, scoped):
        if catalogue.known(path):
            return catalogue.metric(path)
    if "[" not in metric:
        raise ProfileError(f"{where}: {catalogue.unknown_text(metric)}")
    bad = unknown_metric(metric)
    if bad is not None:
        raise ProfileError(f"{where}: {bad}")
    return None


def _ttff(t: Any, where: str, builtin: bool) -> TTFFCycles:
    _no_unknown(t, _TTFF_KEYS, where)
    n = t.get("n", 5)
    if isinstance(n, bool) or not isinstance(n, int) or not 1 <= n <= 1000:
        raise ProfileError(f"{where}: key 'n' must be a whole number 1..1000, got {n!r}")
    kind = t.get("kind", "cold")
    if kind not in FIX_KINDS:
        raise ProfileError(f"{where}: key 'kind' must be one of {', '.join(FIX_KINDS)}, got {kind!r}")
    given = [k for k in ("send", "send_hex", "command") if k in t]
    if len(given) > 1:
        raise ProfileError(f"{where}: give only one of 'send', 'send_hex', 'command' (got {', '.join(given)})")
    send: bytes | None = None
    command = None
    if "command" in t:
        if builtin:
            raise ProfileError(f"{where}: key 'command' is honoured only in your own profile file")
        command = str(t["command"])
    elif "send_hex" in t:
        try:
            send = bytes.fromhex(str(t["send_hex"]))
        except ValueError as exc:
            raise ProfileError(f"{where}: key 'send_hex' is not hex bytes ({exc})") from exc
    else:
        send = restart_sentence(str(t.get("send", f"$PLFX,RESET,{kind.upper()}")))
    for key, default in (("timeout_s", 300.0), ("settle_s", 3.0)):
        v = t.get(key, default)
        if isinstance(v, bool) or not isinstance(v, int | float) or v < 0:
            raise ProfileError(f"{where}: key {key!r} must be a number of seconds >= 0, got {v!r}")
    return TTFFCycles(n=n, kind=kind, send=send, command=command, timeout_s=float(t.get("timeout_s", 300.0)),
                      settle_s=float(t.get("settle_s", 3.0)))


def restart_sentence(text: str) -> bytes:
    """Text to send; a '$...' sentence without '*hh' gets its NMEA checksum, and CR LF is ensured."""
    text = text.rstrip("\r\n")
    if text.startswith("$") and "*" not in text:
        text = with_checksum(text[1:])
    return text.encode("utf-8") + b"\r\n"


# -- evaluating ------------------------------------------------------------------------------------
def measure(analysis: dict[str, Any], t: Threshold) -> tuple[float | None, str]:
    """(measured value, note); None with the reason when there is nothing to compare."""
    return figure(analysis, t.path, t.reduce)


def _interval(analysis: dict[str, Any], path: str) -> tuple[float, float] | None:
    try:
        v = resolve(analysis, INTERVALS[path])
    except (Missing, KeyError):
        return None
    if isinstance(v, list) and len(v) == 2 and all(is_num(x) for x in v):
        return float(v[0]), float(v[1])
    return None


def evaluate(profile: Profile, analysis: dict[str, Any]) -> list[Result]:
    results = []
    moving = (analysis.get("motion") or {}).get("state") == "moving"
    span = (analysis.get("position") or {}).get("drift_span_s")
    for t in profile.thresholds:
        measured, note = measure(analysis, t)
        if moving and t.path.startswith(STATIC_PREFIXES):
            measured, note = None, "not measured (receiver moving)"
        ci = _interval(analysis, t.path) if measured is not None else None
        passed, inconclusive = False, False
        if measured is not None:
            passed, inconclusive, note = judge(OPS[t.op], t.limit, measured, ci, span if is_num(span) else None)
        results.append(Result(name=t.name, metric=t.metric, measured=measured, limit=t.limit, op=t.op,
                              passed=passed, source=t.source, note=note, description=t.description,
                              unit=t.unit, fix=t.fix, inconclusive=inconclusive, interval=ci,
                              label=catalogue.label(t.metric if catalogue.known(t.metric) else t.path)))
    return results
