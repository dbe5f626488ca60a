"""Transient heart sounds: valve components of S1 and S2, S3, S4, clicks and snaps.

``S1a`` is the low-frequency onset of S1 (ventricular contraction before the valves
close), starting S1 a few ms before the mitral component.

Each component is a short vibration with a gamma-shaped envelope, a downward
frequency glide (valve and wall vibrations ring down as tension falls), a second
mode at a non-integer frequency ratio and a little band-limited noise. Its energy
lies exactly between its onset and ``onset + duration_s``, so the truth times are
exact.

Public functions
----------------
component
    Samples of one component.
add_component
    Add a component into a signal at an onset time; returns the exact times used.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Frequency glides (start, end) in Hz and second-mode ratios for each component,
#: chosen inside the bands of :mod:`eddyphone.physiology` (S1_BAND_HZ etc.).
TIMBRES = {
    "S1a": {"f_start": (25.0, 40.0), "f_end": (18.0, 26.0), "ratio": (1.6, 2.2)},
    "M1": {"f_start": (45.0, 80.0), "f_end": (30.0, 45.0), "ratio": (1.7, 2.6)},
    "T1": {"f_start": (40.0, 70.0), "f_end": (28.0, 40.0), "ratio": (1.7, 2.6)},
    "A2": {"f_start": (90.0, 160.0), "f_end": (50.0, 75.0), "ratio": (1.5, 2.2)},
    "P2": {"f_start": (70.0, 130.0), "f_end": (45.0, 65.0), "ratio": (1.5, 2.2)},
    "S3": {"f_start": (30.0, 50.0), "f_end": (20.0, 30.0), "ratio": (1.8, 2.4)},
    "S4": {"f_start": (28.0, 45.0), "f_end": (20.0, 28.0), "ratio": (1.8, 2.4)},
    "click": {"f_start": (160.0, 260.0), "f_end": (110.0, 170.0), "ratio": (1.4, 1.9)},
    "snap": {"f_start": (140.0, 240.0), "f_end": (100.0, 150.0), "ratio": (1.4, 1.9)},
}


@dataclass(frozen=True)
class Timbre:
    """The per-recording character of one component kind (drawn once per case)."""

    f_start_hz: float
    f_end_hz: float
    mode_ratio: float
    mode_gain: float
    noise_gain: float
    peak_fraction: float
    sharpness: float

    @classmethod
    def draw(cls, label: str, rng: np.random.Generator) -> Timbre:
        """Draw a timbre for component ``label`` (a key of :data:`TIMBRES`)."""
        spec = TIMBRES[label]
        return cls(
            f_start_hz=rng.uniform(*spec["f_start"]),
            f_end_hz=rng.uniform(*spec["f_end"]),
            mode_ratio=rng.uniform(*spec["ratio"]),
            mode_gain=rng.uniform(0.15, 0.5),
            noise_gain=rng.uniform(0.05, 0.3),
            peak_fraction=rng.uniform(0.2, 0.4),
            sharpness=rng.uniform(1.5, 4.0),
        )


def component(duration_s: float, fs: float, timbre: Timbre, rng: np.random.Generator,
              *, jitter: float = 0.08, pitch_scale: float = 1.0) -> np.ndarray:
    """Samples of one component, peak about 1, zero outside ``[0, duration_s)``.

    Parameters
    ----------
    duration_s : float
        Length of the component in s.
    fs : float
        Sample rate in Hz.
    timbre : Timbre
        Its character; ``jitter`` varies frequencies beat to beat by that fraction and
        ``pitch_scale`` scales them (slow drift over a recording).
    rng : numpy.random.Generator
        Source of beat-to-beat variation.
    """
    n = max(int(round(duration_s * fs)), 4)
    tau = np.arange(n) / fs
    u = tau / duration_s
    scale = pitch_scale * (1.0 + rng.uniform(-jitter, jitter))
    f0 = min(timbre.f_start_hz * scale, 0.45 * fs)
    f1 = min(timbre.f_end_hz * scale, 0.45 * fs)
    # gamma envelope peaking at peak_fraction, then a cosine taper to exactly zero
    k = timbre.sharpness
    p = timbre.peak_fraction * rng.uniform(0.85, 1.15)
    env = (u / p) ** k * np.exp(k * (1.0 - u / p))
    taper = np.where(u > 0.6, 0.5 * (1 + np.cos(np.pi * (u - 0.6) / 0.4)), 1.0)
    env *= taper
    # exponential glide f0 -> f1
    f = f0 * (f1 / f0) ** u
    phase = 2 * np.pi * np.cumsum(f) / fs + rng.uniform(0, 2 * np.pi)
    x = np.sin(phase)
    ratio = timbre.mode_ratio
    if ratio * max(f0, f1) < 0.45 * fs:
        x += timbre.mode_gain * np.sin(ratio * phase + rng.uniform(0, 2 * np.pi))
    if timbre.noise_gain > 0:
        w = rng.standard_normal(n)
        spec = np.fft.rfft(w)
        ff = np.fft.rfftfreq(n, 1.0 / fs)
        spec *= np.exp(-0.5 * (np.log2(np.maximum(ff, 1.0) / (0.5 * (f0 + f1))) / 0.7) ** 2)
        w = np.fft.irfft(spec, n)
        w /= w.std() + 1e-12
        x += timbre.noise_gain * w
    x *= env
    peak = np.abs(x).max()
    return x / peak if peak > 0 else x


def add_component(x: np.ndarray, fs: float, onset_s: float, duration_s: float,
                  amplitude: float, timbre: Timbre, rng: np.random.Generator,
                  t_origin_s: float = 0.0, pitch_scale: float = 1.0) -> tuple[float, float]:
    """Add a component to ``x`` (in place) and return its exact ``(start_s, end_s)``.

    ``t_origin_s`` is the time of sample 0 of ``x``. The onset is rounded to the
    sample grid and the returned times are those of the samples actually used.
    """
    i0 = int(round((onset_s - t_origin_s) * fs))
    y = amplitude * component(duration_s, fs, timbre, rng, pitch_scale=pitch_scale)
    i1 = i0 + len(y)
    a, b = max(i0, 0), min(i1, len(x))
    if b > a:
        x[a:b] += y[a - i0: b - i0]
    return t_origin_s + i0 / fs, t_origin_s + i1 / fs
