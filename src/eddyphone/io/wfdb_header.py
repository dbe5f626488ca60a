"""Reading a WFDB-style plain-text header (``.hea``) and the signal it points at.

Only the parts research heart-sound datasets use are supported: a single-segment
record whose signal file is a ``.wav``, or a binary ``.dat`` in WFDB format
16, 24, 32, 80 or 212.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from eddyphone.errors import InputError

_REMEDY = "check the .hea file against the WFDB header format and that its signal file is beside it"


@dataclass(frozen=True)
class WfdbSignal:
    """One signal line of a WFDB header."""

    file_name: str
    fmt: str
    gain: float
    baseline: int
    units: str
    description: str


@dataclass(frozen=True)
class WfdbHeader:
    """The record line and signal lines of a WFDB header."""

    record: str
    n_signals: int
    fs: float
    n_samples: int | None
    signals: tuple[WfdbSignal, ...]
    comments: tuple[str, ...]


def parse_header(path: Path) -> WfdbHeader:
    """Parse the header at ``path``."""
    try:
        text = path.read_text(encoding="utf-8", errors="replace")
    except OSError as exc:
        raise InputError(str(path), f"cannot read the header ({exc.strerror})", _REMEDY) from None
    lines = [ln.strip() for ln in text.splitlines() if ln.strip()]
    comments = tuple(ln.lstrip("#").strip() for ln in lines if ln.startswith("#"))
    body = [ln for ln in lines if not ln.startswith("#")]
    if not body:
        raise InputError(str(path), "the header is empty", _REMEDY)
    fields = body[0].split()
    try:
        n_signals = int(fields[1])
        fs = float(fields[2].split("/")[0]) if len(fields) > 2 else 250.0
        n_samples = int(fields[3]) if len(fields) > 3 else None
    except (IndexError, ValueError):
        raise InputError(str(path), f"malformed record line {body[0]!r}", _REMEDY) from None
    if "/" in fields[0]:
        raise InputError(str(path), "multi-segment WFDB records are not supported",
                         "convert the record to a single-segment record or to WAV")
    signals = tuple(_parse_signal(path, ln) for ln in body[1:1 + n_signals])
    if len(signals) != n_signals:
        raise InputError(str(path), f"declares {n_signals} signals but lists {len(signals)}",
                         _REMEDY)
    return WfdbHeader(fields[0], n_signals, fs, n_samples, signals, comments)


def _parse_signal(path: Path, line: str) -> WfdbSignal:
    parts = line.split()
    if len(parts) < 2:
        raise InputError(str(path), f"malformed signal line {line!r}", _REMEDY)
    fmt = parts[1].split("x")[0].split(":")[0].split("+")[0]
    gain, baseline, units = 200.0, 0, "mV"
    if len(parts) > 2:
        spec = parts[2]
        if "/" in spec:
            spec, units = spec.split("/", 1)
        if "(" in spec:
            spec, base = spec.rstrip(")").split("(")
            baseline = int(base)
        try:
            gain = float(spec) or 200.0
        except ValueError:
            raise InputError(str(path), f"malformed gain {parts[2]!r}", _REMEDY) from None
    description = " ".join(parts[8:]) if len(parts) > 8 else ""
    return WfdbSignal(parts[0], fmt, gain, baseline, units, description)


def read_dat(path: Path, header: WfdbHeader) -> np.ndarray:
    """Read a WFDB binary signal file into a (frames, channels) float array in physical units."""
    fmts = {s.fmt for s in header.signals}
    if len(fmts) != 1:
        raise InputError(str(path), f"mixed signal formats {sorted(fmts)}",
                         "convert the record to WAV")
    fmt = fmts.pop()
    raw = np.fromfile(path, dtype=np.uint8)
    n = header.n_signals
    if fmt == "16":
        digital = raw[: raw.size // 2 * 2].view("<i2").astype(np.int64)
    elif fmt == "32":
        digital = raw[: raw.size // 4 * 4].view("<i4").astype(np.int64)
    elif fmt == "24":
        b = raw[: raw.size // 3 * 3].reshape(-1, 3).astype(np.int64)
        digital = b[:, 0] | (b[:, 1] << 8) | (b[:, 2] << 16)
        digital = np.where(digital >= 1 << 23, digital - (1 << 24), digital)
    elif fmt == "80":
        digital = raw.astype(np.int64) - 128
    elif fmt == "212":
        b = raw[: raw.size // 3 * 3].reshape(-1, 3).astype(np.int64)
        first = b[:, 0] | ((b[:, 1] & 0x0F) << 8)
        second = b[:, 2] | ((b[:, 1] & 0xF0) << 4)
        digital = np.column_stack([first, second]).ravel()
        digital = np.where(digital >= 2048, digital - 4096, digital)
    else:
        raise InputError(str(path), f"WFDB signal format {fmt} is not supported",
                         "convert the record to WAV or to WFDB format 16")
    frames = digital.size // n
    if frames == 0:
        raise InputError(str(path), "the signal file holds no samples", _REMEDY)
    if header.n_samples and frames < header.n_samples:
        raise InputError(
            str(path),
            f"truncated: the header declares {header.n_samples} samples, the file holds {frames}",
            "copy the record again from its source",
        )
    digital = digital[: frames * n].reshape(frames, n)
    gains = np.array([s.gain for s in header.signals])
    baselines = np.array([s.baseline for s in header.signals])
    return (digital - baselines) / gains
