"""Conditioning: band-pass, spike suppression, mains-hum removal, level normalisation.

Public functions
----------------
bandpass(x, fs, band_hz, order)  zero-phase Butterworth band-pass
bandpass_sos(fs, band_hz, order) the designed filter, for inspection
despike(x, fs, ...)              suppress friction and handling spikes
detect_hum(x, fs)                mains-hum fundamental (50/60 Hz) or None
remove_hum(x, fs, hum_hz, ...)   zero-phase notches at the hum and its harmonics
normalise(x)                     unit RMS
condition(x, fs, config)         all of the above in order -> Conditioned
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
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
    """Design the Butterworth band-pass used by :func:`bandpass` (second-order sections)."""
    low, high = band_hz
    nyquist = fs / 2
    if not 0 < low < high:
        raise ParameterError(f"band {band_hz} Hz: need 0 < low < high")
    high = min(high, 0.95 * nyquist)
    if low >= high:
        raise ParameterError(f"band {band_hz} Hz lies above the Nyquist frequency {nyquist:g} Hz")
    return signal.butter(order, [low, high], btype="bandpass", fs=fs, output="sos")


def bandpass(x: np.ndarray, fs: float, band_hz: tuple[float, float] = (25.0, 900.0),
             order: int = 4) -> np.ndarray:
    """Zero-phase band-pass: the designed filter applied forward and backward."""
    return signal.sosfiltfilt(bandpass_sos(fs, band_hz, order), x)


def despike(x: np.ndarray, fs: float, *, threshold: float = 3.0, window_s: float = 0.5,
            max_spikes: int = 500) -> tuple[np.ndarray, int]:
    """Suppress spikes by zeroing them between the zero crossings around each peak.

    The method of Schmidt et al. (2010, Physiol. Meas. 31:513): split into
    ``window_s`` windows; while a window's peak exceeds ``threshold`` times the
    median window peak, zero the spike around its peak out to the neighbouring
    zero crossings.

    Returns the cleaned copy and the number of spikes removed.
    """
    y = np.array(x, dtype=np.float64, copy=True)
    n = int(round(window_s * fs))
    n_win = len(y) // n
    if n_win < 3:
        return y, 0
    body = y[: n_win * n].reshape(n_win, n)  # a view: edits land in y
    removed = 0
    while removed < max_spikes:
        peaks = np.max(np.abs(body), axis=1)
        median = np.median(peaks)
        worst = int(np.argmax(peaks))
        if median <= 0 or peaks[worst] <= threshold * median:
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
        removed += 1
    return y, removed


def detect_hum(x: np.ndarray, fs: float, *, prominence_db: float = 8.0) -> float | None:
    """Return 50.0 or 60.0 when that mains line stands out of the spectrum, else None."""
    nperseg = int(min(len(x), 4 * fs))
    freqs, power = signal.welch(x, fs=fs, nperseg=nperseg)
    best, best_prominence = None, prominence_db
    for mains in (50.0, 60.0):
        for harmonic in (1, 2, 3):
            f0 = mains * harmonic
            if f0 >= fs / 2:
                continue
            line = np.max(power[np.abs(freqs - f0) <= 0.5])
            # Compare with the loud end of the neighbourhood, so that the comb of
            # beat-rate harmonics of a very regular rhythm is not taken for hum.
            ring = (np.abs(freqs - f0) >= 1.5) & (np.abs(freqs - f0) <= 8.0)
            floor = np.percentile(power[ring], 90)
            prominence = 10 * np.log10((line + 1e-30) / (floor + 1e-30))
            if prominence > best_prominence:
                best, best_prominence = mains, prominence
    return best


def remove_hum(x: np.ndarray, fs: float, hum_hz: float, *, max_hz: float = 900.0,
               width_hz: float = 1.0) -> np.ndarray:
    """Notch ``hum_hz`` and its harmonics below ``max_hz``, zero-phase.

    Every notch has the same -3 dB width ``width_hz``, so the higher harmonics
    do not take wider bites out of the heart sounds.
    """
    y = np.asarray(x, dtype=np.float64)
    harmonic = hum_hz
    while harmonic < min(max_hz, 0.45 * fs):
        b, a = signal.iirnotch(harmonic, harmonic / width_hz, fs=fs)
        y = signal.filtfilt(b, a, y)
        harmonic += hum_hz
    return y


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
