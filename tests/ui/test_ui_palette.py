"""Theme files: every shipped palette loads, bad files name the file and the key, the choice is
remembered in the user config, and the C/N0 scale stays readable without hue."""

from __future__ import annotations

from pathlib import Path

import pytest
from rich.color import Color as RichColor

from livefix.ui import palette

GRADES = ("grade-1", "grade-2", "grade-3", "grade-4")


def luminance(hex_rgb: tuple[int, int, int]) -> float:
    # WCAG 2.1 relative luminance (W3C, "relative luminance" definition, sRGB linearisation)
    def lin(c: int) -> float:
        s = c / 255
        return s / 12.92 if s <= 0.04045 else ((s + 0.055) / 1.055) ** 2.4

    r, g, b = (lin(c) for c in hex_rgb)
    return 0.2126 * r + 0.7152 * g + 0.0722 * b


def contrast(a: float, b: float) -> float:
    # WCAG 2.1 contrast ratio (L1 + 0.05) / (L2 + 0.05)
    hi, lo = max(a, b), min(a, b)
    return (hi + 0.05) / (lo + 0.05)


def rgb(style_colour: RichColor | None) -> tuple[int, int, int]:
    assert style_colour is not None and style_colour.triplet is not None
    t = style_colour.triplet
    return (t.red, t.green, t.blue)


def test_shipped_themes_load() -> None:
    names = palette.available()
    assert {"dark", "daylight", "mono"} <= set(names)
    for n in names:
        p = palette.load(n)
        assert p.textual.name == f"livefix-{n}"
        assert set(palette.ROLE_DEFAULTS) <= set(p.roles)


@pytest.mark.parametrize("name", ["dark", "daylight"])
def test_cn0_scale_gets_monotonically_lighter_or_darker(name: str) -> None:
    # Colour-blind readers rank a scale by lightness, not hue: luminance must be monotonic.
    p = palette.load(name)
    lums = [luminance(rgb(p.style(g).color)) for g in GRADES]
    assert lums == sorted(lums) or lums == sorted(lums, reverse=True)


def test_daylight_text_contrast_meets_wcag_aaa() -> None:
    # WCAG 2.1 SC 1.4.6 (Contrast, Enhanced): at least 7:1 for normal text.
    p = palette.load("daylight")
    fg = RichColor.parse(p.textual.foreground or "")
    bg = RichColor.parse(p.textual.background or "")
    assert contrast(luminance(rgb(fg)), luminance(rgb(bg))) >= 7.0


def test_mono_theme_uses_no_hue() -> None:
    p = palette.load("mono")
    for role, style in p.roles.items():
        for c in (style.color, style.bgcolor):
            if c is not None and c.triplet is not None:
                r, g, b = rgb(c)
                assert r == g == b, role


def write(tmp_path: Path, text: str) -> str:
    f = tmp_path / "mine.toml"
    f.write_text(text, encoding="utf-8")
    return str(f)


@pytest.mark.parametrize("body, needle", [
    ('[base]\nprimary = "#102030"\nforeground = "#fff"\nbackground = "#000"\nshine = "#fff"\n', "base.shine"),
    ('[base]\nprimary = "not-a-colour"\nforeground = "#fff"\nbackground = "#000"\n', "base.primary"),
    ('[base]\nforeground = "#fff"\nbackground = "#000"\n', "base.primary"),
    ('[base]\nprimary = "#123"\nforeground = "#fff"\nbackground = "#000"\n[roles]\nsparkle = "bold"\n',
     "roles.sparkle"),
    ('[base]\nprimary = "#123"\nforeground = "#fff"\nbackground = "#000"\n[roles]\nok = "bolder purple!"\n',
     "roles.ok"),
    ('[colours]\nx = 1\n', "colours"),
    ('[base\n', "mine.toml"),
])
def test_bad_theme_file_names_file_and_key(tmp_path: Path, body: str, needle: str) -> None:
    path = write(tmp_path, body)
    with pytest.raises(palette.ThemeError) as err:
        palette.load(path)
    assert path in str(err.value) and needle in str(err.value)


def test_unknown_theme_name_lists_the_choices() -> None:
    with pytest.raises(palette.ThemeError, match="dark, daylight"):
        palette.load("no-such-theme")
    with pytest.raises(palette.ThemeError):
        palette.load("../etc/passwd")


def test_theme_choice_is_remembered_and_other_settings_kept(tmp_path: Path,
                                                            monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("XDG_CONFIG_HOME", str(tmp_path))
    cfg = tmp_path / "livefix" / "config.toml"
    assert palette.config_path() == cfg
    assert palette.remembered_theme() is None
    cfg.parent.mkdir(parents=True)
    cfg.write_text('[check]\nprofile = "rooftop"\n\n[ui]\nascii = false\n', encoding="utf-8")
    assert palette.remember_theme("daylight") is None
    assert palette.remembered_theme() == "daylight"
    assert palette.remember_theme("mono") is None
    text = cfg.read_text(encoding="utf-8")
    assert palette.remembered_theme() == "mono"
    assert 'profile = "rooftop"' in text and "ascii = false" in text and text.count("theme =") == 1
