"""Manifest CSV: one recording per row with ``path`` and optional patient/site/posture."""

from __future__ import annotations

import csv
from pathlib import Path

from eddyphone.errors import InputError


def read_manifest(path: str | Path) -> list[dict[str, str]]:
    """Read a manifest; relative paths are taken relative to the manifest's folder.

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
                p = Path(entry["path"])
                entry["path"] = str(p if p.is_absolute() else path.parent / p)
                rows.append(entry)
    except OSError as exc:
        raise InputError(str(path), f"cannot read the manifest ({exc.strerror})",
                         "check the path") from None
    if not rows:
        raise InputError(str(path), "lists no recordings", "add one row per recording")
    return rows
