"""The patient report: one patient's auscultation sites side by side.

Public API
----------
order_sites(analyses) -> list of Analysis
sites_figure(analyses) -> Figure
site_rows(analyses) -> (header, rows)
write_patient(summary, analyses, out_dir, *, overwrite=False, stem=None) -> dict[str, Path]
"""

from __future__ import annotations

import io
import textwrap
from collections.abc import Mapping, Sequence
from html import escape
from pathlib import Path
from typing import Any

import numpy as np

from eddyphone.report import palette, text
from eddyphone.report.figures import (
    ENERGY_RANGE_DB,
    _median_bounds,
    ensemble_matrix,
    mechanism_chart,
    styled,
    timing_phase,
)

#: Order in which auscultation sites are shown (the usual examination round).
SITE_ORDER = ("aortic", "pulmonic", "tricuspid", "mitral", "carotid", "femoral", "renal",
              "fistula", "other")


def _site(a: Any) -> str:
    return a.recording.site or a.recording.stem


def order_sites(analyses: Sequence[Any]) -> list[Any]:
    """Recordings in examination order (known sites first, then by name)."""
    def key(a: Any) -> tuple[int, str]:
        site = a.recording.site
        return (SITE_ORDER.index(site) if site in SITE_ORDER else len(SITE_ORDER), _site(a))

    return sorted(analyses, key=key)


def _murmur_short(a: Any) -> str:
    f = a.findings
    if f is None:
        return "murmur not assessed"
    m = f.main()
    if m is None or f.presence == "absent":
        return f"murmur {f.presence}"
    prefix = "" if f.presence == "present" else "possible "
    return f"{prefix}{timing_phase(m)}, grade {m.grade_text}"


def sites_figure(analyses: Sequence[Any]):
    """The median beat of every site side by side, on one energy scale per site
    (dB re that site's median S1 peak), with the states and the murmur windows."""
    items = order_sites(analyses)
    n = len(items)
    cols = min(n, 4)
    rows = int(np.ceil(n / cols))
    with styled():
        from matplotlib.figure import Figure

        fig = Figure(figsize=(7.0, 0.6 + 2.0 * rows), layout="constrained")
        axes = np.atleast_1d(fig.subplots(rows, cols, sharey=True, squeeze=False)).ravel()
        for ax, a in zip(axes, items):
            img, t, beats = ensemble_matrix(a)
            short = "\n".join(textwrap.wrap(_murmur_short(a), 18))
            ax.set_title(f"{_site(a)}\n{short}", fontsize=8.5)
            if not beats:
                ax.text(0.5, 0.5, "no beats", transform=ax.transAxes, ha="center",
                        color=palette.MUTED)
                continue
            for label, lo, hi in _median_bounds(beats):
                ax.axvspan(1000 * lo, 1000 * hi, color=palette.STATE_COLOURS[label],
                           alpha=palette.BAND_ALPHA, lw=0)
            import warnings

            with warnings.catch_warnings():
                warnings.simplefilter("ignore", RuntimeWarning)
                med = np.nanmedian(img, axis=0)
            ax.plot(1000 * t, med, color=palette.INK, lw=1.0)
            m = a.findings.main() if a.findings is not None else None
            if m is not None and a.findings.presence != "absent":
                bounds = {k: (lo, hi) for k, lo, hi in _median_bounds(beats)}
                window = (bounds["S1"][1], bounds["S2"][0]) if m.phase == "systolic" else \
                    bounds.get("diastole", (0.0, 0.0))
                ax.plot([1000 * window[0], 1000 * window[1]], [-ENERGY_RANGE_DB - 2] * 2,
                        color=palette.ACCENT, lw=3, solid_capstyle="butt")
            ax.set_xlim(1000 * t[0], 1000 * t[-1])
            ax.set_ylim(-ENERGY_RANGE_DB - 4, 12)
            ax.grid(axis="y")
            ax.set_xlabel("time from S1 (ms)")
        for ax in axes[len(items):]:
            ax.set_visible(False)
        for r in range(rows):
            axes[r * cols].set_ylabel("median beat energy\n(dB re S1 peak)")
    return fig


