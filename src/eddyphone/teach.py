"""Teaching renders: audio an educator plays to a class.

Every render starts from the conditioned signal (band-passed, hum removed) and
the segmentation of an :class:`~eddyphone.pipeline.Analysis`.

Public API
----------
time_stretch(x, fs, *, speed=0.5) -> ndarray
    Slower (or faster) playback with the pitch kept, by a phase-vocoder time stretch.
gain_curve(n, fs, intervals, *, gain_db, ramp_s=0.01) -> ndarray
    Smooth gain: ``gain_db`` inside the intervals, 0 dB outside.
isolate_murmur(x, fs, segments, *, attenuation_db=30.0) -> ndarray
    S1 and S2 attenuated in their segments, so what fills systole and diastole stands out.
heart_sounds_only(x, fs, segments, *, attenuation_db=30.0) -> ndarray
    Systole and diastole attenuated: S1 and S2 alone.
choose_beat(beats) -> Beat
    The complete beat with the highest confidence.
loop_beat(x, fs, beat, *, repeats=8) -> ndarray
    One cardiac cycle repeated seamlessly.
wav_bytes(x, fs, *, out_fs=8000.0) -> bytes
    A 16-bit PCM WAV, peak-normalised, at a rate every player accepts.
render_all(analysis, out_dir, *, stem, speed=0.5, ...) -> dict[str, Path]
    All four renders as WAV files.
"""

from __future__ import annotations

import io
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from eddyphone.errors import ParameterError, QualityError

#: Slowest and fastest playback speed accepted (1.0 = as recorded).
SPEED_RANGE = (0.1, 4.0)
#: Window of the phase vocoder in seconds: long enough to resolve heart-sound
#: and murmur frequencies (bins of 1/0.128 s = 7.8 Hz), short enough to keep S1
#: and S2 crisp when slowed.
STRETCH_WINDOW_S = 0.128
#: Rate of the WAV files written, in Hz (the analysis rate doubled, accepted by
#: every browser and media player).
WAV_FS = 8000.0
#: Peak level of written audio (-1 dB re full scale).
WAV_PEAK = 10 ** (-1.0 / 20)

RENDER_NAMES = ("slowed", "murmur_only", "heart_sounds_only", "beat_loop")


