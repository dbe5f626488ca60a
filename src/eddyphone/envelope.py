"""Envelopes of a conditioned heart-sound signal, at one feature rate.

Every envelope here is returned at the *feature rate* ``feature_fs`` (default
50 Hz, one frame per 20 ms), frame ``k`` covering samples
``[k * hop, (k + 1) * hop)`` with ``hop = round(fs / feature_fs)``; its centre
time is ``(k + 0.5) / feature_fs``. 20 ms frames resolve heart sounds, which last
60-160 ms, with several frames each (common practice).

Samples are processed in single precision (a 24-bit mantissa, finer than any
recording's 16- or 24-bit samples hold) and frames are averaged in double
precision; that halves the cost of the transforms and logarithms.

Public functions
----------------
hilbert_envelope
    Magnitude of the analytic signal, frame-averaged.
homomorphic_envelope
    ``exp(lowpass(log |analytic|))``: the slowly varying amplitude.
shannon_envelope
    Normalised (average) Shannon energy.
band_envelope
    Root-mean-square amplitude of one frequency band, from a short-time spectrum.
envelopes
    All of the above in one pass, sharing the analytic signal and the spectrum.
frame_times
    Centre times in seconds of the frames of an envelope.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np
import scipy.fft
import scipy.signal

from eddyphone.condition import hann_window, zero_phase
from eddyphone.errors import InputError, ParameterError

#: Default feature rate in Hz (one frame per 20 ms).
FEATURE_FS = 50.0
#: Cut-off in Hz of the low-pass filter of the homomorphic envelope.
HOMOMORPHIC_CUTOFF_HZ = 8.0
#: Bands in Hz of the two band-power envelopes: low (where S1 and S2 carry most
#: of their energy) and mid (where S2 and murmurs add energy).
LOW_BAND_HZ = (25.0, 100.0)
MID_BAND_HZ = (100.0, 300.0)
_TINY = 1e-12


def _hop(fs: float, feature_fs: float) -> int:
    if not (np.isfinite(fs) and fs > 0):
        raise ParameterError(f"fs={fs!r} must be a positive sample rate in Hz")
    if not (np.isfinite(feature_fs) and 0 < feature_fs <= fs / 2):
        raise ParameterError(
            f"feature_fs={feature_fs!r} must be positive and at most fs/2={fs / 2:g} Hz"
        )
    return max(1, int(round(fs / feature_fs)))


def _check_x(x: np.ndarray, hop: int) -> np.ndarray:
    """Validated samples in single precision (see the module docstring)."""
    x = np.asarray(x, dtype=np.float32)
    if x.ndim != 1:
        raise InputError(None, f"x has shape {x.shape}, expected one channel",
                         "pass a 1-D array of samples")
    if len(x) < hop:
        raise InputError(None, f"x has {len(x)} samples, fewer than one frame ({hop})",
                         "pass a longer recording")
    if not np.all(np.isfinite(x)):
        raise InputError(None, "x contains NaN or infinite samples",
                         "condition the recording first (eddyphone.condition)")
    return x


def _frame_mean(v: np.ndarray, hop: int) -> np.ndarray:
    n = len(v) // hop
    return v[: n * hop].reshape(n, hop).mean(axis=1, dtype=np.float64)


def frame_times(n_frames: int, feature_fs: float) -> np.ndarray:
    """Centre times in seconds of ``n_frames`` frames at ``feature_fs``."""
    return (np.arange(n_frames) + 0.5) / feature_fs


def _analytic_magnitude(x: np.ndarray) -> np.ndarray:
    """``|x + i H(x)|`` with the Hilbert transform ``H`` done by one real FFT pair.

    ``H`` multiplies positive frequencies by ``-i`` (and leaves DC and Nyquist at
    zero), so ``H(x)`` is real and one inverse real FFT gives it.
    """
    n = len(x)
    nfft = scipy.fft.next_fast_len(n, real=True)
    spec = scipy.fft.rfft(x, nfft)
    spec *= -1j
    spec[0] = 0.0
    if nfft % 2 == 0:
        spec[-1] = 0.0
    mag = scipy.fft.irfft(spec, nfft, overwrite_x=True)[:n]
    mag *= mag
    mag += x * x
    return np.sqrt(mag, out=mag)


def hilbert_envelope(x: np.ndarray, fs: float, *, feature_fs: float = FEATURE_FS) -> np.ndarray:
    """Frame-averaged magnitude of the analytic signal.

    Parameters
    ----------
    x : ndarray
        Conditioned samples.
    fs : float
        Sample rate in Hz.
    feature_fs : float
        Frame rate of the result in Hz.

    Returns
    -------
    ndarray
        One value per frame, in the units of ``x``.
    """
    hop = _hop(fs, feature_fs)
    x = _check_x(x, hop)
    return _frame_mean(_analytic_magnitude(x), hop)


def _lowpass_log(log_env: np.ndarray, frame_fs: float, cutoff_hz: float) -> np.ndarray:
    """Zero-phase first-order Butterworth low-pass (bilinear transform, closed form)."""
    if len(log_env) < 16 or cutoff_hz >= frame_fs / 2:
        return log_env
    sos, zi = _lowpass_design(float(frame_fs), float(cutoff_hz))
    return zero_phase(sos, zi, log_env, padlen=min(len(log_env) - 1, 12))


@lru_cache(maxsize=16)
def _lowpass_design(frame_fs: float, cutoff_hz: float) -> tuple[np.ndarray, np.ndarray]:
    """Section and steady-state initial conditions of the low-pass, read-only."""
    k = np.tan(np.pi * cutoff_hz / frame_fs)
    b0 = k / (1.0 + k)
    a1 = (k - 1.0) / (k + 1.0)
    sos = np.array([[b0, b0, 0.0, 1.0, a1, 0.0]])
    zi = scipy.signal.sosfilt_zi(sos)
    sos.setflags(write=False)
    zi.setflags(write=False)
    return sos, zi


def _log_magnitude(mag: np.ndarray) -> np.ndarray:
    """``log(mag + tiny)``, in a new array."""
    out = mag + _TINY
    return np.log(out, out=out)


def homomorphic_envelope(x: np.ndarray, fs: float, *, feature_fs: float = FEATURE_FS,
                         cutoff_hz: float = HOMOMORPHIC_CUTOFF_HZ) -> np.ndarray:
    """Homomorphic envelope: ``exp`` of the low-passed log of the analytic magnitude.

    The log magnitude is averaged over each frame (a boxcar anti-alias filter),
    then low-passed by a zero-phase first-order Butterworth filter at
    ``cutoff_hz``, then exponentiated (homomorphic filtering, a published method).

    Returns
    -------
    ndarray
        One positive value per frame, in the units of ``x``.
    """
    hop = _hop(fs, feature_fs)
    x = _check_x(x, hop)
    log_env = _frame_mean(_log_magnitude(_analytic_magnitude(x)), hop)
    return np.exp(_lowpass_log(log_env, fs / hop, cutoff_hz))


def shannon_envelope(x: np.ndarray, fs: float, *, feature_fs: float = FEATURE_FS) -> np.ndarray:
    """Normalised average Shannon energy per frame.

    Samples are scaled to a peak of one, the Shannon energy ``-x^2 log x^2`` is
    averaged over each frame and the result standardised to zero mean and unit
    standard deviation (the normalised average Shannon energy, a published method).

    Returns
    -------
    ndarray
        One dimensionless value per frame.
    """
    hop = _hop(fs, feature_fs)
    x = _check_x(x, hop)
    return _shannon(x, hop)


def _shannon(x: np.ndarray, hop: int) -> np.ndarray:
    peak = float(np.max(np.abs(x)))
    if peak <= 0:
        return np.zeros(len(x) // hop)
    sq = x / peak
    sq *= sq
    shannon = _log_magnitude(sq)
    shannon *= sq
    energy = -_frame_mean(shannon, hop)  # -x^2 log x^2 averaged (negating is exact)
    sd = float(energy.std())
    return (energy - energy.mean()) / sd if sd > 0 else energy - energy.mean()


def _frames(x: np.ndarray, hop: int) -> np.ndarray:
    """Hann-windowed frames two hops long centred on each feature frame, (n, 2 hop)."""
    n = len(x) // hop
    width = 2 * hop
    pad = np.zeros(n * hop + hop // 2 + width, dtype=x.dtype)
    pad[hop // 2: hop // 2 + n * hop] = x[: n * hop]
    frames = np.lib.stride_tricks.sliding_window_view(pad, width)[: n * hop: hop]
    return frames * hann_window(width).astype(x.dtype)


@lru_cache(maxsize=32)
def _band_bins(width: int, fs: float, band_hz: tuple[float, float]) -> slice:
    """The spectrum bins with ``low <= f < high`` (a contiguous run)."""
    freqs = np.arange(width // 2 + 1) * fs / width
    sel = np.flatnonzero((freqs >= band_hz[0]) & (freqs < band_hz[1]))
    if not sel.size:
        raise ParameterError(
            f"band_hz={band_hz} holds no frequency bin at this frame length; widen the band"
        )
    return slice(int(sel[0]), int(sel[-1]) + 1)


def _band_rms(spec: np.ndarray, width: int, fs: float,
              band_hz: tuple[float, float]) -> np.ndarray:
    """RMS amplitude in a band from the spectrum of Hann-windowed frames ``width`` long."""
    band = spec[:, _band_bins(width, float(fs), (float(band_hz[0]), float(band_hz[1])))]
    power = np.sum(band.real ** 2 + band.imag ** 2, axis=1, dtype=np.float64)
    win = hann_window(width)
    # One-sided bins count twice (positive and negative frequency).
    return np.sqrt(2.0 * power / (width * float(np.sum(win * win))))


def _frame_spectra(x: np.ndarray, hop: int) -> np.ndarray:
    """Spectra of the Hann-windowed frames of :func:`_frames`, (n, hop + 1)."""
    return scipy.fft.rfft(_frames(x, hop), axis=1, overwrite_x=True)


def band_envelope(x: np.ndarray, fs: float, band_hz: tuple[float, float] = LOW_BAND_HZ, *,
                  feature_fs: float = FEATURE_FS) -> np.ndarray:
    """Root-mean-square amplitude of one band, frame by frame.

    Uses Hann-windowed frames two hops long centred on each feature frame.

    Parameters
    ----------
    band_hz : (float, float)
        Lower and upper band edge in Hz.

    Returns
    -------
    ndarray
        One value per frame, in the units of ``x``.
    """
    lo, hi = band_hz
    if not (0 <= lo < hi <= fs / 2):
        raise ParameterError(f"band_hz={band_hz} must satisfy 0 <= low < high <= fs/2")
    hop = _hop(fs, feature_fs)
    x = _check_x(x, hop)
    return _band_rms(_frame_spectra(x, hop), 2 * hop, fs, band_hz)


@dataclass(frozen=True, eq=False)
class Envelopes:
    """All envelopes of one signal at one feature rate.

    Attributes
    ----------
    homomorphic, hilbert, shannon, low_band, mid_band : ndarray
        One value per frame (see the module functions of the same names).
    feature_fs : float
        Frame rate in Hz.
    """

    homomorphic: np.ndarray
    hilbert: np.ndarray
    shannon: np.ndarray
    low_band: np.ndarray
    mid_band: np.ndarray
    feature_fs: float

    @property
    def n_frames(self) -> int:
        """Number of frames."""
        return len(self.homomorphic)

    @property
    def t(self) -> np.ndarray:
        """Frame centre times in seconds."""
        return frame_times(self.n_frames, self.feature_fs)


def envelopes(x: np.ndarray, fs: float, *, feature_fs: float = FEATURE_FS,
              cutoff_hz: float = HOMOMORPHIC_CUTOFF_HZ) -> Envelopes:
    """Compute every envelope in one pass (one analytic signal, one spectrum).

    Parameters
    ----------
    x : ndarray
        Conditioned samples.
    fs : float
        Sample rate in Hz.
    feature_fs : float
        Requested frame rate in Hz; the actual rate is ``fs / round(fs / feature_fs)``.
    cutoff_hz : float
        Low-pass cut-off of the homomorphic envelope in Hz.

    Returns
    -------
    Envelopes
    """
    hop = _hop(fs, feature_fs)
    x = _check_x(x, hop)
    frame_fs = fs / hop
    mag = _analytic_magnitude(x)
    hil = _frame_mean(mag, hop)
    log_env = _frame_mean(_log_magnitude(mag), hop)
    homo = np.exp(_lowpass_log(log_env, frame_fs, cutoff_hz))
    spec = _frame_spectra(x, hop)
    mid_hi = min(MID_BAND_HZ[1], fs / 2)
    return Envelopes(
        homomorphic=homo,
        hilbert=hil,
        shannon=_shannon(x, hop),
        low_band=_band_rms(spec, 2 * hop, fs, LOW_BAND_HZ),
        mid_band=_band_rms(spec, 2 * hop, fs, (MID_BAND_HZ[0], mid_hi)),
        feature_fs=frame_fs,
    )
