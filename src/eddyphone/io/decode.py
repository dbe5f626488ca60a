"""Decoding audio files to a 2-D float array (frames, channels)."""

from __future__ import annotations

import shutil
import struct
import subprocess
from pathlib import Path

import numpy as np

from eddyphone.errors import InputError

#: Extensions libsndfile (through soundfile) reads directly.
SOUNDFILE_EXTENSIONS = {".wav", ".wave", ".flac", ".ogg", ".oga", ".mp3", ".aif", ".aiff"}
#: Extensions decoded through an external ffmpeg, when the machine has it.
FFMPEG_EXTENSIONS = {".m4a", ".mp4", ".aac", ".wma", ".opus", ".webm", ".3gp", ".amr"}


def decode_audio(path: Path) -> tuple[np.ndarray, float, str, str]:
    """Decode ``path`` and return ``(frames x channels array, fs, format, subtype)``."""
    suffix = path.suffix.lower()
    if suffix in FFMPEG_EXTENSIONS:
        return _decode_with_ffmpeg(path)
    if suffix in {".wav", ".wave"}:
        _check_riff_complete(path)
    import soundfile as sf

    try:
        with sf.SoundFile(str(path)) as fh:  # one open for the description and the samples
            fs, fmt, subtype = fh.samplerate, fh.format, fh.subtype
            x = fh.read(dtype="float64", always_2d=True)
    except (RuntimeError, sf.LibsndfileError, TypeError, ValueError) as exc:
        raise InputError(
            str(path),
            f"not a readable audio file ({_short(exc)})",
            "check that it is a WAV, FLAC, OGG or MP3 recording and re-export it if it is damaged",
        ) from None
    return x, float(fs), fmt, subtype


def _decode_with_ffmpeg(path: Path) -> tuple[np.ndarray, float, str, str]:
    ffmpeg = shutil.which("ffmpeg")
    if ffmpeg is None:
        raise InputError(
            str(path),
            f"no decoder for {path.suffix} files on this machine",
            "install ffmpeg (e.g. 'apt-get install ffmpeg') or convert the file to WAV",
        )
    import io

    import soundfile as sf

    result = subprocess.run(
        [ffmpeg, "-v", "error", "-nostdin", "-i", str(path), "-f", "wav", "-acodec", "pcm_f32le",
         "-"],
        capture_output=True,
        check=False,
    )
    if result.returncode != 0 or not result.stdout:
        reason = result.stderr.decode(errors="replace").strip().splitlines()
        raise InputError(
            str(path),
            f"ffmpeg could not decode it ({reason[-1] if reason else 'no output'})",
            "check the file plays in a media player, or re-export it as WAV",
        )
    x, fs = sf.read(io.BytesIO(result.stdout), dtype="float64", always_2d=True)
    return x, float(fs), path.suffix.lstrip(".").upper(), "decoded by ffmpeg"


def _check_riff_complete(path: Path) -> None:
    """Raise if a RIFF/WAVE file's data chunk declares more bytes than the file holds."""
    with path.open("rb") as fh:
        head = fh.read(12)
        if len(head) < 12 or head[:4] != b"RIFF" or head[8:12] != b"WAVE":
            return  # not RIFF: leave it to the decoder to judge
        size = path.stat().st_size
        offset = 12
        while offset + 8 <= size:
            fh.seek(offset)
            chunk_id, chunk_size = struct.unpack("<4sI", fh.read(8))
            if chunk_id == b"data":
                available = size - offset - 8
                if chunk_size != 0xFFFFFFFF and chunk_size > available:
                    raise InputError(
                        str(path),
                        f"truncated: the header declares {chunk_size} bytes of audio but the "
                        f"file holds {available}",
                        "copy or export the recording again from its source",
                    )
                return
            offset += 8 + chunk_size + (chunk_size & 1)


def _short(exc: BaseException) -> str:
    text = str(exc).strip().splitlines()
    return text[0][:160] if text else type(exc).__name__
