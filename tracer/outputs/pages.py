"""A4 pages laid out top-down with matplotlib: text, key-value pairs, boxed notes, tables and
figures, each page a figure, written as one PDF. The report's PDF is drawn with it.

matplotlib is imported where a page is drawn, never on import.
"""

from __future__ import annotations

import io
import textwrap
from typing import Any, Callable

from .._version import __version__

__all__ = ["Pages", "A4"]

A4 = (210 / 25.4, 297 / 25.4)  # inches (ISO 216 A4)


class Pages:
    """A top-down layout of text, key-value pairs, tables and figures on A4 matplotlib figures."""

    def __init__(self) -> None:
        self.figs: list[Any] = []
        self.left, self.top, self.bottom = 0.75, 0.7, 0.8
        self.width = A4[0] - 2 * self.left
        self.new_page()

    def new_page(self) -> None:
        from matplotlib.figure import Figure

        self.fig = Figure(figsize=A4)
        self.figs.append(self.fig)
        self.y = A4[1] - self.top

    def room(self) -> float:
        return self.y - self.bottom

    def _need(self, h: float) -> None:
        if self.y - h < self.bottom:
            self.new_page()

    def _put(self, x: float, s: str, **kw: Any) -> None:
        self.fig.text(x / A4[0], self.y / A4[1], s, va="top", **kw)

    def text(self, s: str, *, size: float = 9.0, weight: str = "normal", color: str = "black", gap: float = 0.03,
             bullet: bool = False) -> None:
        chars = int(self.width * 72 / (0.55 * size)) - (3 if bullet else 0)
        lines = textwrap.wrap(s, chars) or [""]
        line_h = size * 1.35 / 72
        for i, line in enumerate(lines):
            self._need(line_h)
            indent = 0.18 if bullet else 0.0
            if bullet and i == 0:
                self._put(self.left, "•", size=size, color=color)
            self._put(self.left + indent, line, size=size, weight=weight, color=color)
            self.y -= line_h
        self.y -= gap

    def heading(self, s: str) -> None:
        self._need(0.9)
        self.y -= 0.12
        self.text(s, size=11.5, weight="bold", gap=0.06)

    def boxed(self, s: str) -> None:
        from matplotlib.patches import FancyBboxPatch

        lines = textwrap.wrap(s, int((self.width - 0.3) * 72 / (0.55 * 8.5)))
        h = len(lines) * 8.5 * 1.35 / 72 + 0.16
        self._need(h + 0.1)
        self.y -= 0.06
        self.fig.patches.append(FancyBboxPatch((self.left / A4[0], (self.y - h) / A4[1]), self.width / A4[0],
                                               h / A4[1], boxstyle="square,pad=0", transform=self.fig.transFigure,
                                               facecolor="#fbf3e4", edgecolor="#b07a1e", lw=0.8))
        self.y -= 0.08
        for line in lines:
            self._put(self.left + 0.12, line, size=8.5)
            self.y -= 8.5 * 1.35 / 72
        self.y -= 0.16

    def pairs(self, rows: list[tuple[str, str]]) -> None:
        for k, v in rows:
            lines = textwrap.wrap(v, int((self.width - 1.25) * 72 / (0.55 * 8.5))) or [""]
            for i, line in enumerate(lines):
                self._need(0.17)
                if i == 0:
                    self._put(self.left, k, size=8.5, color="#555555")
                self._put(self.left + 1.25, line, size=8.5)
                self.y -= 0.165
        self.y -= 0.05

    def table(self, columns: list[str], rows: list[list[str]], widths: list[float], aligns: list[str]) -> None:
        xs = [self.left + sum(widths[:i]) for i in range(len(widths))]
        row_h = 0.2

        def line(cells: list[str], **kw: Any) -> None:
            for x, w, a, cell in zip(xs, widths, aligns, cells):
                self._put(x + (w - 0.06 if a == "right" else 0.0), cell, ha=a, size=8.0, **kw)

        def rule(lw: float) -> None:
            self.fig.add_artist(_hline(self.left, self.left + sum(widths), self.y + 0.03, lw))

        def header() -> None:
            line(columns, weight="bold")
            self.y -= row_h
            rule(0.8)

        self._need(2 * row_h)
        header()
        for i, r in enumerate(rows):
            if self.y - row_h < self.bottom:
                self.new_page()
                header()
            if i % 2 == 1:
                self.fig.add_artist(_band(self.left, self.y + 0.03, sum(widths), row_h))
            line(r)
            self.y -= row_h
        rule(0.5)
        self.y -= 0.08

    def figure(self, draw: Callable[[Any], Any], *, height: float, legend: float = 0.0, inset: float = 0.45) -> None:
        """Axes `height` inches tall (with `legend` inches kept below them), `inset` in from the left."""
        self._need(height)
        bottom = self.y - height + legend + 0.35
        ax = self.fig.add_axes([(self.left + inset) / A4[0], bottom / A4[1], (self.width - inset - 0.1) / A4[0],
                                (height - legend - 0.4) / A4[1]])
        draw(ax)
        self.y -= height

    def pdf(self, pdf_pages: Any, *, footer: str, title: str) -> bytes:
        n = len(self.figs)
        for i, fig in enumerate(self.figs, start=1):
            fig.text(self.left / A4[0], 0.45 / A4[1], footer, size=7, color="#666666")
            fig.text(1 - self.left / A4[0], 0.45 / A4[1], f"page {i} of {n}", size=7, color="#666666", ha="right")
        buf = io.BytesIO()
        with pdf_pages(buf, metadata={"Title": f"{title}: section properties", "Creator": f"tracer {__version__}"}) as pdf:
            for fig in self.figs:
                pdf.savefig(fig)
        return buf.getvalue()


def _hline(x0: float, x1: float, y: float, lw: float) -> Any:
    from matplotlib.lines import Line2D

    return Line2D([x0 / A4[0], x1 / A4[0]], [y / A4[1]] * 2, lw=lw, color="#333333")


def _band(x: float, top: float, w: float, h: float) -> Any:
    from matplotlib.patches import Rectangle

    return Rectangle((x / A4[0], (top - h) / A4[1]), w / A4[0], h / A4[1], facecolor="#f1f3f5", lw=0,
                     zorder=-1)
