"""Reading and writing ``start_s,end_s,label`` interval tables."""

from __future__ import annotations

import csv
import io
from collections.abc import Iterable
from pathlib import Path

from eddyphone.errors import InputError
from eddyphone.io.atomic import atomic_write_text

SEGMENT_HEADER = ("start_s", "end_s", "label")


def read_segments_csv(path: str | Path) -> list[tuple[float, float, str]]:
    """Read an interval table with header ``start_s,end_s,label``; rows sorted by start."""
    path = Path(path)
    try:
        with path.open(newline="", encoding="utf-8") as fh:
            reader = csv.DictReader(fh)
            missing = set(SEGMENT_HEADER) - set(reader.fieldnames or ())
            if missing:
                raise InputError(str(path), f"missing columns {sorted(missing)}",
                                 "give the table the header start_s,end_s,label")
            rows = [(float(r["start_s"]), float(r["end_s"]), r["label"].strip()) for r in reader]
    except OSError as exc:
        raise InputError(str(path), f"cannot read ({exc.strerror})", "check the path") from None
    except ValueError as exc:
        raise InputError(str(path), f"a time is not a number ({exc})",
                         "write times in seconds as plain numbers") from None
    return sorted(rows, key=lambda r: (r[0], r[1]))


def write_segments_csv(path: str | Path, rows: Iterable[tuple[float, float, str]]) -> Path:
    """Write an interval table atomically (temporary file, then rename)."""
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(SEGMENT_HEADER)
    for start, end, label in rows:
        writer.writerow((f"{start:.4f}", f"{end:.4f}", label))
    return atomic_write_text(Path(path), buffer.getvalue())
