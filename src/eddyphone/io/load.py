"""``load`` and ``from_array``: validated, resampled, single-channel recordings."""

from __future__ import annotations

import json
from collections.abc import Mapping
from pathlib import Path

import numpy as np

from eddyphone.errors import InputError
from eddyphone.recording import ANALYSIS_FS, Recording

#: Shortest recording accepted, in seconds (a few beats at 40 bpm).
MIN_DURATION_S = 3.0
#: Lowest and highest source rates accepted, in Hz.
MIN_FS_HZ = 1000.0
MAX_FS_HZ = 192000.0
#: Band whose energy picks the channel that carries the heart sounds, in Hz.
HEART_BAND_HZ = (25.0, 400.0)
#: Suffix of the optional metadata file beside a recording: ``<stem>.meta.json``.
SIDECAR_SUFFIX = ".meta.json"
_META_KEYS = ("site", "posture", "patient")


def load(
    path: str | Path,
    *,
    channel: int | None = None,
    site: str | None = None,
    posture: str | None = None,
    patient: str | None = None,
    metadata: Mapping[str, object] | None = None,
) -> Recording:
    """Load a stethoscope recording and return it mono at ``ANALYSIS_FS``.

    Parameters
    ----------
    path : str or Path
        WAV, FLAC, OGG or MP3 (through libsndfile), M4A and other compressed
        formats (through ffmpeg, when installed), or a WFDB header ``.hea``.
    channel : int, optional
        Channel to use; by default the one with the most heart-band energy.
    site, posture, patient, metadata
        Override what the sidecar ``<stem>.meta.json`` (if present) says.

    Raises
    ------
    InputError
        Missing, unreadable, truncated, empty, too short, silent or non-finite input,
        or a rate below 1 kHz; the message names the file and the remedy.
    """
    path = Path(path)
    source = str(path)
    if not path.exists():
        raise InputError(source, "file not found", "check the path and the file name")
    if path.is_dir():
        raise InputError(source, "is a folder, not a recording",
                         "pass the recording files, or use 'eddyphone batch' for a folder")
    if path.stat().st_size == 0:
        raise InputError(source, "the file is empty (0 bytes)", "export the recording again")
    if path.suffix.lower() == ".hea":
        frames, fs, fmt, subtype = _load_wfdb(path)
    else:
        from eddyphone.io.decode import decode_audio

        frames, fs, fmt, subtype = decode_audio(path)
    meta = _read_sidecar(path)
    meta.update(metadata or {})
    for key, value in (("site", site), ("posture", posture), ("patient", patient)):
        if value is not None:
            meta[key] = value
    return _build(frames, fs, source=source, fmt=fmt, subtype=subtype, channel=channel, meta=meta)


def from_array(
    x: np.ndarray,
    fs: float,
    *,
    source: str = "<array>",
    channel: int | None = None,
    site: str | None = None,
    posture: str | None = None,
    patient: str | None = None,
    metadata: Mapping[str, object] | None = None,
) -> Recording:
    """Validate samples held in memory (1-D, or frames x channels) and resample them."""
    frames = np.asarray(x, dtype=np.float64)
    if frames.ndim == 1:
        frames = frames[:, None]
    if frames.ndim != 2:
        raise InputError(source, f"samples have {frames.ndim} dimensions",
                         "pass a 1-D array or a (frames, channels) array")
    meta = dict(metadata or {})
    for key, value in (("site", site), ("posture", posture), ("patient", patient)):
        if value is not None:
            meta[key] = value
    return _build(frames, float(fs), source=source, fmt="array", subtype=str(np.asarray(x).dtype),
                  channel=channel, meta=meta)


