"""Conditioning: band-pass, spike suppression, mains-hum removal, level normalisation.

Public functions
----------------
bandpass(x, fs, band_hz, order)  zero-phase Butterworth band-pass
bandpass_sos(fs, band_hz, order) the designed filter, for inspection
zero_phase(sos, zi, x, padlen)   forward-backward filtering (as scipy.signal.sosfiltfilt)
welch_psd(x, fs, nperseg)        averaged periodogram (as scipy.signal.welch)
percentiles(a, q)                np.percentile (linear) by one partial sort
median(a)                        np.median of a 1-D array, the same way
trimmed_mean(values, proportion) mean along the first axis without the extremes
hann_window(n)                   periodic Hann window, cached and read-only
despike(x, fs, ...)              suppress friction and handling spikes
detect_hum(x, fs)                mains-hum fundamental (50/60 Hz) or None
remove_hum(x, fs, hum_hz, ...)   zero-phase notches at the hum and its harmonics
normalise(x)                     unit RMS
condition(x, fs, config)         all of the above in order -> Conditioned
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numba
import numpy as np
import scipy.fft
from scipy import signal

from eddyphone.errors import ParameterError


@dataclass(frozen=True)
class ConditionConfig:
    """Conditioning settings.

    Attributes
    ----------
    band_hz : (float, float)
        Pass band. 25–900 Hz keeps S1, S2, extra sounds and the high-pitched
        part of murmurs while dropping movement and breathing rumble below
        25 Hz (common practice: heart sounds carry energy from about 20 Hz up,
        murmurs up to several hundred Hz).
    filter_order : int
        Butterworth order of each side before zero-phase (forward-backward)
        application, which doubles the attenuation and keeps timing.
    despike : bool
        Suppress short spikes (friction, handling).
    spike_threshold : float
        A 0.5-s window is spiky when its peak exceeds this multiple of the
        median window peak (Schmidt et al. 2010 used 3).
    remove_hum : bool
        Notch mains hum when it is detected.
    hum_prominence_db : float
        Hum is present when the 50 or 60 Hz line stands this far above the
        neighbouring spectrum.
    """

    band_hz: tuple[float, float] = (25.0, 900.0)
    filter_order: int = 4
    despike: bool = True
    spike_threshold: float = 3.0
    remove_hum: bool = True
    hum_prominence_db: float = 8.0


@dataclass(frozen=True, eq=False)
class Conditioned:
    """Conditioned samples and what was done to them."""

    x: np.ndarray
    fs: float
    band_hz: tuple[float, float]
    hum_hz: float | None
    spikes_removed: int
    scale: float

    def describe(self) -> dict:
        """JSON-ready description without the samples."""
        return {"band_hz": list(self.band_hz), "hum_hz": self.hum_hz,
                "spikes_removed": self.spikes_removed, "level_scale": self.scale}


def bandpass_sos(fs: float, band_hz: tuple[float, float], order: int = 4) -> np.ndarray:
    """Design the Butterworth band-pass used by :func:`bandpass` (second-order sections).

    The design is cached; this returns a writable copy of it.
    """
    return _bandpass_design(float(fs), float(band_hz[0]), float(band_hz[1]), int(order))[0].copy()


@lru_cache(maxsize=32)
def _bandpass_design(fs: float, low: float, high: float,
                     order: int) -> tuple[np.ndarray, np.ndarray]:
    """Sections and steady-state initial conditions of the band-pass, read-only."""
    nyquist = fs / 2
    if not 0 < low < high:
        raise ParameterError(f"band {(low, high)} Hz: need 0 < low < high")
    high = min(high, 0.95 * nyquist)
    if low >= high:
        raise ParameterError(f"band {(low, high)} Hz lies above the Nyquist frequency "
                             f"{nyquist:g} Hz")
    sos = signal.butter(order, [low, high], btype="bandpass", fs=fs, output="sos")
    return _frozen(sos), _frozen(signal.sosfilt_zi(sos))


def _frozen(a: np.ndarray) -> np.ndarray:
    a.setflags(write=False)
    return a


def bandpass(x: np.ndarray, fs: float, band_hz: tuple[float, float] = (25.0, 900.0),
             order: int = 4) -> np.ndarray:
    """Zero-phase band-pass: the designed filter applied forward and backward."""
    sos, zi = _bandpass_design(float(fs), float(band_hz[0]), float(band_hz[1]), int(order))
    return zero_phase(sos, zi, x)


def zero_phase(sos: np.ndarray, zi: np.ndarray, x: np.ndarray,
               padlen: int | None = None) -> np.ndarray:
    """Filter ``x`` forward and backward, the same as ``scipy.signal.sosfiltfilt``.

    ``zi`` is ``scipy.signal.sosfilt_zi(sos)``, passed in so a cached design does
    not recompute it. The ends are padded by odd reflection (``padlen`` samples,
    by default three times the number of taps, as scipy does).
    """
    x = np.asarray(x, dtype=np.float64)
    if padlen is None:
        taps = 2 * len(sos) + 1 - min(int(np.sum(sos[:, 2] == 0)), int(np.sum(sos[:, 5] == 0)))
        padlen = 3 * taps
    if len(x) <= padlen:
        raise ParameterError(f"{len(x)} samples are too few to filter (need more than "
                             f"{padlen})")
    ext = _odd_extension(x, padlen)
    if len(sos) == 1:
        # One section: lfilter runs the same recursion with less set-up than sosfilt
        # (scipy.signal.filtfilt's own path for a biquad).
        b, a = sos[0, :3], sos[0, 3:]
        y = signal.lfilter(b, a, ext, zi=zi[0] * ext[0])[0]
        y = signal.lfilter(b, a, y[::-1], zi=zi[0] * y[-1])[0]
    else:
        run = _four_sections_forward_backward if len(sos) == 4 else _sections_forward_backward
        y = run(np.asarray(sos, dtype=np.float64), np.asarray(zi, dtype=np.float64), ext)
        return y[padlen: len(y) - padlen] if padlen else y  # a contiguous view
    return np.ascontiguousarray(y[::-1][padlen: len(y) - padlen] if padlen else y[::-1])


@numba.njit(cache=True, nogil=True)
def _sections_forward_backward(sos: np.ndarray, zi: np.ndarray, x: np.ndarray) -> np.ndarray:
    """``x`` through the cascade of second-order sections forward, then backward.

    The recursion of ``scipy.signal.sosfilt`` (transposed direct form II, the same
    operations in the same order, so the same samples) with the initial conditions
    ``zi`` scaled by the first sample of each pass; one compiled loop per pass instead
    of two library calls and the copies between them (a fifth faster).
    """
    n, n_sections = len(x), len(sos)
    y = x.copy()  # filtered in place, one pass each way
    z0 = np.empty(n_sections)
    z1 = np.empty(n_sections)
    for direction in range(2):
        first = y[0] if direction == 0 else y[n - 1]
        for s in range(n_sections):
            z0[s] = zi[s, 0] * first
            z1[s] = zi[s, 1] * first
        for k in range(n):
            i = k if direction == 0 else n - 1 - k
            v = y[i]
            for s in range(n_sections):
                out = sos[s, 0] * v + z0[s]
                z0[s] = sos[s, 1] * v - sos[s, 4] * out + z1[s]
                z1[s] = sos[s, 2] * v - sos[s, 5] * out
                v = out
            y[i] = v
    return y


@numba.njit(cache=True, nogil=True)
def _four_sections_forward_backward(sos: np.ndarray, zi: np.ndarray, x: np.ndarray
                                    ) -> np.ndarray:
    """:func:`_sections_forward_backward` for exactly four sections (the order-4
    band-passes of conditioning and quality), with the coefficients and states in
    local variables: the same operations in the same order, so the same samples, but
    the states no longer pass through memory between samples (about 1.6 times faster:
    the recursion is bound by that latency, not by the arithmetic)."""
    n = len(x)
    y = x.copy()
    b00, b01, b02, a01, a02 = sos[0, 0], sos[0, 1], sos[0, 2], sos[0, 4], sos[0, 5]
    b10, b11, b12, a11, a12 = sos[1, 0], sos[1, 1], sos[1, 2], sos[1, 4], sos[1, 5]
    b20, b21, b22, a21, a22 = sos[2, 0], sos[2, 1], sos[2, 2], sos[2, 4], sos[2, 5]
    b30, b31, b32, a31, a32 = sos[3, 0], sos[3, 1], sos[3, 2], sos[3, 4], sos[3, 5]
    for direction in range(2):
        first = y[0] if direction == 0 else y[n - 1]
        p0, q0 = zi[0, 0] * first, zi[0, 1] * first
        p1, q1 = zi[1, 0] * first, zi[1, 1] * first
        p2, q2 = zi[2, 0] * first, zi[2, 1] * first
        p3, q3 = zi[3, 0] * first, zi[3, 1] * first
        for k in range(n):
            i = k if direction == 0 else n - 1 - k
            v = y[i]
            out = b00 * v + p0
            p0 = b01 * v - a01 * out + q0
            q0 = b02 * v - a02 * out
            v = out
            out = b10 * v + p1
            p1 = b11 * v - a11 * out + q1
            q1 = b12 * v - a12 * out
            v = out
            out = b20 * v + p2
            p2 = b21 * v - a21 * out + q2
            q2 = b22 * v - a22 * out
            v = out
            out = b30 * v + p3
            p3 = b31 * v - a31 * out + q3
            q3 = b32 * v - a32 * out
            y[i] = out
    return y


def _odd_extension(x: np.ndarray, n: int) -> np.ndarray:
    """``x`` with ``n`` samples reflected through each end point (scipy's odd_ext)."""
    if n < 1:
        return x
    ext = np.empty(len(x) + 2 * n)
    ext[n: n + len(x)] = x
    ext[:n] = 2 * x[0] - x[n:0:-1]
    ext[n + len(x):] = 2 * x[-1] - x[-2: -(n + 2): -1]
    return ext


#: A window "holds a sound" for :func:`spike_reference` when its peak is at least this
#: many times the 10th percentile of the window peaks (the windows of noise alone).
SOUND_OVER_QUIET = 2.0
#: Share of the windows that must hold a sound before they give the spike reference
#: (at 30 bpm with S1 and S2 in separate 0.5-s windows, a third of the windows do).
SOUND_WINDOWS_SHARE = 0.3


def spike_reference(peaks: np.ndarray) -> float:
    """The typical peak of the windows that hold a sound (heart sound or spike).

    The median of the window peaks at least :data:`SOUND_OVER_QUIET` times the 10th
    percentile, when at least :data:`SOUND_WINDOWS_SHARE` of the windows are such
    (heart sounds recur in every cycle; spikes are rare), and never below the median
    of all windows. Otherwise (a noisy recording, or sounds in every window with a few
    spikes standing out) it is the plain median.
    """
    quiet = percentiles(peaks, (10.0,))[0]
    loud = peaks[peaks >= SOUND_OVER_QUIET * quiet]
    everything = median(peaks)
    if len(loud) >= max(3, SOUND_WINDOWS_SHARE * len(peaks)):
        return max(median(loud), everything)
    return everything


def despike(x: np.ndarray, fs: float, *, threshold: float = 3.0, window_s: float = 0.5,
            max_spikes: int = 500) -> tuple[np.ndarray, int]:
    """Suppress spikes by zeroing them between the zero crossings around each peak.

    The method of Schmidt et al. (2010, Physiol. Meas. 31:513): split into
    ``window_s`` windows; while a window's peak exceeds ``threshold`` times the
    reference window peak, zero the spike around its peak out to the neighbouring
    zero crossings. Schmidt et al. take the median window peak as the reference;
    here it is the median over the windows that hold a sound at all (see
    :func:`spike_reference`), because at slow rates and in long pauses most
    windows hold no heart sound, and against the median (then the noise) the
    heart sounds themselves were taken for spikes.

    Returns the cleaned copy and the number of spikes removed.
    """
    y = np.array(x, dtype=np.float64, copy=True)
    n = int(round(window_s * fs))
    n_win = len(y) // n
    if n_win < 3:
        return y, 0
    body = y[: n_win * n].reshape(n_win, n)  # a view: edits land in y
    peaks = np.max(np.abs(body), axis=1)
    removed = 0
    while removed < max_spikes:
        reference = spike_reference(peaks)
        worst = int(np.argmax(peaks))
        if reference <= 0 or peaks[worst] <= threshold * reference:
            break
        row = body[worst]
        centre = int(np.argmax(np.abs(row)))
        sign = np.signbit(row)
        crossings = np.flatnonzero(sign[1:] != sign[:-1])
        before = crossings[crossings < centre]
        after = crossings[crossings >= centre]
        start = before[-1] + 1 if before.size else 0
        stop = after[0] + 1 if after.size else n
        row[start:stop] = 0.0
        peaks[worst] = np.max(np.abs(row))  # only this window changed
        removed += 1
    return y, removed


def detect_hum(x: np.ndarray, fs: float, *, prominence_db: float = 8.0) -> float | None:
    """Return 50.0 or 60.0 when that mains line stands out of the spectrum, else None."""
    nperseg = int(min(len(x), 4 * fs))
    # Single precision halves the transforms' time; the prominences compared below are
    # dB ratios of averaged powers, far coarser than its rounding.
    freqs, power = welch_psd(np.asarray(x, dtype=np.float32), fs, nperseg)
    step_hz = fs / nperseg
    best, best_prominence = None, prominence_db
    for mains in (50.0, 60.0):
        for harmonic in (1, 2, 3):
            f0 = mains * harmonic
            if f0 >= fs / 2:
                continue
            # The bins within 8 Hz of f0 (and one more each side), where the tests below look.
            near = slice(max(0, int((f0 - 8.0) / step_hz) - 1), int((f0 + 8.0) / step_hz) + 2)
            offset, p = np.abs(freqs[near] - f0), power[near]
            line = np.max(p[offset <= 0.5])
            # Compare with the loud end of the neighbourhood, so that the comb of
            # beat-rate harmonics of a very regular rhythm is not taken for hum.
            floor = percentiles(p[(offset >= 1.5) & (offset <= 8.0)], (90.0,))[0]
            prominence = 10 * np.log10((line + 1e-30) / (floor + 1e-30))
            if prominence > best_prominence:
                best, best_prominence = mains, prominence
    return best


def percentiles(a: np.ndarray, q: tuple[float, ...]) -> list:
    """``np.percentile(a, q, axis=-1)`` (linear interpolation) of finite values.

    One partial sort and the same arithmetic as numpy's, without its general
    set-up. Returns one float per ``q`` for 1-D ``a``, one array per ``q`` for rows.
    """
    a = np.asarray(a)
    n = a.shape[-1]
    if n == 0:
        return [np.full(a.shape[:-1], np.nan)[()] for _ in q]  # as numpy, without its warning
    pos = [(n - 1) * (p / 100.0) for p in q]
    below = [min(math.floor(x), n - 1) for x in pos]
    part = np.partition(a, sorted({k for b in below for k in (b, min(b + 1, n - 1))}), axis=-1)
    out = []
    for x, b in zip(pos, below):
        lo, hi = part[..., b], part[..., min(b + 1, n - 1)]
        g, step = x - b, hi - lo
        value = hi - step * (1 - g) if g >= 0.5 else lo + step * g
        out.append(float(value) if a.ndim == 1 else value)
    return out


def median(a) -> float:
    """``np.median`` of a 1-D sequence by :func:`percentiles` (a third of the time on
    the short arrays of intervals the segmenter takes medians of); NaN when empty."""
    return percentiles(np.asarray(a, dtype=np.float64), (50.0,))[0]


def trimmed_mean(values: np.ndarray, proportion: float):
    """Mean along the first axis after cutting ``int(proportion * n)`` values from each
    end of the sorted values (as ``scipy.stats.trim_mean``); the plain mean when that
    would leave nothing."""
    v = np.sort(np.asarray(values), axis=0)
    k = int(np.floor(proportion * len(v)))
    return v[k: len(v) - k].mean(axis=0) if len(v) > 2 * k else v.mean(axis=0)


#: Segments transformed at once by :func:`welch_psd` (bounds its memory on long input).
_WELCH_BLOCK = 32


def welch_psd(x: np.ndarray, fs: float, nperseg: int) -> tuple[np.ndarray, np.ndarray]:
    """One-sided power spectral density by Welch's method, as ``scipy.signal.welch``.

    Periodic Hann window, half-overlapping segments, each segment's mean removed,
    density scaling (units squared per Hz), mean over segments. Written out because
    scipy's general version spends most of its time on set-up for short input.
    Single-precision input is transformed in single precision (sums in double).
    """
    x = np.asarray(x)
    if x.dtype != np.float32:
        x = x.astype(np.float64, copy=False)
    nperseg = int(nperseg)
    step = nperseg - nperseg // 2
    if not 0 < nperseg <= len(x):
        raise ParameterError(f"nperseg={nperseg} must be between 1 and len(x)={len(x)}")
    window = hann_window(nperseg).astype(x.dtype, copy=False)
    n_seg = (len(x) - nperseg) // step + 1
    segments = np.lib.stride_tricks.sliding_window_view(x, nperseg)[::step][:n_seg]
    total = np.zeros(nperseg // 2 + 1)
    for a in range(0, n_seg, _WELCH_BLOCK):
        block = segments[a: a + _WELCH_BLOCK]
        block = (block - block.mean(axis=1, keepdims=True)) * window
        spec = scipy.fft.rfft(block, axis=1)
        total += np.sum(spec.real ** 2 + spec.imag ** 2, axis=0, dtype=np.float64)
    # No BLAS call (np.dot) here: on a busy machine its threads can cost milliseconds.
    power = total * (1.0 / (n_seg * fs * float(np.sum(hann_window(nperseg) ** 2))))
    power[1: None if nperseg % 2 else -1] *= 2.0  # both signs of frequency, not DC/Nyquist
    return np.arange(len(power)) * (fs / nperseg), power


@lru_cache(maxsize=16)
def hann_window(n: int) -> np.ndarray:
    """Periodic Hann window of ``n`` samples (``scipy.signal.get_window``), cached, read-only."""
    return _frozen(signal.get_window("hann", n))


def remove_hum(x: np.ndarray, fs: float, hum_hz: float, *, max_hz: float = 900.0,
               width_hz: float = 1.0) -> np.ndarray:
    """Notch ``hum_hz`` and its harmonics below ``max_hz``, zero-phase.

    Every notch has the same -3 dB width ``width_hz``, so the higher harmonics
    do not take wider bites out of the heart sounds.
    """
    y = np.asarray(x, dtype=np.float64)
    harmonic = hum_hz
    while harmonic < min(max_hz, 0.45 * fs):
        sos, zi = _notch_design(float(harmonic), float(width_hz), float(fs))
        y = zero_phase(sos, zi, y, padlen=9)  # scipy.signal.filtfilt's padding for a biquad
        harmonic += hum_hz
    return y


@lru_cache(maxsize=64)
def _notch_design(f0: float, width_hz: float, fs: float) -> tuple[np.ndarray, np.ndarray]:
    """One-section notch at ``f0`` and its steady-state initial conditions, read-only."""
    b, a = signal.iirnotch(f0, f0 / width_hz, fs=fs)
    sos = np.concatenate([b, a])[None, :]
    return _frozen(sos), _frozen(signal.sosfilt_zi(sos))


def normalise(x: np.ndarray) -> tuple[np.ndarray, float]:
    """Scale to unit RMS; return the scaled copy and the factor applied."""
    rms = float(np.sqrt(np.mean(np.square(x))))
    scale = 1.0 / rms if rms > 0 else 1.0
    return x * scale, scale


def condition(x: np.ndarray, fs: float, config: ConditionConfig | None = None) -> Conditioned:
    """Despike, remove hum, band-pass and normalise ``x`` according to ``config``."""
    config = config or ConditionConfig()
    y = np.asarray(x, dtype=np.float64) - np.mean(x)
    hum = detect_hum(y, fs, prominence_db=config.hum_prominence_db) if config.remove_hum else None
    if hum is not None:
        y = remove_hum(y, fs, hum, max_hz=config.band_hz[1])
    y = bandpass(y, fs, config.band_hz, config.filter_order)
    spikes = 0
    if config.despike:
        y, spikes = despike(y, fs, threshold=config.spike_threshold)
    y, scale = normalise(y)
    return Conditioned(y, fs, tuple(config.band_hz), hum, spikes, scale)
