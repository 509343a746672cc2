"""Themes: palette TOML files in themes/, validated on load, remembered in the user config.

A theme file has a [base] table (Textual theme colours) and a [roles] table (Rich styles for the
drawing roles of our widgets: sky plot, C/N0 grades, state words). Textual would only fail later
on a bad colour, and with a TypeError on an unknown key, so each file is checked here and the
error names the file and the key.
"""

from __future__ import annotations

import os
import re
import tomllib
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path

from rich.style import Style
from textual.color import Color, ColorParseError
from textual.theme import Theme

DEFAULT_THEME = "dark"
BASE_KEYS = ("primary", "secondary", "accent", "warning", "error", "success", "foreground",
             "background", "surface", "panel", "boost")
REQUIRED_BASE = ("primary", "foreground", "background")

# Every drawing role with its fallback style (plain attributes, so they also work without colour).
ROLE_DEFAULTS: dict[str, str] = {
    "bg": "", "ring": "dim", "horizon": "", "cardinal": "bold", "scale": "dim", "blocked": "dim",
    "grade-0": "dim", "grade-1": "", "grade-2": "", "grade-3": "bold", "grade-4": "bold",
    "label-used": "bold", "label-free": "dim", "dim": "dim", "head": "bold underline",
    "ok": "bold", "warn": "bold reverse", "bad": "bold reverse", "rec": "bold reverse",
    "stale": "bold reverse", "value": "bold", "spark": "",
}


class ThemeError(ValueError):
    """A theme that cannot be used; the message names the file and the key."""


@dataclass(frozen=True)
class Palette:
    name: str
    path: str
    textual: Theme
    roles: dict[str, Style] = field(default_factory=dict)

    def style(self, role: str) -> Style:
        return self.roles.get(role) or Style.parse(ROLE_DEFAULTS.get(role, ""))


def theme_dir() -> Path:
    return Path(str(resources.files("livefix.themes")))


def available() -> list[str]:
    return sorted(p.stem for p in theme_dir().glob("*.toml"))


def _resolve(name_or_path: str) -> Path:
    p = Path(name_or_path)
    if p.suffix == ".toml" or os.sep in name_or_path:
        if not p.is_file():
            raise ThemeError(f"theme file {name_or_path} not found")
        return p
    if not re.fullmatch(r"[A-Za-z0-9_-]+", name_or_path):
        raise ThemeError(f"bad theme name {name_or_path!r}")
    p = theme_dir() / f"{name_or_path}.toml"
    if not p.is_file():
        raise ThemeError(f"unknown theme {name_or_path!r} (available: {', '.join(available())})")
    return p


def load(name_or_path: str) -> Palette:
    """Load and validate a theme by name (themes/NAME.toml) or by path."""
    path = _resolve(name_or_path)
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError) as exc:
        raise ThemeError(f"theme file {path}: {exc}") from None
    for key in data:
        if key not in ("base", "roles", "description"):
            raise ThemeError(f"theme file {path}: unknown table or key {key!r} (use [base], [roles])")
    base, roles = data.get("base", {}), data.get("roles", {})
    if not isinstance(base, dict) or not isinstance(roles, dict):
        raise ThemeError(f"theme file {path}: [base] and [roles] must be tables")
    kwargs: dict[str, object] = {}
    for key, value in base.items():
        if key == "dark":
            if not isinstance(value, bool):
                raise ThemeError(f"theme file {path}: base.dark must be true or false")
            kwargs["dark"] = value
            continue
        if key not in BASE_KEYS:
            raise ThemeError(f"theme file {path}: unknown key base.{key}")
        try:
            Color.parse(str(value))
        except ColorParseError:
            raise ThemeError(f"theme file {path}: base.{key} = {value!r} is not a colour") from None
        kwargs[key] = str(value)
    for key in REQUIRED_BASE:
        if key not in kwargs:
            raise ThemeError(f"theme file {path}: missing key base.{key}")
    styles: dict[str, Style] = {}
    for key, value in roles.items():
        if key not in ROLE_DEFAULTS:
            raise ThemeError(f"theme file {path}: unknown key roles.{key}")
        try:
            styles[key] = Style.parse(str(value))
        except Exception:  # rich raises StyleSyntaxError / ColorParseError subclasses of Exception
            raise ThemeError(f"theme file {path}: roles.{key} = {value!r} is not a style") from None
    for key, default in ROLE_DEFAULTS.items():
        styles.setdefault(key, Style.parse(default))
    name = f"livefix-{path.stem}"
    return Palette(path.stem, str(path), Theme(name=name, **kwargs), styles)  # type: ignore[arg-type]


# -- user config -----------------------------------------------------------------------------
def config_path() -> Path:
    base = os.environ.get("XDG_CONFIG_HOME") or str(Path.home() / ".config")
    return Path(base) / "livefix" / "config.toml"


def remembered_theme() -> str | None:
    try:
        data = tomllib.loads(config_path().read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError):
        return None
    theme = data.get("ui", {}).get("theme") if isinstance(data.get("ui"), dict) else None
    return theme if isinstance(theme, str) else None


def remember_theme(name: str) -> str | None:
    """Write ui.theme into the user config, keeping every other line. Returns an error or None."""
    path = config_path()
    try:
        text = path.read_text(encoding="utf-8") if path.exists() else ""
    except (OSError, UnicodeDecodeError) as exc:
        return f"cannot read {path}: {exc}"
    line = f'theme = "{name}"'
    lines = text.splitlines()
    section, done = None, False
    for i, ln in enumerate(lines):
        s = ln.strip()
        if s.startswith("["):
            if section == "ui" and not done:
                lines.insert(i, line)
                done = True
                break
            section = s.strip("[]").strip()
        elif section == "ui" and re.match(r"theme\s*=", s):
            lines[i], done = line, True
            break
    if not done:
        if section == "ui":
            lines.append(line)
        else:
            lines += (["", "[ui]", line] if lines else ["[ui]", line])
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    except OSError as exc:
        return f"cannot write {path}: {exc}"
    return None
