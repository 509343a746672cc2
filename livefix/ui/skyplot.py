"""Sky plot panel: draws `skydraw` cells with theme styles; one Strip per row (line API)."""

from __future__ import annotations

from typing import Any

from rich.segment import Segment
from textual.strip import Strip
from textual.widget import Widget

from livefix.ui import skydraw


class SkyPlot(Widget):
    DEFAULT_CSS = "SkyPlot { width: 1fr; height: 1fr; }"

    def __init__(self, **kw) -> None:  # noqa: ANN003
        super().__init__(**kw)
        self.sats: list[skydraw.SkySat] = []
        self.grid: Any = None
        self._cells: list[list[skydraw.Cell]] = []
        self._key: tuple[Any, ...] = ()

    def show(self, sky: Any, grid: Any) -> None:
        sats = skydraw.from_obs(sky)
        if sats != self.sats or grid != self.grid:
            self.sats, self.grid = sats, grid
            self._key = ()
            self.refresh()

    def _ensure(self) -> None:
        ascii_only = bool(getattr(self.app, "ascii_only", False))
        key = (self.size.height, self.size.width, ascii_only)
        if key != self._key:
            self._cells = skydraw.draw(self.sats, self.size.height, self.size.width,
                                       ascii_only=ascii_only, grid=self.grid)
            self._key = key

    def render_line(self, y: int) -> Strip:
        self._ensure()
        if y >= len(self._cells):
            return Strip.blank(self.size.width, self.rich_style)
        pal = self.app.palette  # type: ignore[attr-defined]
        segs: list[Segment] = []
        run, role = "", None
        for ch, r in self._cells[y]:
            if r != role and run:
                segs.append(Segment(run, pal.style(role)))
                run = ""
            run, role = run + ch, r
        if run:
            segs.append(Segment(run, pal.style(role)))
        return Strip(segs, self.size.width).apply_style(self.rich_style)
