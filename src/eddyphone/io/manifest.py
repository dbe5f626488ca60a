"""Manifest CSV: one recording per row with ``path`` and optional patient/site/posture.

Public functions
----------------
read_manifest(path)     -> rows as dicts (paths resolved, empty cells dropped)
split_row(row, source)  -> (path, load options, patient context, other columns)
"""

from __future__ import annotations

import csv
from pathlib import Path

from eddyphone.errors import InputError


def read_manifest(path: str | Path) -> list[dict[str, str]]:
    """Read a manifest; relative paths (``path``, and ``segments``: a given segmentation
    per recording) are taken relative to the manifest's folder.

    Every column is kept (empty cells dropped) so that study columns travel
    through to the outputs.
    """
    path = Path(path)
    try:
        with path.open(newline="", encoding="utf-8-sig") as fh:
            reader = csv.DictReader(fh)
            if "path" not in (reader.fieldnames or ()):
                raise InputError(str(path), "has no 'path' column",
                                 "give the manifest a header with at least: path")
            rows = []
            for row in reader:
                entry = {k.strip(): (v or "").strip() for k, v in row.items() if k}
                entry = {k: v for k, v in entry.items() if v}
                if "path" not in entry:
                    continue
                for column in PATH_COLUMNS:
                    if column in entry:
                        p = Path(entry[column])
                        entry[column] = str(p if p.is_absolute() else path.parent / p)
                rows.append(entry)
    except OSError as exc:
        raise InputError(str(path), f"cannot read the manifest ({exc.strerror})",
                         "check the path") from None
    if not rows:
        raise InputError(str(path), "lists no recordings", "add one row per recording")
    return rows


#: Manifest columns holding file paths, resolved against the manifest's folder.
PATH_COLUMNS = ("path", "segments")
#: Manifest columns passed to :func:`eddyphone.io.load`.
LOAD_COLUMNS = ("patient", "site", "posture")
#: Manifest columns that become :class:`~eddyphone.context.PatientContext` fields
#: (``states`` separated by ``;``).
CONTEXT_COLUMNS = ("hematocrit", "heart_rate_bpm", "cardiac_output_l_min", "stroke_volume_ml",
                   "diameter_mm", "age_years", "states")


def split_row(row: dict[str, str], source: str) -> tuple[str, dict, dict, dict]:
    """Split a manifest row into its path, load options, patient context and the rest.

    Raises
    ------
    InputError
        A context value that is not a number.
    """
    row = dict(row)
    file = row.pop("path")
    load = {k: row.pop(k) for k in LOAD_COLUMNS if k in row}
    context: dict[str, object] = {}
    for k in CONTEXT_COLUMNS:
        if k not in row:
            continue
        value = row.pop(k)
        if k == "states":
            context[k] = tuple(s.strip() for s in value.split(";") if s.strip())
            continue
        try:
            context[k] = float(value)
        except ValueError:
            raise InputError(f"{source} row for {file}", f"{k}={value!r} is not a number",
                             f"write {k} as a plain number, e.g. 0.42") from None
    return file, load, context, row