def site_rows(analyses: Sequence[Any], out_dir: Path | None = None
              ) -> tuple[list[str], list[list[str]]]:
    """One row per site: rate, rhythm, murmur, grade, pitch, mechanism, quality, report."""
    # the level re the same recording's S1, as the patient summary compares sites (S1 is
    # heard at every site; the louder of S1 and S2 is S2 at the base)
    header = ["site", "recording", "rate (bpm)", "rhythm", "murmur", "pitch",
              "level (dB re S1)", "beats with it", "top mechanism", "quality"]
    rows = []
    for a in order_sites(analyses):
        s = a.summary()
        m = a.findings.main() if a.findings is not None else None
        top = a.explanation.top() if a.explanation is not None else None
        rows.append([
            a.recording.site or "—", a.recording.stem,
            f"{s['heart_rate_bpm']:.0f}" if text.finite_positive(s.get("heart_rate_bpm")) else "—",
            s.get("rhythm") or "—", _murmur_short(a),
            m.pitch_text if m else "—",
            f"{m.level_db_re_s1:+.1f}" if m else "—",
            f"{m.beats_with_murmur}/{m.beats_used}" if m else "—",
            top.label if top is not None else "—",
            f"{a.quality.score:.2f}"])
    return header, rows


def _summary_facts(summary: Any) -> list[tuple[str, str]]:
    """Facts of a PatientSummary (or any mapping of simple values) in words."""
    if summary is None:
        return []
    out: list[tuple[str, str]] = []
    murmurs = getattr(summary, "murmurs", None)
    if murmurs is not None:
        out.append(("Murmur", str(getattr(summary, "presence", "—"))))
        for m in murmurs:
            label = f"{m.phase.capitalize()} murmur" + (" (possible)" if m.possible else "")
            out.append((label, f"{m.description}; {m.spread}"))
        for kind, sites in (getattr(summary, "extra_sounds", {}) or {}).items():
            out.append((f"{kind.replace('_', ' ')}", "heard at " + ", ".join(sites)))
        if getattr(summary, "summary", ""):
            out.append(("In words", summary.summary))
        return out
    data = summary.to_dict() if hasattr(summary, "to_dict") else dict(summary)
    for k, v in data.items():
        if isinstance(v, (str, int, float)) or v is None:
            out.append((k.replace("_", " "), "—" if v is None else str(v)))
        elif isinstance(v, (list, tuple)) and all(isinstance(i, (str, int, float)) for i in v):
            out.append((k.replace("_", " "), ", ".join(str(i) for i in v) or "—"))
    return out


def _patient_explanation(analyses: Sequence[Any]) -> Any:
    try:
        from eddyphone.explain import explain_patient
    except ImportError:  # explanation stage not available
        return None
    if any(a.findings is None for a in analyses):
        return None
    return explain_patient(analyses, context=analyses[0].context)


def _png(fig: Any, dpi: int) -> bytes:
    buffer = io.BytesIO()
    with styled():
        fig.savefig(buffer, format="png", dpi=dpi)
    return buffer.getvalue()


def write_patient(summary: Any, analyses: Sequence[Any], out_dir: str | Path, *,
                  overwrite: bool = False, stem: str | None = None) -> dict[str, Path]:
    """Write ``<stem>.report.html``, ``<stem>.report.pdf`` and ``<stem>.sites.png``.

    See :func:`eddyphone.report.write_patient_report`.
    """
    from eddyphone.errors import InputError
    from eddyphone.export import atomic_write_bytes, atomic_write_text, check_free

    if not analyses:
        raise InputError(None, "no recordings for the patient report",
                         "pass at least one analysis")
    out_dir = Path(out_dir)
    patient = analyses[0].recording.patient or "unknown"
    stem = stem or f"patient-{patient}"
    paths = {"html": out_dir / f"{stem}.report.html", "pdf": out_dir / f"{stem}.report.pdf",
             "figure_sites": out_dir / f"{stem}.sites.png"}
    check_free(paths.values(), source=f"patient {patient}", overwrite=overwrite)
    explanation = _patient_explanation(analyses)
    figs = {"sites": sites_figure(analyses)}
    subjects = dict(getattr(explanation, "subjects", {}) or {})
    chart = mechanism_chart(explanation, {"overall": "Whole patient (loudest sites count "
                                          "most)", **subjects}, overall_only=True)
    if chart is not None:
        figs["mechanisms"] = chart
        paths["figure_mechanisms"] = out_dir / f"{stem}.mechanisms.png"
    screen = {k: _png(f, 150) for k, f in figs.items()}
    atomic_write_bytes(paths["figure_sites"], screen["sites"])
    if "mechanisms" in screen:
        atomic_write_bytes(paths["figure_mechanisms"], screen["mechanisms"])
    atomic_write_text(paths["html"], _html(patient, summary, analyses, explanation, screen,
                                           out_dir))
    _pdf(paths["pdf"], patient, summary, analyses, explanation,
         {k: _png(f, 220) for k, f in figs.items()})
    return paths


def _cautions(analyses: Sequence[Any], explanation: Any) -> list[str]:
    from eddyphone.cautions import GENERAL_CAUTIONS

    out = list(GENERAL_CAUTIONS)
    for c in getattr(explanation, "cautions", ()) if explanation is not None else ():
        if c not in out:
            out.append(c)
    return out


