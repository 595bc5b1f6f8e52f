"""A small page-layout engine: content blocks rendered as A4 PDF pages and as Markdown.

Content is a list of :class:`Block` (headings, paragraphs, bullets, tables, images from a
folder, figures drawn on demand, page breaks). :func:`render_pages` flows them onto A4
matplotlib figures handed to a sink (a PdfPages), :func:`render_pdf` makes the PDF bytes,
:func:`render_markdown` the Markdown text. Nothing here knows what a fit or a report is
(the report's content is :mod:`infer.outputs.report`).
"""

from __future__ import annotations

import io
import textwrap
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # pragma: no cover - typing only
    from matplotlib.figure import Figure

__all__ = ["Block", "PAGE", "render_markdown", "render_pages", "render_pdf", "table_text"]

#: page size, inches (A4)
PAGE = (8.27, 11.69)
_PAGE = PAGE


@dataclass(frozen=True)
class Block:
    """One piece of content.

    kind is "h1", "h2", "p" (paragraph), "li" (bullet), "table" (``data`` =
    (header, rows)), "image" (``text`` = file name in the folder, ``data``
    = caption), "figure" (``text`` = its file name for the Markdown link, ``data``
    = caption; drawn for the PDF by the callable given to :func:`render_pages` under
    that name), or "break" (new PDF page).
    """

    kind: str
    text: str = ""
    data: object = None


def render_markdown(blocks: Sequence[Block]) -> str:
    """The blocks in Markdown, images and figures as relative links to their PNG files."""
    lines: list[str] = []
    prev = None
    for b in blocks:
        if b.kind != "li" and prev == "li":
            lines.append("")
        if b.kind == "h1":
            lines += [f"# {b.text}", ""]
        elif b.kind == "h2":
            lines += [f"## {b.text}", ""]
        elif b.kind == "p":
            lines += [b.text, ""]
        elif b.kind == "li":
            lines.append(f"* {b.text}")
        elif b.kind == "table":
            header, rows = b.data
            lines.append("| " + " | ".join(header) + " |")
            lines.append("|" + "---|" * len(header))
            lines += ["| " + " | ".join(r) + " |" for r in rows]
            lines.append("")
        elif b.kind in ("image", "figure"):
            lines += [f"![{b.data}]({b.text})", "", f"*{b.data}*", ""]
        prev = b.kind
    return "\n".join(lines).rstrip() + "\n"


class Pages:
    """Flowing text onto A4 pages of a PdfPages file."""

    left, right, top, bottom = 0.8, 0.8, 0.8, 0.8

    def __init__(self, pdf):
        self.pdf = pdf
        self.fig = None
        self.y = 0.0

    def _new(self):
        from matplotlib.figure import Figure

        self.flush()
        self.fig = Figure(figsize=_PAGE)
        self.y = self.top

    def flush(self):
        if self.fig is not None:
            self.pdf.savefig(self.fig)
            self.fig = None

    def _room(self, h: float):
        if self.fig is None or self.y + h > _PAGE[1] - self.bottom:
            self._new()

    def text(self, s: str, *, size: float, weight: str = "normal", family: str = "sans-serif",
             indent: float = 0.0, wrap: int | None = None, gap: float = 0.06, bullet: bool = False):
        width_in = _PAGE[0] - self.left - self.right - indent
        chars = wrap or int(width_in * 72 / (size * (0.6 if family == "monospace" else 0.58)))
        lines = textwrap.wrap(s, chars) if family != "monospace" else s.split("\n")
        lh = size * 1.35 / 72
        for i, ln in enumerate(lines or [""]):
            self._room(lh)
            x = self.left + indent
            if bullet and i == 0:
                self.fig.text((x - 0.15) / _PAGE[0], 1 - self.y / _PAGE[1], "\u2022", fontsize=size,
                              va="top")
            self.fig.text(x / _PAGE[0], 1 - self.y / _PAGE[1], ln, fontsize=size, weight=weight,
                          family=family, va="top")
            self.y += lh
        self.y += gap

    def image(self, fig_or_png, caption: str):
        """A full page: a PNG file (drawn as an image) or a Figure (drawn as vectors)."""
        from matplotlib.figure import Figure

        self.flush()
        if isinstance(fig_or_png, Figure):
            fig = fig_or_png
            fig.text(0.5, 0.015, caption, ha="center", va="bottom", fontsize=9, style="italic")
        else:
            import matplotlib.image as mpimg

            img = mpimg.imread(fig_or_png)
            h, w = img.shape[:2]
            fig = Figure(figsize=(_PAGE[0], _PAGE[0] * h / w + 0.5))
            ax = fig.add_axes((0.0, 0.5 / fig.get_figheight(), 1.0, 1 - 0.5 / fig.get_figheight()))
            ax.imshow(img, interpolation="none")
            ax.set_axis_off()
            fig.text(0.5, 0.2 / fig.get_figheight(), caption, ha="center", va="bottom", fontsize=9,
                     style="italic")
        self.pdf.savefig(fig)


