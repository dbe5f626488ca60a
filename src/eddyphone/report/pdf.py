"""The PDF report for filing: the HTML report's content on A4 pages.

Drawn with matplotlib's PDF backend (no network, no external tools): text flows
down the page and onto the next; figures are placed at print resolution.

Public API
----------
write_pdf(analysis, path, *, figures) -> Path
"""

from __future__ import annotations

import io
import textwrap
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

import numpy as np

from eddyphone.report import palette, text

PAGE_IN = (8.27, 11.69)  # A4 portrait
MARGIN_IN = 0.7
#: Resolution of figures placed on the page, in dots per inch.
FIGURE_DPI = 220
#: Beats listed in the PDF (the full table is in beats.csv).
MAX_BEAT_ROWS = 40
_PT = 1 / 72


class _Pages:
    """A cursor over A4 pages: text, tables and images flow down and break pages."""

    def __init__(self, pdf: Any, title: str) -> None:
        self.pdf = pdf
        self.title = title
        self.page = 0
        self.fig = None
        self.y = 0.0  # inches from the top
        self.width = PAGE_IN[0] - 2 * MARGIN_IN
        self._new_page()

    # page handling
    def _new_page(self) -> None:
        from matplotlib.figure import Figure

        if self.fig is not None:
            self._finish()
        self.page += 1
        self.fig = Figure(figsize=PAGE_IN)
        self.fig.patch.set_facecolor("white")
        self._text(MARGIN_IN, 0.42, f"eddyphone heart-sound report · {self.title}", 7.5,
                   colour=palette.MUTED)
        self._text(PAGE_IN[0] - MARGIN_IN, 0.42, f"page {self.page}", 7.5,
                   colour=palette.MUTED, ha="right")
        self.fig.add_artist(self._rule(0.6, palette.INK, 0.8))
        self._text(MARGIN_IN, PAGE_IN[1] - 0.4, "Decision support, not a diagnosis: every "
                   "finding needs confirmation by a licensed clinician.", 7,
                   colour=palette.MUTED)
        self.y = MARGIN_IN + 0.12

    def _finish(self) -> None:
        self.pdf.savefig(self.fig)
        self.fig = None

    def close(self) -> int:
        self._finish()
        return self.page

    def need(self, height_in: float) -> None:
        if self.y + height_in > PAGE_IN[1] - MARGIN_IN:
            self._new_page()

    # drawing primitives
    def _rule(self, y_in: float, colour: str, lw: float):
        from matplotlib.lines import Line2D

        yy = 1 - y_in / PAGE_IN[1]
        return Line2D([MARGIN_IN / PAGE_IN[0], 1 - MARGIN_IN / PAGE_IN[0]], [yy, yy],
                      transform=self.fig.transFigure, color=colour, lw=lw)

    def _text(self, x_in: float, y_in: float, s: str, size: float, *, colour: str = palette.INK,
              weight: str = "normal", ha: str = "left", family: str = "DejaVu Sans") -> None:
        self.fig.text(x_in / PAGE_IN[0], 1 - y_in / PAGE_IN[1], s, fontsize=size, color=colour,
                      fontweight=weight, ha=ha, va="top", family=family)

    @staticmethod
    def _wrap(s: str, width_in: float, size: float, mono: bool = False) -> list[str]:
        per_char = (0.60 if mono else 0.56) * size * _PT
        chars = max(8, int(width_in / per_char))
        lines: list[str] = []
        for para in str(s).split("\n"):
            lines.extend(textwrap.wrap(para, chars, break_long_words=True,
                                       break_on_hyphens=False) or [""])
        return lines

    # flowing content
    def heading(self, s: str, level: int = 1) -> None:
        size = 13 if level == 1 else 10.5
        lines = self._wrap(s, self.width, size * 1.08)  # bold runs wider
        self.need((2.0 if level == 1 else 1.0) + size * 1.3 * _PT * (len(lines) - 1))  # no orphans
        self.y += 0.14 if level == 1 else 0.08
        for line in lines[:-1]:
            self._text(MARGIN_IN, self.y, line, size, weight="bold")
            self.y += size * 1.3 * _PT
        self._text(MARGIN_IN, self.y, lines[-1], size, weight="bold")
        self.y += size * 1.45 * _PT
        if level == 1:
            self.fig.add_artist(self._rule(self.y - 0.03, palette.GRID, 0.8))
            self.y += 0.06

    def paragraph(self, s: str, *, size: float = 9, indent_in: float = 0.0,
                  colour: str = palette.INK, bullet: bool = False, weight: str = "normal",
                  mono: bool = False) -> None:
        x = MARGIN_IN + indent_in + (0.16 if bullet else 0.0)
        lines = self._wrap(s, self.width - (x - MARGIN_IN), size, mono)
        step = size * 1.38 * _PT
        for k, line in enumerate(lines):
            self.need(step)
            if bullet and k == 0:
                self._text(x - 0.14, self.y, "•", size, colour=colour)
            self._text(x, self.y, line, size, colour=colour, weight=weight,
                       family="DejaVu Sans Mono" if mono else "DejaVu Sans")
            self.y += step
        self.y += 0.04

    def bullets(self, items: Sequence[str], *, size: float = 9, indent_in: float = 0.0) -> None:
        for item in items:
            self.paragraph(item, size=size, indent_in=indent_in, bullet=True)

    def facts(self, rows: Sequence[tuple[str, str]], *, size: float = 9.5) -> None:
        key_w = 1.75
        step = size * 1.4 * _PT
        for key, value in rows:
            lines = self._wrap(value, self.width - key_w, size)
            self.need(step * len(lines))
            self._text(MARGIN_IN, self.y, key, size - 0.5, colour=palette.MUTED)
            for line in lines:
                self._text(MARGIN_IN + key_w, self.y, line, size, weight="bold")
                self.y += step
            self.y += 0.03
        self.y += 0.06

    def table(self, header: Sequence[str], rows: Sequence[Sequence[str]], *,
              size: float = 7.5, weights: Sequence[float] | None = None) -> None:
        n = len(header)
        if weights is None:
            lens = [max([len(str(header[i]))] + [len(str(r[i])) for r in rows]) for i in
                    range(n)]
            weights = [min(max(v, 4), 40) for v in lens]
        total = float(sum(weights))
        widths = [self.width * w / total for w in weights]
        xs = MARGIN_IN + np.concatenate([[0.0], np.cumsum(widths)[:-1]])
        step = size * 1.35 * _PT

        def draw_row(cells: Sequence[str], *, bold: bool, colour: str) -> None:
            wrapped = [self._wrap(str(c), w - 0.06, size) for c, w in zip(cells, widths)]
            height = step * max(len(w) for w in wrapped)
            self.need(height + 0.04)
            for x, lines in zip(xs, wrapped):
                for k, line in enumerate(lines):
                    self._text(x, self.y + k * step, line, size, colour=colour,
                               weight="bold" if bold else "normal")
            self.y += height + 0.03
            self.fig.add_artist(self._rule(self.y - 0.015, palette.GRID, 0.4))

        draw_row(header, bold=True, colour=palette.MUTED)
        for r in rows:
            draw_row(r, bold=False, colour=palette.INK)
        self.y += 0.08

    def image(self, png: bytes, *, caption: str = "") -> None:
        import matplotlib.image as mpimg

        img = mpimg.imread(io.BytesIO(png), format="png")
        h_px, w_px = img.shape[:2]
        width = self.width
        height = width * h_px / w_px
        room = PAGE_IN[1] - 2 * MARGIN_IN - 0.4
        if height > room:
            height, width = room, room * w_px / h_px
        extra = 0.3 if caption else 0.1
        left = PAGE_IN[1] - MARGIN_IN - self.y - extra
        if height > left >= 0.7 * height:  # shrink a little rather than leave a gap
            width, height = width * left / height, left
        self.need(height + extra)
        ax = self.fig.add_axes([MARGIN_IN / PAGE_IN[0], 1 - (self.y + height) / PAGE_IN[1],
                                width / PAGE_IN[0], height / PAGE_IN[1]])
        ax.imshow(img, interpolation="none")  # embedded unresampled at full resolution
        ax.set_axis_off()
        self.y += height + 0.05
        if caption:
            self.paragraph(caption, size=7.5, colour=palette.MUTED)
        self.y += 0.05


