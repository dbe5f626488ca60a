"""What a batch runs over: folders, glob patterns and manifest CSV files.

Public API
----------
collect(inputs) -> list[BatchItem]
read_manifest(path) -> list[BatchItem]
content_hash(path) -> str
AUDIO_SUFFIXES
"""

from __future__ import annotations

import glob
import hashlib
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from pathlib import Path

from eddyphone.errors import InputError

#: File suffixes picked up when a folder is scanned (``.hea`` is a WFDB header).
AUDIO_SUFFIXES = (".wav", ".wave", ".flac", ".ogg", ".oga", ".mp3", ".aif", ".aiff",
                  ".m4a", ".mp4", ".aac", ".opus", ".webm", ".3gp", ".amr", ".hea")
#: Signal files that can sit beside a WFDB header of the same stem.
_WFDB_SIGNAL_SUFFIXES = (".dat", ".wav", ".wave", ".flac")
_SIDECAR_SUFFIX = ".meta.json"
_GLOB_CHARS = set("*?[")
_HASH_BLOCK = 1 << 20


@dataclass(frozen=True)
class BatchItem:
    """One recording of a batch and what the user said about it.

    Attributes
    ----------
    path : str
        File to analyse, as given (manifest paths are resolved against the
        manifest's folder).
    load : mapping
        ``patient``, ``site``, ``posture`` given by a manifest (empty cells dropped).
    context : mapping
        Patient-context fields given by a manifest (``hematocrit``, ...).
    extra : mapping
        Any further manifest columns, carried through to the output unchanged.
    """

    path: str
    load: Mapping[str, str] = field(default_factory=dict)
    context: Mapping[str, object] = field(default_factory=dict)
    extra: Mapping[str, str] = field(default_factory=dict)

    def columns(self) -> dict[str, object]:
        """The manifest values as output columns (``patient``, ``site``, extras...)."""
        return {**self.load, **{f"context_{k}": v for k, v in self.context.items()},
                **self.extra}


def collect(inputs: Iterable[str | Path]) -> list[BatchItem]:
    """Expand folders (recursively), glob patterns and manifest CSV files.

    Parameters
    ----------
    inputs : iterable of str or Path
        Each is a recording, a folder (scanned recursively for
        :data:`AUDIO_SUFFIXES`), a glob pattern (``**`` allowed), or a manifest
        ``.csv`` with a ``path`` column (see :func:`read_manifest`).

    Returns
    -------
    list of BatchItem
        In the order given; folders and patterns sorted by path; a file met
        twice is kept once (the first mention wins).

    Raises
    ------
    InputError
        An input does not exist, a pattern matches nothing, or nothing at all
        was found.
    """
    items: list[BatchItem] = []
    seen: set[str] = set()

    def add(item: BatchItem) -> None:
        key = str(Path(item.path).resolve())
        if key not in seen:
            seen.add(key)
            items.append(item)

    for raw in inputs:
        text = str(raw)
        path = Path(text)
        if path.is_dir():
            found = _scan_folder(path)
            if not found:
                raise InputError(text, "folder holds no recordings",
                                 f"check the folder; recognised files end in "
                                 f"{', '.join(AUDIO_SUFFIXES)}")
            for p in found:
                add(BatchItem(str(p)))
        elif path.is_file() and path.suffix.lower() == ".csv":
            for item in read_manifest(path):
                add(item)
        elif path.is_file():
            add(BatchItem(text))
        elif _GLOB_CHARS & set(text):
            matches = sorted(glob.glob(text, recursive=True))
            files = _drop_wfdb_signals([Path(m) for m in matches if Path(m).is_file()
                                        and Path(m).suffix.lower() in AUDIO_SUFFIXES])
            if not files:
                raise InputError(text, "pattern matches no recordings",
                                 "check the pattern (quote it so the shell leaves it alone)")
            for p in files:
                add(BatchItem(str(p)))
        else:
            raise InputError(text, "no such file, folder or pattern",
                             "check the path and the file name")
    if not items:
        raise InputError(None, "no recordings to analyse", "give folders, files or a manifest")
    return items


def read_manifest(path: str | Path) -> list[BatchItem]:
    """Read a manifest CSV: a ``path`` column plus any others.

    Rows are read by :func:`eddyphone.io.manifest.read_manifest` (relative paths
    taken from the manifest's folder, empty cells dropped). ``patient``, ``site``
    and ``posture`` are passed to the loader; columns named after
    :class:`~eddyphone.context.PatientContext` fields (``hematocrit``,
    ``age_years``, ...; ``states`` separated by ``;``) become the patient
    context; every other column is carried through to the output as text.

    Raises
    ------
    InputError
        No ``path`` column, no rows, or a non-numeric context value.
    """
    from eddyphone.io.manifest import read_manifest as read_rows
    from eddyphone.io.manifest import split_row

    return [BatchItem(*split_row(row, str(path))) for row in read_rows(path)]


def content_hash(path: str | Path) -> str:
    """SHA-256 of everything that decides a recording's samples and metadata.

    The file itself, its ``<stem>.meta.json`` sidecar if present and, for a WFDB
    header, the signal files of the same stem beside it.

    Raises
    ------
    OSError
        The file cannot be read.
    """
    path = Path(path)
    digest = hashlib.sha256()
    parts = [path]
    if path.suffix.lower() == ".hea":
        parts += [path.with_suffix(s) for s in _WFDB_SIGNAL_SUFFIXES]
    parts.append(path.with_name(path.stem + _SIDECAR_SUFFIX))
    for i, part in enumerate(parts):
        if i and not part.is_file():
            continue
        digest.update(f"\0{part.suffix.lower() if i else 'main'}\0".encode())
        with part.open("rb") as fh:
            while block := fh.read(_HASH_BLOCK):
                digest.update(block)
    return digest.hexdigest()


def _scan_folder(folder: Path) -> list[Path]:
    files = sorted(p for p in folder.rglob("*")
                   if p.suffix.lower() in AUDIO_SUFFIXES and p.is_file()
                   and not any(part.startswith(".") for part in p.relative_to(folder).parts))
    return _drop_wfdb_signals(files)


def _drop_wfdb_signals(files: list[Path]) -> list[Path]:
    """A ``.wav`` beside a ``.hea`` of the same stem is that record's signal: keep the header."""
    headers = {p.with_suffix("") for p in files if p.suffix.lower() == ".hea"}
    return [p for p in files if p.suffix.lower() == ".hea" or p.with_suffix("") not in headers]
