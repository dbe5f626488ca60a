"""Per-beat window measures: band powers across the systolic and diastolic windows.

The systolic window runs from the end of S1 to the start of S2, the diastolic
window from the end of S2 to the next S1 (trimmed by a guard at each end). Each
window is cut into equal time-normalised bins, so beats of different length line
up; every bin gets its power in each analysis band. Powers are then expressed
relative to the quiet parts of the same beat (a per-beat, per-band reference), so
breathing, room noise and gain changes that raise a whole beat cancel.

Public functions
----------------
spectrogram(x, fs, frame_s, hop_s) -> Spectrogram
beat_windows(beat, guard_s) -> ((a, b) | None, (a, b) | None)
beat_profiles(spec, beats, config) -> Profiles
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from eddyphone.findings.config import ANALYSIS_BANDS_HZ, FindingsConfig

#: Shortest window measured (s) with the default 32-ms frames: shorter ones would be
#: dominated by frames reaching into S1 or S2 (:func:`analysis_frame_s` shortens the
#: frames at fast rates, and the shortest window with them: 1.5 frames).
MIN_WINDOW_S = 0.05

#: Window indices in :class:`Profiles` arrays.
SYS, DIA = 0, 1
#: The windows' phase names, by index.
PHASES = ("systolic", "diastolic")


@dataclass(frozen=True, eq=False)
class Spectrogram:
    """Short-time power spectrum.

    Attributes
    ----------
    t : ndarray
        Frame centre times in s.
    f : ndarray
        Frequencies in Hz.
    power : ndarray, shape (frames, freqs)
        Power per frame and frequency (arbitrary units, same for the whole record).
    band_power : ndarray, shape (bands, frames)
        Power summed over each band of ``bands_hz``.
    bands_hz : tuple of (low, high)
    """

    t: np.ndarray
    f: np.ndarray
    power: np.ndarray
    band_power: np.ndarray
    bands_hz: tuple[tuple[float, float], ...]


def spectrogram(x: np.ndarray, fs: float, *, frame_s: float = 0.032, hop_s: float = 0.004,
                bands_hz: Sequence[tuple[float, float]] = ANALYSIS_BANDS_HZ) -> Spectrogram:
    """Hann-windowed short-time power spectrum and band powers.

    Parameters
    ----------
    x : ndarray
        Samples (conditioned).
    fs : float
        Sample rate in Hz.
    frame_s, hop_s : float
        Frame length and hop in s.
    bands_hz : sequence of (low, high)
        Bands to sum.

    Returns
    -------
    Spectrogram
    """
    x = np.asarray(x, dtype=float)
    n = max(16, int(round(frame_s * fs)))
    hop = max(1, int(round(hop_s * fs)))
    if len(x) < n:
        x = np.pad(x, (0, n - len(x)))
    n_frames = 1 + (len(x) - n) // hop
    idx = np.arange(n)[None, :] + hop * np.arange(n_frames)[:, None]
    win = np.hanning(n)
    spec = np.fft.rfft(x[idx] * win, axis=1)
    power = (spec.real**2 + spec.imag**2).astype(np.float32) / float(np.sum(win**2))
    f = np.fft.rfftfreq(n, 1.0 / fs)
    t = (hop * np.arange(n_frames) + n / 2.0) / fs
    bands = tuple((float(lo), float(hi)) for lo, hi in bands_hz)
    bp = np.stack([power[:, (f >= lo) & (f < min(hi, fs / 2))].sum(axis=1) for lo, hi in bands])
    return Spectrogram(t=t, f=f, power=power, band_power=bp.astype(float), bands_hz=bands)


def beat_windows(beat, guard_s: float, min_window_s: float | None = None
                 ) -> tuple[tuple[float, float] | None, tuple[float, float] | None]:
    """Systolic and diastolic analysis windows of a beat, trimmed by ``guard_s``.

    The guard is at most 15 % of the window at each end (short systoles at fast
    rates). A window shorter than ``min_window_s`` (default :data:`MIN_WINDOW_S`)
    after trimming, or a missing diastole (no next S1), gives None.
    """
    shortest = MIN_WINDOW_S if min_window_s is None else min_window_s
    def trim(a: float, b: float) -> tuple[float, float]:
        g = min(guard_s, 0.15 * max(b - a, 0.0))
        return a + g, b - g

    sys = trim(beat.s1_offset_s, beat.s2_onset_s)
    nxt = getattr(beat, "next_s1_onset_s", None)
    dia = None if nxt is None else trim(beat.s2_offset_s, nxt)
    ok = [w if w is not None and w[1] - w[0] >= shortest else None for w in (sys, dia)]
    return ok[0], ok[1]


def _bin_edges_idx(t: np.ndarray, a: float, b: float, n_bins: int) -> np.ndarray:
    edges = np.linspace(a, b, n_bins + 1)
    idx = np.searchsorted(t, edges)
    # every bin gets at least one frame (very short windows)
    for k in range(n_bins):
        if idx[k + 1] <= idx[k]:
            idx[k + 1] = min(idx[k] + 1, len(t))
    return idx


def _binned(values: np.ndarray, idx: np.ndarray) -> np.ndarray:
    """Mean of ``values[..., i0:i1]`` for consecutive index pairs (last axis)."""
    c = np.concatenate([np.zeros(values.shape[:-1] + (1,)), np.cumsum(values, axis=-1)],
                       axis=-1)
    lo, hi = idx[:-1], np.maximum(idx[1:], idx[:-1] + 1)
    hi = np.minimum(hi, values.shape[-1])
    lo = np.minimum(lo, hi - 1)
    return (c[..., hi] - c[..., lo]) / (hi - lo)


@dataclass(frozen=True, eq=False)
class Profiles:
    """Band powers across the windows of every usable beat.

    Attributes
    ----------
    beat_index : ndarray of int
        ``Beat.index`` of each row.
    windows_s : ndarray, shape (beats, 2, 2)
        Start and end (s) of the systolic and diastolic windows (trimmed).
    guard_s : ndarray, shape (beats, 2)
        What was trimmed from each end of each window (s).
    power : ndarray, shape (beats, 2, bands, bins)
        Mean band power per bin.
    reference : ndarray, shape (beats, bands)
        Per-beat reference (the quiet parts), see ``FindingsConfig.reference_percentile``.
    s1_power, s2_power : ndarray, shape (beats, bands)
        Mean band power over the S1 and S2 segments.
    """

    beat_index: np.ndarray
    windows_s: np.ndarray
    guard_s: np.ndarray
    power: np.ndarray
    reference: np.ndarray
    s1_power: np.ndarray
    s2_power: np.ndarray

    @property
    def n_beats(self) -> int:
        """Number of beats measured."""
        return len(self.beat_index)

    @property
    def ratio(self) -> np.ndarray:
        """Power relative to each beat's reference, shape (beats, 2, bands, bins)."""
        return self.power / self.reference[:, None, :, None]


