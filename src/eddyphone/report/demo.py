"""The demo: the whole job over the bundled synthetic recordings.

Public API
----------
find_sample_audio() -> Path
new_folder(parent, name) -> Path
run_demo(source, out_dir, *, progress=None) -> DemoResult
"""

from __future__ import annotations

import csv
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from html import escape
from pathlib import Path
from typing import Any

from eddyphone.report import text

AUDIO_SUFFIXES = (".wav", ".flac", ".ogg", ".hea")


@dataclass(frozen=True)
class DemoResult:
    """What the demo wrote: the index page, one report per recording and per patient
    (recordings that index.csv gives a patient), failures."""

    out_dir: Path
    index: Path
    reports: tuple[Path, ...]
    failures: tuple[str, ...]
    recordings: Path
    patient_reports: tuple[Path, ...] = ()


def find_sample_audio() -> Path:
    """The bundled ``sample_audio/`` folder: beside the source tree, or in the current folder.

    Returns None-free: when neither exists, raises :class:`InputError` naming both places.
    """
    from eddyphone.errors import InputError

    here = Path(__file__).resolve()
    candidates = [here.parents[3] / "sample_audio", Path.cwd() / "sample_audio"]
    for c in candidates:
        if c.is_dir() and any(p.suffix.lower() in AUDIO_SUFFIXES for p in c.iterdir()):
            return c
    raise InputError(None, "no sample_audio/ folder found (looked in "
                     + " and ".join(str(c) for c in candidates) + ")",
                     "run the demo from the repository folder, pass --recordings DIR, or "
                     "make the recordings with 'eddyphone simulate --out sample_audio'")


def new_folder(parent: Path, name: str) -> Path:
    """Create and return ``parent/name``, or ``name-2``, ``name-3`` ... if taken; never
    reuses an existing folder."""
    for k in range(1, 1000):
        path = parent / (name if k == 1 else f"{name}-{k}")
        try:
            path.mkdir(parents=False, exist_ok=False)
        except FileExistsError:
            continue
        return path
    from eddyphone.errors import InputError

    raise InputError(str(parent), f"{name}-2 ... {name}-999 all exist",
                     "remove old demo folders or pass --out DIR")


def _index_rows(source: Path) -> dict[str, dict[str, str]]:
    """Per-file metadata from ``index.csv`` (site, patient, what the case was made with)."""
    index = source / "index.csv"
    if not index.exists():
        return {}
    with index.open(newline="", encoding="utf-8") as fh:
        return {row.get("file", ""): row for row in csv.DictReader(fh)}


def _chart(source: Path) -> dict[str, tuple[dict, dict]]:
    """Per file name: load options (site, patient, posture) and patient context from
    ``manifest.csv`` beside the recordings, if there is one."""
    from eddyphone.io.manifest import read_manifest, split_row

    manifest = source / "manifest.csv"
    if not manifest.exists():
        return {}
    chart = {}
    for row in read_manifest(manifest):
        file, options, context, _ = split_row(row, str(manifest))
        chart[Path(file).name] = (options, context)
    return chart


def run_demo(source: str | Path, out_dir: str | Path, *,
             progress: Callable[[str], None] | None = None) -> DemoResult:
    """Analyse every recording in ``source`` into ``out_dir`` (JSON, CSV, reports, figures,
    teaching renders), add patient reports where ``index.csv`` names patients, and write
    ``index.html`` linking everything.

    Parameters
    ----------
    source : path
        Folder of recordings. ``manifest.csv`` beside them gives each one's site,
        patient and chart context; ``index.csv`` how the case was made (and the site and
        patient when there is no manifest).
    out_dir : path
        Folder for the outputs (created if missing; existing outputs are never replaced).
    progress : callable, optional
        Called with one line per recording.
    """
    from eddyphone.errors import EddyphoneError
    from eddyphone.export import write_analysis
    from eddyphone.io import load
    from eddyphone.pipeline import analyze

    source, out_dir = Path(source), Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    meta = _index_rows(source)
    chart = _chart(source)
    files = sorted(p for p in source.iterdir()
                   if p.suffix.lower() in AUDIO_SUFFIXES and not p.name.startswith("."))
    done: list[tuple[Any, dict[str, str], Path]] = []
    failures: list[str] = []
    for path in files:
        row = meta.get(path.name, {})
        options, context = chart.get(path.name, (
            {"site": row.get("site") or None, "patient": row.get("patient") or None}, {}))
        try:
            rec = load(path, **options)
            analysis = analyze(rec, context or None)
            written = write_analysis(analysis, out_dir)
        except EddyphoneError as exc:
            failures.append(str(exc))
            continue
        done.append((analysis, row, written["html"]))
        if progress is not None:
            progress(_line(analysis))
    patients = _patient_reports(done, out_dir, progress)
    index = _write_index(out_dir, source, done, patients, failures)
    return DemoResult(out_dir, index, tuple(p for _, _, p in done), tuple(failures), source,
                      tuple(patients))