def _html(patient: str, summary: Any, analyses: Sequence[Any], explanation: Any,
          figures: Mapping[str, bytes], out_dir: Path) -> str:
    from eddyphone._version import __version__
    from eddyphone.report.html import _css, _facts, _figure, _section, _table, _ul

    parts = []
    n = 0

    def add(title: str, body: str, ident: str) -> None:
        nonlocal n
        n += 1
        parts.append(_section(n, title, body, ident=ident))

    facts = [("Patient", patient), ("Recordings", str(len(analyses))),
             ("Sites", ", ".join(_site(a) for a in order_sites(analyses))),
             ("Patient context", text.context_words(analyses[0].context)
              or text.NO_CONTEXT_WORDS)]
    top = explanation.top() if explanation is not None else None
    if top is not None:
        facts.append(("Most likely mechanism",
                      text.mechanism_phrase(top, getattr(summary, "presence", None))))
    facts += _summary_facts(summary)
    add("Summary", _facts(facts, element_id="summary-facts"), "summary")
    header, rows = site_rows(analyses)
    links = []
    for a in order_sites(analyses):
        report = out_dir / f"{a.recording.stem}.report.html"
        if report.exists():
            links.append(f'<a href="{escape(report.name)}">{escape(_site(a))}: '
                         f"{escape(report.name)}</a>")
    body = _table(header, rows, numeric=(2, 6))
    if links:
        body += "<p>Reports per site: " + " · ".join(links) + "</p>"
    body += _figure("sites", figures["sites"], "The median beat at every site on the same "
                    "time axis; the purple bar marks the main murmur's window.")
    add("Sites side by side", body, "sites")
    if "mechanisms" in figures:
        mech = _figure("mechanisms", figures["mechanisms"], "Mechanisms ranked for the "
                       "patient as a whole.")
        if top is not None:
            mech += f"<h3>{escape(top.label)}</h3><p>{escape(top.physics)}</p>"
            if top.discriminators:
                mech += "<h4>What would tell the candidates apart</h4>" + \
                    _ul(top.discriminators)
        add("Likely mechanism across sites", mech, "mechanisms")
    add("Cautions", '<div class="cautions">' + _ul(_cautions(analyses, explanation))
        + "</div>", "cautions")
    head = (f'<header class="top"><div><p class="kicker">eddyphone patient report</p>'
            f"<h1>Patient {escape(patient)}</h1></div></header>"
            '<p class="notice">Decision support, not a diagnosis: confirm every finding '
            "clinically. This file was written on this machine and fetches nothing.</p>")
    return ("<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\">"
            f"<title>Patient {escape(patient)} — eddyphone</title><style>{_css()}</style>"
            f"</head><body><main>{head}{''.join(parts)}<footer>Written by eddyphone "
            f"{escape(__version__)}.</footer></main></body></html>")


def _pdf(path: Path, patient: str, summary: Any, analyses: Sequence[Any], explanation: Any,
         figures: Mapping[str, bytes]) -> Path:
    from matplotlib.backends.backend_pdf import PdfPages

    from eddyphone.export import atomic_write_bytes
    from eddyphone.report.pdf import MARGIN_IN, _Pages

    buffer = io.BytesIO()
    with PdfPages(buffer, metadata={"Title": f"eddyphone patient report: {patient}",
                                    "Creator": "eddyphone"}) as pdf:
        pages = _Pages(pdf, f"patient {patient}")
        pages._text(MARGIN_IN, pages.y, f"Patient {patient}", 17, weight="bold")
        pages.y += 0.38
        pages.heading("1  Summary")
        facts = [("Recordings", str(len(analyses))),
                 ("Sites", ", ".join(_site(a) for a in order_sites(analyses)))]
        top = explanation.top() if explanation is not None else None
        if top is not None:
            facts.append(("Most likely mechanism",
                          text.mechanism_phrase(top, getattr(summary, "presence", None))))
        pages.facts(facts + _summary_facts(summary))
        pages.heading("2  Sites side by side")
        header, rows = site_rows(analyses)
        pages.table(header, rows, size=7)
        pages.image(figures["sites"], caption="The median beat at every site; the purple bar "
                    "marks the main murmur's window.")
        if "mechanisms" in figures:
            pages.heading("3  Likely mechanism across sites")
            pages.image(figures["mechanisms"])
            if top is not None:
                pages.paragraph(top.physics)
                pages.bullets(top.discriminators, size=8.5)
        pages.heading("Cautions")
        pages.bullets(_cautions(analyses, explanation))
        pages.close()
    return atomic_write_bytes(path, buffer.getvalue())
