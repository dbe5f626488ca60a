"""Writing an :class:`~eddyphone.pipeline.Analysis` to files: JSON and CSV tables.

Every file is written atomically (a temporary file renamed into place), and
existing outputs are never replaced unless ``overwrite`` is asked for.
"""

from __future__ import annotations

import csv
import io
import json
from collections.abc import Iterable, Sequence
from pathlib import Path
from typing import Any

from eddyphone.errors import InputError
from eddyphone.io.atomic import atomic_write_bytes, atomic_write_text
from eddyphone.io.labels import write_segments_csv

__all__ = ["BEAT_COLUMNS", "atomic_write_bytes", "atomic_write_text", "check_free", "csv_text",
           "output_paths", "write_analysis"]

BEAT_COLUMNS = ("beat", "s1_onset_s", "s1_offset_s", "s2_onset_s", "s2_offset_s",
                "next_s1_onset_s", "rr_s", "systole_ms", "diastole_ms", "confidence")


def csv_text(header: Sequence[str], rows: Iterable[Sequence[Any]]) -> str:
    """Render a CSV table (numbers as written, ``None`` as empty)."""
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(header)
    for row in rows:
        writer.writerow(["" if v is None else v for v in row])
    return buffer.getvalue()


def output_paths(out_dir: Path, stem: str) -> dict[str, Path]:
    """The contract's per-recording files."""
    return {
        "json": out_dir / f"{stem}.json",
        "segments": out_dir / f"{stem}.segments.csv",
        "beats": out_dir / f"{stem}.beats.csv",
        "html": out_dir / f"{stem}.report.html",
        "pdf": out_dir / f"{stem}.report.pdf",
    }


def check_free(paths: Iterable[Path], *, source: str, overwrite: bool) -> None:
    """Raise if any output already exists and ``overwrite`` was not asked for."""
    if overwrite:
        return
    taken = [p for p in paths if p.exists()]
    if taken:
        raise InputError(source, f"output {taken[0]} already exists",
                         "choose another --out folder, or pass --overwrite to replace it")


def write_analysis(analysis: Any, out_dir: str | Path, *, stem: str | None = None,
                   overwrite: bool = False, report: bool = True) -> dict[str, Path]:
    """Write ``<stem>.json``, ``.segments.csv``, ``.beats.csv`` and, with ``report``,
    the HTML and PDF reports with their figures. Returns the paths written."""
    out_dir = Path(out_dir)
    stem = stem or analysis.recording.stem
    paths = output_paths(out_dir, stem)
    wanted = paths if report else {k: v for k, v in paths.items() if k not in ("html", "pdf")}
    check_free(wanted.values(), source=analysis.recording.source, overwrite=overwrite)
    data = analysis.to_dict()
    atomic_write_text(paths["json"], json.dumps(data, indent=2, allow_nan=False) + "\n")
    write_segments_csv(paths["segments"],
                       ((s["start_s"], s["end_s"], s["label"]) for s in data["segments"]))
    atomic_write_text(paths["beats"], csv_text(
        BEAT_COLUMNS, ([_cell(b.get(c if c != "beat" else "index")) for c in BEAT_COLUMNS]
                       for b in data["beats"])))
    written = {k: paths[k] for k in ("json", "segments", "beats")}
    if report:
        from eddyphone.report import write_report

        written.update(write_report(analysis, out_dir, stem=stem))
    return written


def _cell(value: Any) -> Any:
    if isinstance(value, float):
        return f"{value:.4f}"
    return value