def _line(analysis: Any) -> str:
    s = analysis.summary()
    hr = s.get("heart_rate_bpm")
    rate = f"{hr:.0f} bpm" if text.finite_positive(hr) else "rate not found"
    murmur = s.get("murmur_description") or f"murmur {s.get('murmur')}"
    return f"{analysis.recording.stem}: {rate}, {murmur}{text.companion_words(analysis)}"


def _patient_reports(done: list, out_dir: Path, progress: Callable[[str], None] | None = None
                     ) -> dict[Path, str]:
    """Write a report for every patient with several recordings: path -> its line."""
    from eddyphone.findings import summarise_patient
    from eddyphone.report import write_patient_report

    groups: dict[str, list] = {}
    for analysis, _, _ in done:
        if analysis.recording.patient:
            groups.setdefault(analysis.recording.patient, []).append(analysis)
    reports = {}
    for patient, group in groups.items():
        if len(group) < 2:
            continue
        summary = summarise_patient(group, patient_id=patient)
        line = text.patient_line(summary)
        reports[write_patient_report(summary, group, out_dir)["html"]] = line
        if progress is not None:
            progress(line)
    return reports


def _write_index(out_dir: Path, source: Path, done: list, patients: Mapping[Path, str],
                 failures: list[str]) -> Path:
    from eddyphone._version import __version__
    from eddyphone.export import atomic_write_text
    from eddyphone.report.html import _css

    rows = []
    for analysis, meta, html in done:
        s = analysis.summary()
        pdf = html.with_name(html.name.replace(".report.html", ".report.pdf"))
        made = meta.get("note", "")
        cause = meta.get("murmur_cause", "")
        if cause and cause != "none":
            made += f" (made with: {cause.replace('_', ' ')} murmur)"
        top = analysis.explanation.top() if analysis.explanation is not None else None
        hr = s.get("heart_rate_bpm")
        rate = f"{hr:.0f}" if text.finite_positive(hr) else "—"
        found = s.get("murmur_description") or f"murmur {s.get('murmur', 'uncertain')}"
        found += text.companion_words(analysis)
        chart = text.context_words(analysis.context)
        cells = [
            f'<a href="{escape(html.name)}">{escape(analysis.recording.stem)}</a> · '
            f'<a href="{escape(pdf.name)}">PDF</a>',
            escape(analysis.recording.site or "—")
            + (f'<br><span class="muted">{escape(chart)}</span>' if chart else ""),
            rate, escape(found), escape(top.label if top is not None else "—"),
            escape(made or "—")]
        rows.append("<tr>" + "".join(f'<td class="num">{c}</td>' if k == 2 else f"<td>{c}</td>"
                                     for k, c in enumerate(cells)) + "</tr>")
    patient_links = "".join(f'<li><a href="{escape(p.name)}">{escape(p.name)}</a>: '
                            f"{escape(line)}</li>" for p, line in patients.items())
    fail = "".join(f"<li>{escape(f)}</li>" for f in failures)
    body = (
        '<header class="top"><div><p class="kicker">eddyphone demo</p>'
        "<h1>Synthetic recordings, analysed</h1></div></header>"
        '<p class="notice">Every recording here is synthetic, made by eddyphone\'s own '
        "simulator with known truth; no real person is in them. Decision support, not a "
        "diagnosis.</p>"
        f"<p>Recordings from <code>{escape(str(source))}</code>; eddyphone "
        f"{escape(__version__)}. Each report embeds its sound, figures and teaching renders."
        "</p>"
        "<table><thead><tr><th>report</th><th>site; chart</th><th class=\"num\">rate (bpm)</th>"
        "<th>murmur and companion sounds found</th><th>most likely mechanism</th>"
        "<th>how the case was made</th>"
        f"</tr></thead><tbody>{''.join(rows)}</tbody></table>"
        + (f"<h2>Patient reports</h2><ul>{patient_links}</ul>" if patient_links else "")
        + (f"<h2>Failed</h2><ul>{fail}</ul>" if fail else ""))
    html = ("<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\">"
            f"<title>eddyphone demo</title><style>{_css()}</style></head><body><main>"
            f"{body}</main></body></html>")
    return atomic_write_text(out_dir / "index.html", html)