def table_text(header, rows) -> str:
    """A table as aligned monospace text (header, a rule, the rows)."""
    cols = [header] + rows
    w = [max(len(r[i]) for r in cols) for i in range(len(header))]
    fmt = lambda r: "  ".join(c.ljust(w[i]) for i, c in enumerate(r))  # noqa: E731
    return "\n".join([fmt(header), "  ".join("-" * x for x in w)] + [fmt(r) for r in rows])


def render_pages(blocks: Sequence[Block], sink: Any, *, folder: str | Path,
                 figures: Mapping[str, Callable[[], Figure]] | None = None) -> None:
    """Lay the blocks out on pages, handing each finished Figure to ``sink.savefig``.

    Parameters
    ----------
    blocks : sequence of Block
    sink : object
        A matplotlib PdfPages, or any object with a ``savefig(figure)`` method (e.g. to
        preview pages as PNG).
    folder : path
        Where "image" blocks' files are.
    figures : mapping name -> callable, optional
        For each "figure" block (by its ``text``), a function returning the Figure to draw
        as vectors on its own page.
    """
    figures = figures or {}
    pages = Pages(sink)
    for b in blocks:
        if b.kind == "h1":
            pages.text(b.text, size=17, weight="bold", gap=0.1)
        elif b.kind == "h2":
            pages.y += 0.08
            pages.text(b.text, size=12.5, weight="bold", gap=0.04)
        elif b.kind == "p":
            pages.text(b.text, size=10, gap=0.1)
        elif b.kind == "li":
            pages.text(b.text, size=9.5, indent=0.25, bullet=True, gap=0.03)
        elif b.kind == "table":
            header, rows = b.data
            txt = table_text(header, rows)
            size = min(9.0, 0.95 * (_PAGE[0] - 1.6) * 72 / (0.6 * max(map(len, txt.split("\n")))))
            pages.text(txt, size=size, family="monospace", gap=0.12)
        elif b.kind == "break":
            pages.flush()
        elif b.kind == "image":
            pages.image(Path(folder) / b.text, b.data)
        elif b.kind == "figure":
            pages.image(figures[b.text](), b.data)
    pages.flush()


def render_pdf(blocks: Sequence[Block], *, title: str, creator: str, folder: str | Path,
               figures: Mapping[str, Callable[[], Figure]] | None = None) -> bytes:
    """The blocks as a multi-page PDF (matplotlib PdfPages), in memory.

    Parameters are those of :func:`render_pages`; ``title`` and ``creator`` go into the
    PDF metadata.
    """
    from matplotlib.backends.backend_pdf import PdfPages

    buf = io.BytesIO()
    with PdfPages(buf, metadata={"Title": title, "Creator": creator}) as pdf:
        render_pages(blocks, pdf, folder=folder, figures=figures)
    return buf.getvalue()