def _mean_between(spec: Spectrogram, a: float, b: float) -> np.ndarray:
    i0, i1 = np.searchsorted(spec.t, [a, b])
    if i1 <= i0:
        i0 = min(max(int(np.searchsorted(spec.t, 0.5 * (a + b))), 0), len(spec.t) - 1)
        i1 = i0 + 1
    return spec.band_power[:, i0:i1].mean(axis=1)


def analysis_frame_s(beats: Sequence, frame_s: float) -> float:
    """Frame length for a recording: ``frame_s``, shortened at fast rates so that
    the median systolic window holds at least three frames (never below 12 ms)."""
    sys = [b.s2_onset_s - b.s1_offset_s for b in beats]
    if not sys:
        return frame_s
    return float(np.clip(np.median(sys) / 3.0, 0.012, frame_s))


def beat_profiles(spec: Spectrogram, beats: Sequence, config: FindingsConfig,
                  *, min_window_s: float | None = None) -> Profiles:
    """Measure every beat that has both windows.

    Parameters
    ----------
    spec : Spectrogram
        Of the conditioned recording.
    beats : sequence of Beat
        From the segmentation (``eddyphone.segment.Beat`` or anything with the
        same attributes).
    config : FindingsConfig

    Returns
    -------
    Profiles
    """
    n_bins = config.bins_per_window
    n_bands = spec.band_power.shape[0]
    rows, wins, guards, pw, s1p, s2p = [], [], [], [], [], []
    for bt in beats:
        if getattr(bt, "confidence", 1.0) < config.min_beat_confidence:
            continue
        sys, dia = beat_windows(bt, config.guard_s, min_window_s)
        if sys is None or dia is None:
            continue
        if dia[1] > spec.t[-1] or sys[0] < spec.t[0]:
            continue
        p = np.empty((2, n_bands, n_bins))
        for w, (a, b) in enumerate((sys, dia)):
            idx = _bin_edges_idx(spec.t, a, b, n_bins)
            p[w] = _binned(spec.band_power, idx)
        rows.append(int(bt.index))
        wins.append((sys, dia))
        guards.append((sys[0] - bt.s1_offset_s, dia[0] - bt.s2_offset_s))
        pw.append(p)
        s1p.append(_mean_between(spec, bt.s1_onset_s, bt.s1_offset_s))
        s2p.append(_mean_between(spec, bt.s2_onset_s, bt.s2_offset_s))
    if not rows:
        empty = np.zeros((0, n_bands))
        return Profiles(np.zeros(0, dtype=int), np.zeros((0, 2, 2)), np.zeros((0, 2)),
                        np.zeros((0, 2, n_bands, n_bins)), empty, empty, empty)
    power = np.maximum(np.array(pw), 1e-30)
    flat = power.transpose(0, 2, 1, 3).reshape(len(rows), n_bands, 2 * n_bins)
    ref = np.percentile(flat, config.reference_percentile, axis=2)
    return Profiles(np.array(rows), np.array(wins, dtype=float), np.array(guards, dtype=float),
                    power,
                    np.maximum(ref, 1e-30), np.array(s1p), np.array(s2p))