def time_stretch(x: np.ndarray, fs: float, *, speed: float = 0.5,
                 window_s: float = STRETCH_WINDOW_S) -> np.ndarray:
    """Change the playback speed while keeping the pitch (phase-vocoder time stretch).

    Parameters
    ----------
    x : ndarray
        Samples.
    fs : float
        Sample rate in Hz.
    speed : float
        Playback speed: 0.5 plays at half speed (twice as long), 2.0 at double speed.
    window_s : float
        Analysis window of the phase vocoder in seconds (hop a quarter of it).

    Returns
    -------
    ndarray
        ``round(len(x) / speed)`` samples at the same rate ``fs``.
    """
    import librosa

    if not SPEED_RANGE[0] <= speed <= SPEED_RANGE[1]:
        raise ParameterError(f"speed={speed!r} is outside {SPEED_RANGE[0]}–{SPEED_RANGE[1]}; "
                             "use e.g. 0.5 for half speed")
    x = np.asarray(x, dtype=float)
    n_fft = int(2 ** np.ceil(np.log2(max(16, window_s * fs))))
    if len(x) < n_fft:
        raise ParameterError(f"x has {len(x)} samples, fewer than one {n_fft}-sample window; "
                             "give a longer excerpt")
    y = librosa.effects.time_stretch(x.astype(np.float32), rate=float(speed), n_fft=n_fft,
                                     hop_length=n_fft // 4)
    target = int(round(len(x) / speed))
    y = np.asarray(y, dtype=float)
    return np.pad(y, (0, max(0, target - len(y))))[:target]


def gain_curve(n: int, fs: float, intervals: Sequence[tuple[float, float]], *,
               gain_db: float, ramp_s: float = 0.01) -> np.ndarray:
    """Linear gain per sample: ``gain_db`` inside ``intervals`` (seconds), 1 outside,
    with raised-cosine ramps of ``ramp_s`` centred on each edge (no clicks)."""
    inside = np.zeros(n)
    for a, b in intervals:
        i, j = max(0, int(round(a * fs))), min(n, int(round(b * fs)))
        if j > i:
            inside[i:j] = 1.0
    r = max(1, int(round(ramp_s * fs)))
    kernel = np.hanning(r + 2)[1:-1]
    kernel /= kernel.sum()
    smooth = np.convolve(inside, kernel, mode="same")
    return 10 ** (gain_db * smooth / 20)


def _intervals(segments: Sequence, labels: tuple[str, ...]) -> list[tuple[float, float]]:
    out = [(s.start_s, s.end_s) for s in segments if s.label in labels]
    if not out:
        raise QualityError(None, f"no {'/'.join(labels)} segments were found",
                           "this render needs a segmented recording; check the "
                           "segmentation figure or record a cleaner stretch")
    return out


def isolate_murmur(x: np.ndarray, fs: float, segments: Sequence, *,
                   attenuation_db: float = 30.0, ramp_s: float = 0.01) -> np.ndarray:
    """Attenuate S1 and S2 by ``attenuation_db`` in their segments, leaving systole
    and diastole (and any murmur in them) as they were."""
    _check_attenuation(attenuation_db)
    return np.asarray(x, dtype=float) * gain_curve(
        len(x), fs, _intervals(segments, ("S1", "S2")), gain_db=-attenuation_db, ramp_s=ramp_s)


def heart_sounds_only(x: np.ndarray, fs: float, segments: Sequence, *,
                      attenuation_db: float = 30.0, ramp_s: float = 0.01) -> np.ndarray:
    """Attenuate systole and diastole by ``attenuation_db``: S1 and S2 alone."""
    _check_attenuation(attenuation_db)
    return np.asarray(x, dtype=float) * gain_curve(
        len(x), fs, _intervals(segments, ("systole", "diastole")), gain_db=-attenuation_db,
        ramp_s=ramp_s)


def _check_attenuation(attenuation_db: float) -> None:
    if not 0.0 <= attenuation_db <= 120.0:
        raise ParameterError(f"attenuation_db={attenuation_db!r} must lie in 0–120 dB")


def choose_beat(beats: Sequence, index: int | None = None) -> Any:
    """Beat ``index`` (as in the beats table), or the most confident complete beat."""
    complete = [b for b in beats if b.next_s1_onset_s is not None]
    if index is not None:
        for b in beats:
            if b.index == index:
                if b.next_s1_onset_s is None:
                    raise ParameterError(f"beat {index} has no following S1, so its cycle is "
                                         "incomplete; choose another beat")
                return b
        raise ParameterError(f"beat {index} is not in the beats table (0–{len(beats) - 1})")
    if not complete:
        raise QualityError(None, "no complete beat (S1 to the next S1) was found",
                           "record a longer or cleaner stretch")
    return max(complete, key=lambda b: b.confidence)


def loop_beat(x: np.ndarray, fs: float, beat: Any, *, repeats: int = 8,
              lead_s: float = 0.04, crossfade_s: float = 0.015) -> np.ndarray:
    """One cycle, from just before its S1 to just before the next S1, repeated.

    The cut falls ``lead_s`` before each S1, in late diastole, and successive
    copies overlap by ``crossfade_s`` with equal-power fades, so the loop has no
    click and keeps the beat's own rate.
    """
    if not 1 <= repeats <= 1000:
        raise ParameterError(f"repeats={repeats!r} must lie in 1–1000")
    if beat.next_s1_onset_s is None:
        raise ParameterError(f"beat {beat.index} is incomplete (no following S1)")
    x = np.asarray(x, dtype=float)
    a = max(0, int(round((beat.s1_onset_s - lead_s) * fs)))
    b = min(len(x), int(round((beat.next_s1_onset_s - lead_s) * fs)))
    f = max(1, int(round(crossfade_s * fs)))
    cycle = x[a: min(len(x), b + f)]
    period = b - a
    out = np.zeros(period * repeats + f)
    ramp = np.sin(0.5 * np.pi * (np.arange(f) + 0.5) / f)
    for k in range(repeats):
        piece = cycle.copy()
        if k > 0:
            piece[:f] *= ramp
        if k < repeats - 1 and len(piece) > period:
            piece[period:] *= ramp[::-1][: len(piece) - period]
        elif k == repeats - 1:
            piece = piece[:period]
        out[k * period: k * period + len(piece)] += piece
    return out[: period * repeats]


def wav_bytes(x: np.ndarray, fs: float, *, out_fs: float = WAV_FS,
              peak: float = WAV_PEAK) -> bytes:
    """16-bit PCM WAV of ``x`` resampled to ``out_fs`` and scaled to ``peak`` of full scale."""
    import soundfile as sf
    import soxr

    y = np.asarray(x, dtype=float)
    if out_fs != fs:
        y = soxr.resample(y, fs, out_fs)
    top = float(np.max(np.abs(y))) if y.size else 0.0
    if top > 0:
        y = y * (peak / top)
    buffer = io.BytesIO()
    sf.write(buffer, y, int(round(out_fs)), format="WAV", subtype="PCM_16")
    return buffer.getvalue()


def write_wav(path: str | Path, x: np.ndarray, fs: float, *, out_fs: float = WAV_FS) -> Path:
    """Write ``x`` as a 16-bit WAV at ``out_fs`` (atomic)."""
    from eddyphone.export import atomic_write_bytes

    return atomic_write_bytes(Path(path), wav_bytes(x, fs, out_fs=out_fs))


def render_names(stem: str, *, speed: float = 0.5) -> dict[str, str]:
    """File names of the four renders."""
    return {
        "slowed": f"{stem}.teach.slowed-{speed:g}x.wav",
        "murmur_only": f"{stem}.teach.murmur-only.wav",
        "heart_sounds_only": f"{stem}.teach.heart-sounds-only.wav",
        "beat_loop": f"{stem}.teach.beat-loop.wav",
    }


def render_signals(analysis: Any, *, speed: float = 0.5, attenuation_db: float = 30.0,
                   repeats: int = 8, beat: int | None = None,
                   only: Sequence[str] = RENDER_NAMES) -> tuple[dict[str, np.ndarray], dict]:
    """The renders as arrays at the analysis rate, and the reason for any left out."""
    x, fs = analysis.conditioned.x, analysis.conditioned.fs
    seg = analysis.segmentation
    segments = seg.segments if seg is not None else ()
    beats = seg.beats if seg is not None else ()
    unknown = [n for n in only if n not in RENDER_NAMES]
    if unknown:
        raise ParameterError(f"unknown renders {unknown}; choose from {', '.join(RENDER_NAMES)}")
    out: dict[str, np.ndarray] = {}
    skipped: dict[str, str] = {}
    makers = {
        "slowed": lambda: time_stretch(x, fs, speed=speed),
        "murmur_only": lambda: isolate_murmur(x, fs, segments, attenuation_db=attenuation_db),
        "heart_sounds_only": lambda: heart_sounds_only(x, fs, segments,
                                                       attenuation_db=attenuation_db),
        "beat_loop": lambda: loop_beat(x, fs, choose_beat(beats, beat), repeats=repeats),
    }
    for name in only:
        try:
            out[name] = makers[name]()
        except QualityError as exc:
            skipped[name] = exc.problem
    return out, skipped


def render_all(analysis: Any, out_dir: str | Path, *, stem: str, speed: float = 0.5,
               attenuation_db: float = 30.0, repeats: int = 8, beat: int | None = None,
               only: Sequence[str] = RENDER_NAMES) -> dict[str, Path]:
    """Write the teaching renders of ``analysis`` as WAV files in ``out_dir``.

    Returns
    -------
    dict
        Render name (``slowed``, ``murmur_only``, ``heart_sounds_only``, ``beat_loop``)
        to path; renders that need a segmentation are left out when there is none.
    """
    signals, _ = render_signals(analysis, speed=speed, attenuation_db=attenuation_db,
                                repeats=repeats, beat=beat, only=only)
    names = render_names(stem, speed=speed)
    fs = analysis.conditioned.fs
    out_dir = Path(out_dir)
    return {k: write_wav(out_dir / names[k], v, fs) for k, v in signals.items()}