def write_pdf(analysis: Any, path: str | Path, *, figures: Mapping[str, bytes]) -> Path:
    """Write the PDF report (A4) to ``path`` through a temporary file.

    Parameters
    ----------
    analysis : Analysis
    path : path
        Target file, usually ``<stem>.report.pdf``.
    figures : mapping of name -> PNG bytes
        Rendered at :data:`FIGURE_DPI` or more for print.
    """
    from matplotlib.backends.backend_pdf import PdfPages

    from eddyphone.export import atomic_write_bytes
    from eddyphone.report.html import FIGURE_CAPTIONS

    buffer = io.BytesIO()
    stem = analysis.recording.stem
    with PdfPages(buffer, metadata={"Title": f"eddyphone report: {stem}",
                                    "Creator": "eddyphone",
                                    "Subject": "heart-sound analysis"}) as pdf:
        pages = _Pages(pdf, stem)
        pages._text(MARGIN_IN, pages.y, stem, 17, weight="bold")
        pages.y += 0.38
        pages.heading("1  Summary")
        pages.facts(text.headline(analysis))
        pages.heading("2  Findings")
        f = analysis.findings
        if f is None:
            pages.paragraph(text.MISSING_FINDINGS, colour=palette.MUTED)
        else:
            pages.paragraph(f"Murmur: {f.presence}. {f.presence_reason}", weight="bold")
            for m in f.murmurs:
                pages.heading(f"{m.id}: {m.describe()}", level=2)
                pages.table(["measure", "value"], text.murmur_table(m), size=8,
                            weights=[1, 4])
            extras = text.extra_sound_lines(analysis)
            pages.heading("Extra sounds", level=2)
            if extras:
                pages.bullets(extras)
            else:
                pages.paragraph("None found.")
        pages.heading("3  Heart sounds and cycle")
        pages.bullets(text.rhythm_lines(analysis))
        for k in ("overview", "spectrogram", "ensemble"):
            if k in figures:
                pages.image(figures[k], caption=FIGURE_CAPTIONS[k])
        for name, png in figures.items():
            if name.startswith("murmur-"):
                pages.image(png, caption=f"{name[7:]}: envelope across its window (shaded "
                            "where the murmur runs) and the spectrum of its windows.")
        pages.heading("4  Likely mechanisms and their physics")
        if analysis.explanation is None:
            pages.paragraph(text.MISSING_EXPLANATION, colour=palette.MUTED)
        else:
            if "mechanisms" in figures:
                pages.image(figures["mechanisms"], caption=FIGURE_CAPTIONS["mechanisms"])
            current = None
            for b in text.mechanism_blocks(analysis):
                if b.finding != current:
                    current = b.finding
                    pages.paragraph(f"For {b.finding}:", weight="bold", colour=palette.MUTED)
                pages.heading(f"{b.rank}. {b.label} — score {b.score:.2f}", level=2)
                pages.paragraph(b.physics)
                if b.evidence:
                    pages.paragraph("Evidence measured", size=8, colour=palette.MUTED,
                                    weight="bold")
                    pages.bullets(b.evidence, size=8.5)
                if b.numbers:
                    pages.table(["quantity", "value", "meaning"], b.numbers,
                                weights=[2, 1.3, 4])
                if b.discriminators:
                    pages.paragraph("What would tell the candidates apart", size=8,
                                    colour=palette.MUTED, weight="bold")
                    pages.bullets(b.discriminators, size=8.5)
                if b.assumptions:
                    pages.paragraph("Assumed", size=8, colour=palette.MUTED, weight="bold")
                    pages.bullets(b.assumptions, size=8.5)
                if b.cautions:
                    pages.paragraph("Cautions", size=8, colour=palette.MUTED, weight="bold")
                    pages.bullets(b.cautions, size=8.5)
            assumed = text.explanation_assumptions(analysis)
            if assumed:
                pages.heading("Assumptions for the whole recording", level=2)
                pages.bullets(assumed, size=8.5)
        pages.heading("5  Recording quality and what was skipped")
        pages.bullets(text.quality_lines(analysis))
        pages.table(*text.quality_rows(analysis))
        sh, sr = text.skipped_rows(analysis)
        if sr:
            pages.heading("Skipped by the segmentation", level=2)
            pages.table(sh, sr, weights=[1, 1, 5])
        pages.heading("6  Beats")
        bh, br = text.beat_rows(analysis)
        if len(br) > MAX_BEAT_ROWS:
            pages.paragraph(f"First {MAX_BEAT_ROWS} of {len(br)} beats; the full table is "
                            "in beats.csv.", colour=palette.MUTED, size=8)
        pages.table(bh, br[:MAX_BEAT_ROWS])
        pages.heading("7  Cautions")
        pages.bullets(text.cautions(analysis))
        pages.heading("8  Provenance and configuration")
        pages.facts(text.provenance(analysis), size=8.5)
        pages.paragraph(text.config_json(analysis, indent=None), size=6.5, mono=True,
                        colour=palette.MUTED)
        pages.close()
    return atomic_write_bytes(Path(path), buffer.getvalue())
