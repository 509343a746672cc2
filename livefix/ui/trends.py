"""Trend sparklines from analysis["trend"] (decimated by the analysis, <= 600 points)."""

from __future__ import annotations

from typing import Any

from rich.text import Text

from livefix.ui.fmt import num, sparkline
from livefix.ui.panel import TextPanel

SERIES: tuple[tuple[str, str, str, str], ...] = (  # key, label, number format, unit
    ("h_err_m", "horiz err", ".3f", " m"),
    ("cn0_mean", "C/N0 mean", ".1f", " dB-Hz"),
    ("sats_used", "sats used", ".0f", ""),
)


class Trends(TextPanel):
    DEFAULT_CSS = "Trends { height: 1fr; text-wrap: nowrap; text-overflow: ellipsis; }"

    def __init__(self, **kw) -> None:  # noqa: ANN003
        super().__init__(**kw)
        self.trend: dict[str, Any] = {}

    def show(self, trend: Any) -> None:
        trend = trend if isinstance(trend, dict) else {}
        if trend != self.trend:
            self.trend = trend
            self.refresh()

    def _text(self) -> Text:
        st = self.app.palette.style  # type: ignore[attr-defined]
        ascii_only = bool(getattr(self.app, "ascii_only", False))
        t = Text(no_wrap=True)
        width = max(0, self.size.width - 28)
        for i, (key, label, fmt, unit) in enumerate(SERIES):
            vals = self.trend.get(key) or []
            nums = [v for v in vals if isinstance(v, (int, float))]
            if i:
                t.append("\n")
            t.append(f"{label:<10}", st("dim"))
            t.append(f"{num(nums[-1] if nums else None, fmt, unit):>12} ", st("value"))
            t.append(sparkline(vals, width, ascii_only), st("spark"))
            if nums:
                t.append(f" {min(nums):{fmt}}…{max(nums):{fmt}}", st("dim"))
        return t