def _build(frames: np.ndarray, fs: float, *, source: str, fmt: str, subtype: str,
           channel: int | None, meta: dict) -> Recording:
    if frames.size == 0 or frames.shape[0] == 0:
        raise InputError(source, "holds no samples", "export the recording again")
    if not np.isfinite(fs) or fs < MIN_FS_HZ:
        raise InputError(source, f"sample rate {fs:g} Hz is below the {MIN_FS_HZ:g} Hz minimum",
                         "record or export at 1 kHz or more (4 kHz or more is best)")
    if fs > MAX_FS_HZ:
        raise InputError(source, f"sample rate {fs:g} Hz is above the {MAX_FS_HZ:g} Hz maximum",
                         "resample the file to 48 kHz or less")
    duration = frames.shape[0] / fs
    if duration < MIN_DURATION_S:
        raise InputError(source, f"only {duration:.2f} s long",
                         f"record at least {MIN_DURATION_S:g} s (10 s or more is best)")
    if not np.all(np.isfinite(frames)):
        bad = int(np.count_nonzero(~np.isfinite(frames)))
        raise InputError(source, f"{bad} samples are not finite numbers (NaN or infinity)",
                         "re-export the recording; the file is damaged")
    n_channels = frames.shape[1]
    if channel is None:
        channel = _loudest_heart_channel(frames, fs) if n_channels > 1 else 0
    elif not 0 <= channel < n_channels:
        raise InputError(source, f"channel {channel} requested but the file has {n_channels}",
                         f"choose a channel from 0 to {n_channels - 1}")
    x = frames[:, channel]
    x = x - 0.0  # copy out of the frames array
    if _silent(x):
        raise InputError(source, "the signal is silent or constant",
                         "check the stethoscope was on and in contact, and record again")
    if fs != ANALYSIS_FS:
        import soxr

        x = soxr.resample(x, fs, ANALYSIS_FS, quality="HQ")
    return Recording(
        x=np.ascontiguousarray(x, dtype=np.float64),
        fs=ANALYSIS_FS,
        source=source,
        channel=int(channel),
        n_channels=int(n_channels),
        original_fs=float(fs),
        format=fmt,
        subtype=subtype,
        site=_opt_str(meta.get("site")),
        posture=_opt_str(meta.get("posture")),
        patient=_opt_str(meta.get("patient")),
        metadata={k: v for k, v in meta.items() if k not in _META_KEYS},
    )


def _silent(x: np.ndarray, floor: float = 1e-7) -> bool:
    """Peak-to-peak at most ``floor``, or standard deviation below it: nothing was recorded."""
    span = float(np.ptp(x))
    if span <= floor:
        return True
    # The two extreme samples alone give a standard deviation of at least
    # span / sqrt(2 n); well above the floor, the full computation is not needed.
    if span >= 2.0 * floor * np.sqrt(2.0 * len(x)):
        return False
    return float(np.std(x)) < floor


def _loudest_heart_channel(frames: np.ndarray, fs: float) -> int:
    from scipy import signal

    high = min(HEART_BAND_HZ[1], 0.45 * fs)
    sos = signal.butter(4, [HEART_BAND_HZ[0], high], btype="bandpass", fs=fs, output="sos")
    energy = np.sum(signal.sosfilt(sos, frames, axis=0) ** 2, axis=0)
    return int(np.argmax(energy))


def _load_wfdb(path: Path) -> tuple[np.ndarray, float, str, str]:
    from eddyphone.io.wfdb_header import parse_header, read_dat

    header = parse_header(path)
    files = {s.file_name for s in header.signals}
    if len(files) != 1:
        raise InputError(str(path), "signals are spread over several files",
                         "convert the record to a single WAV file")
    signal_path = path.parent / files.pop()
    if not signal_path.exists():
        raise InputError(str(path), f"its signal file {signal_path.name} is missing",
                         "put the signal file beside the header")
    if signal_path.suffix.lower() in {".wav", ".wave", ".flac"}:
        from eddyphone.io.decode import decode_audio

        frames, fs, _, subtype = decode_audio(signal_path)
        if abs(fs - header.fs) > 0.5:
            raise InputError(str(path), f"header says {header.fs:g} Hz but "
                             f"{signal_path.name} is {fs:g} Hz", "correct the header")
        return frames, fs, "WFDB+WAV", subtype
    frames = read_dat(signal_path, header)
    peak = np.max(np.abs(frames)) or 1.0
    return frames / peak, header.fs, "WFDB", f"format {header.signals[0].fmt}"


def _read_sidecar(path: Path) -> dict:
    sidecar = path.with_name(path.stem + SIDECAR_SUFFIX)
    if not sidecar.exists():
        return {}
    try:
        data = json.loads(sidecar.read_text(encoding="utf-8"))
    except (OSError, ValueError) as exc:
        raise InputError(str(sidecar), f"metadata file is not valid JSON ({exc})",
                         "fix or remove the sidecar file") from None
    if not isinstance(data, dict):
        raise InputError(str(sidecar), "metadata file must hold a JSON object",
                         'write it as {"site": "...", "posture": "..."}')
    return data


def _opt_str(value: object) -> str | None:
    return None if value is None or value == "" else str(value)
