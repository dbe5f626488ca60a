"""Reports: figures, the self-contained HTML report, the PDF for filing, the patient view.

Public API
----------
write_report(analysis, out_dir, *, stem, teaching=True, dpi=150) -> dict[str, Path]
    ``<stem>.report.html``, ``<stem>.report.pdf``, the figures ``<stem>.<name>.png`` and
    the teaching renders ``<stem>.teach.*.wav``.
write_patient_report(summary, analyses, out_dir, *, overwrite=False, stem=None)
    -> dict[str, Path]
    One patient's sites side by side (HTML and PDF).

Figures are in :mod:`eddyphone.report.figures`, the colours in
:mod:`eddyphone.report.palette`, the shared words in :mod:`eddyphone.report.text`.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

__all__ = ["write_report", "write_patient_report"]


def _png(fig: Any, dpi: int) -> bytes:
    import io

    from eddyphone.report.figures import styled

    buffer = io.BytesIO()
    with styled():
        fig.savefig(buffer, format="png", dpi=dpi)
    return buffer.getvalue()


def write_report(analysis: Any, out_dir: str | Path, *, stem: str, teaching: bool = True,
                 dpi: int = 150) -> dict[str, Path]:
    """Write the HTML and PDF reports of one analysis with their figures.

    Parameters
    ----------
    analysis : Analysis
    out_dir : path
        Folder for the files (created if needed).
    stem : str
        File-name stem, usually the recording's.
    teaching : bool
        Also write the teaching renders (:func:`eddyphone.teach.render_all`) and
        link them from the HTML report.
    dpi : int
        Resolution of the PNG figures; the PDF places them at
        :data:`eddyphone.report.pdf.FIGURE_DPI`.

    Returns
    -------
    dict
        ``html``, ``pdf``, ``figure_<name>`` for each figure and ``teach_<name>``
        for each render.
    """
    from eddyphone.report.figures import all_figures
    from eddyphone.report.html import write_html
    from eddyphone.report.pdf import FIGURE_DPI, write_pdf

    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    figs = all_figures(analysis)
    screen = {name: _png(fig, dpi) for name, fig in figs.items()}
    written: dict[str, Path] = {}
    from eddyphone.export import atomic_write_bytes

    for name, data in screen.items():
        written[f"figure_{name}"] = atomic_write_bytes(out_dir / f"{stem}.{name}.png", data)
    renders: dict[str, Path] = {}
    if teaching:
        from eddyphone.teach import render_all

        renders = render_all(analysis, out_dir, stem=stem)
        written.update({f"teach_{k}": v for k, v in renders.items()})
    written["html"] = write_html(analysis, out_dir / f"{stem}.report.html", figures=screen,
                                 renders=renders)
    print_figs = screen if dpi >= FIGURE_DPI else {n: _png(f, FIGURE_DPI)
                                                    for n, f in figs.items()}
    written["pdf"] = write_pdf(analysis, out_dir / f"{stem}.report.pdf", figures=print_figs)
    return written


def write_patient_report(summary: Any, analyses: Sequence[Any], out_dir: str | Path, *,
                         overwrite: bool = False, stem: str | None = None) -> dict[str, Path]:
    """Write one patient's report: every site side by side, HTML and PDF.

    Parameters
    ----------
    summary : PatientSummary or None
        From :func:`eddyphone.findings.summarise_patient`; its ``to_dict()`` is shown.
    analyses : sequence of Analysis
        The patient's recordings (one per site).
    out_dir : path
    overwrite : bool
        Replace existing patient reports.
    stem : str, optional
        Defaults to ``patient-<id>``.

    Returns
    -------
    dict
        ``html``, ``pdf`` and ``figure_sites``.
    """
    from eddyphone.report.patient import write_patient

    return write_patient(summary, analyses, out_dir, overwrite=overwrite, stem=stem)
