"""The murmur's excess spectrum (its frames minus the same beats' quiet frames): centroid,
dominant frequency, tonality, where it stands out of the noise floor (the pitch
measure), and the roughness of its band envelope (the quality words).

Public functions
----------------
excess_spectrum(spec, prof, use, w, k0, k1, quiet, n_bins, fs) -> dict
noise_relative_centroid_hz(f_hz, excess, noise) -> float
envelope_roughness(spec, prof, use, w, k0, k1, bands, n_bins) -> float
"""

from __future__ import annotations

import numpy as np

from eddyphone.findings.measures import DIA, SYS, Profiles, Spectrogram

#: Smoothing (octaves) of the murmur and noise-floor spectra before the pitch
#: measure (:func:`noise_relative_centroid_hz`): third octaves, about the ear's
#: critical bands at these frequencies (common practice).
PITCH_SMOOTHING_OCT = 1.0 / 3.0


def excess_spectrum(spec: Spectrogram, prof: Profiles, use: np.ndarray, w: int, k0: int,
                    k1: int, quiet: np.ndarray, n_bins: int, fs: float) -> dict:
    """Excess spectrum of the murmur: its frames minus the beat's quiet frames."""
    act_spectra, quiet_spectra = [], []
    for i in np.flatnonzero(use):
        a, b = prof.windows_s[i, w]
        edges = np.linspace(a, b, n_bins + 1)
        ia, ib = np.searchsorted(spec.t, [edges[k0], edges[k1]])
        if ib <= ia:
            continue
        act_spectra.append(spec.power[ia:ib].mean(axis=0))
        qs = []
        for ww in (SYS, DIA):
            aa, bb = prof.windows_s[i, ww]
            ed = np.linspace(aa, bb, n_bins + 1)
            for k in np.flatnonzero(quiet[ww]):
                ja, jb = np.searchsorted(spec.t, [ed[k], ed[k + 1]])
                if jb > ja:
                    qs.append(spec.power[ja:jb].mean(axis=0))
        quiet_spectra.append(np.mean(qs, axis=0) if qs else np.zeros_like(spec.f))
    f = spec.f
    if not act_spectra:
        return {"centroid_hz": float("nan"), "dominant_hz": float("nan"), "spread": 0.0,
                "tonality": 0.0, "excess": np.zeros_like(f)}
    excess = np.median(np.array(act_spectra) - np.array(quiet_spectra), axis=0)
    excess = np.clip(excess, 0.0, None)
    band = (f >= 25.0) & (f <= min(900.0, 0.45 * fs))
    excess = np.where(band, excess, 0.0)
    total = excess.sum()
    if total <= 0:
        return {"centroid_hz": float("nan"), "dominant_hz": float("nan"), "spread": 0.0,
                "tonality": 0.0, "excess": excess, "noise_relative_hz": float("nan")}
    noise_rel = noise_relative_centroid_hz(f[band], excess[band],
                                           np.median(np.array(quiet_spectra), axis=0)[band])
    smooth = np.convolve(excess, np.ones(3) / 3.0, mode="same")
    k = int(np.argmax(smooth))
    centroid = float(np.sum(f * excess) / total)
    spread = float(np.sqrt(np.sum((f - centroid) ** 2 * excess) / total))
    # tonality: energy share within +/-1 bin of the peak, mapped so broadband noise
    # (which puts about 3 bins' worth there) reads near 0 and a pure tone near 1
    share = float(excess[max(k - 1, 0): k + 2].sum() / total)
    n_eff = max(int(band.sum()), 4)
    base = min(3.0 / n_eff * 3.0, 0.6)
    tonality = float(np.clip((share - base) / (0.85 - base), 0.0, 1.0))
    return {"centroid_hz": centroid, "dominant_hz": float(f[k]), "spread": spread,
            "tonality": tonality, "excess": excess, "noise_relative_hz": noise_rel}


def _octave_smooth(f: np.ndarray, p: np.ndarray, width_oct: float) -> np.ndarray:
    """Mean of ``p`` over a ``width_oct``-wide band centred (in octaves) on each ``f``."""
    lf = np.log2(np.maximum(f, 1e-9))
    out = np.empty_like(p, dtype=float)
    for i, c in enumerate(lf):
        out[i] = p[np.abs(lf - c) <= 0.5 * width_oct].mean()
    return out


def noise_relative_centroid_hz(f_hz: np.ndarray, excess: np.ndarray, noise: np.ndarray,
                               width_oct: float = PITCH_SMOOTHING_OCT) -> float:
    """Where a murmur stands out of the recording's own noise floor, in Hz.

    Log-frequency centroid of ``excess`` (murmur power above the floor) weighted
    by how many dB it stands over ``noise`` (the quiet parts of the same beats),
    both smoothed over ``width_oct`` octaves. Murmur and floor pass through the
    same stethoscope, so a device tilt scales both alike and cancels; NaN when the
    murmur nowhere stands over the floor.
    """
    f = np.asarray(f_hz, dtype=float)
    m = _octave_smooth(f, np.asarray(excess, dtype=float), width_oct)
    q = np.maximum(_octave_smooth(f, np.asarray(noise, dtype=float), width_oct), 1e-30)
    w = np.clip(10.0 * np.log10(np.maximum(m, 1e-30) / q), 0.0, None)
    if not np.any(w > 0):
        return float("nan")
    return float(np.exp(np.sum(w * np.log(np.maximum(f, 1e-9))) / np.sum(w)))


def envelope_roughness(spec: Spectrogram, prof: Profiles, use: np.ndarray, w: int, k0: int,
                       k1: int, bands: tuple[int, ...], n_bins: int) -> float:
    """Fast (roughly 10-40 Hz) fluctuation of the murmur-band envelope, relative to its
    mean, after removing what band-limited noise of the same width shows by itself."""
    vals = []
    hop = float(np.median(np.diff(spec.t))) if len(spec.t) > 1 else 0.004
    for i in np.flatnonzero(use):
        a, b = prof.windows_s[i, w]
        edges = np.linspace(a, b, n_bins + 1)
        ia, ib = np.searchsorted(spec.t, [edges[k0], edges[k1]])
        if ib - ia < 8:
            continue
        env = np.sqrt(spec.band_power[list(bands), ia:ib].sum(axis=0))
        # detrend with a ~50 ms moving average: what remains is the fast roughness
        m = max(3, int(round(0.05 / hop)))
        if len(env) <= 2 * m:
            continue
        slow = np.convolve(env, np.ones(m) / m, mode="same")
        fast = env - slow
        vals.append(float(np.std(fast[m // 2: len(fast) - m // 2]) / (np.mean(env) + 1e-30)))
    if not vals:
        return 0.0
    return float(np.median(vals))
