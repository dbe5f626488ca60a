"""Resumable per-recording results and their consolidation into tables.

Each finished recording is one JSON record under ``DIR/records/``, named by a
key made of the recording's content hash, the configuration digest, the
eddyphone version and the per-file options; it is written to a temporary file,
flushed to disk and renamed, so a run killed at any moment leaves either the
whole record or none. Consolidation reads the records of the current inputs
and writes the tables the same way.

Public API
----------
record_key(content_hash, config_digest, version, options) -> str
code_digest() -> str
Store(out_dir): .get(key), .put(record), .put_analysis_json(key, data),
                .analysis_json_path(key)
write_table(df, path, fmt)
write_errors(rows, path)
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Iterable, Mapping
from pathlib import Path
from typing import Any

from eddyphone.io.atomic import atomic_write_bytes as atomic_write

#: Version of the record layout; records of another version are recomputed.
RECORD_VERSION = 1
#: Columns of ``errors.csv``.
ERROR_COLUMNS = ("path", "reason")


def record_key(content_hash: str, config_digest: str, version: str,
               options: Mapping[str, Any]) -> str:
    """Key of one recording's result: same content, settings, code and options.

    ``version`` is the eddyphone version joined with :func:`code_digest`, so an
    edited or updated installation never reuses results of the old code.
    """
    text = json.dumps({"content": content_hash, "config": config_digest, "version": version,
                       "options": options, "record": RECORD_VERSION},
                      sort_keys=True, default=str)
    return hashlib.sha256(text.encode()).hexdigest()[:32]


def code_digest() -> str:
    """Short SHA-256 of the installed eddyphone package (its modules and data files).

    Two installations with the same digest compute the same results. Read from
    disk at every call (a few milliseconds), so an edited installation is seen.
    """
    import eddyphone

    root = Path(eddyphone.__file__).parent
    digest = hashlib.sha256()
    files = sorted(p for p in root.rglob("*") if p.is_file() and p.suffix in (".py", ".json")
                   and "__pycache__" not in p.parts)
    for p in files:
        digest.update(p.relative_to(root).as_posix().encode() + b"\0")
        digest.update(p.read_bytes())
    return digest.hexdigest()[:16]


class Store:
    """Per-recording records of a batch output folder.

    Parameters
    ----------
    out_dir : str or Path
        The batch output folder; records live in ``out_dir/records``.
    """

    def __init__(self, out_dir: str | Path) -> None:
        self.root = Path(out_dir) / "records"

    def _path(self, key: str, suffix: str = ".json") -> Path:
        return self.root / key[:2] / f"{key}{suffix}"

    def get(self, key: str) -> dict[str, Any] | None:
        """The record stored under ``key``, or None (also for unreadable records)."""
        try:
            record = json.loads(self._path(key).read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return None
        if not isinstance(record, dict) or record.get("record_version") != RECORD_VERSION:
            return None
        return record

    def put(self, record: Mapping[str, Any]) -> None:
        """Store a record (it must carry its ``key``) atomically."""
        data = {**record, "record_version": RECORD_VERSION}
        atomic_write(self._path(record["key"]),
                     json.dumps(data, allow_nan=False, default=str).encode("utf-8"))

    def analysis_json_path(self, key: str) -> Path:
        """Where the full JSON of one analysis is kept."""
        return self._path(key, ".analysis.json")

    def put_analysis_json(self, key: str, data: Mapping[str, Any]) -> None:
        """Keep the full JSON output of one analysis (written before its record)."""
        atomic_write(self.analysis_json_path(key),
                     (json.dumps(data, indent=2, allow_nan=False) + "\n").encode("utf-8"))


def write_table(df: Any, path: Path, fmt: str) -> Path:
    """Write a DataFrame as Parquet or CSV atomically; returns the path written."""
    import io

    if fmt == "parquet":
        buffer = io.BytesIO()
        harmonise(df).to_parquet(buffer, index=False)
        data = buffer.getvalue()
    else:
        data = df.to_csv(index=False, lineterminator="\n").encode("utf-8")
    atomic_write(path, data)
    return path


def harmonise(df: Any) -> Any:
    """Make every object column Parquet-safe: a column mixing kinds becomes text."""
    import pandas as pd

    out = df.copy()
    for name in out.columns:
        col = out[name]
        if col.dtype != object:
            continue
        values = [None if v is None or (isinstance(v, float) and v != v) else v for v in col]
        kinds = {type(v) for v in values if v is not None}
        if kinds <= {int, float} and kinds:
            out[name] = pd.to_numeric(col)
            continue
        if not (kinds <= {bool} or kinds <= {str}):
            values = [None if v is None else str(v) for v in values]
        out[name] = pd.Series(values, index=out.index, dtype=object)
    return out


def write_errors(rows: Iterable[tuple[str, str]], path: Path) -> Path:
    """Write ``errors.csv`` (header ``path,reason``; always written, maybe empty)."""
    import csv
    import io

    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(ERROR_COLUMNS)
    for file, reason in rows:
        writer.writerow([file, " ".join(str(reason).split())])
    atomic_write(path, buffer.getvalue().encode("utf-8"))
    return path
