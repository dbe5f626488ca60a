"""Tests of eddyphone.envelope against scipy and closed-form values."""

from __future__ import annotations

import numpy as np
import pytest
import scipy.signal

from eddyphone.envelope import (
    band_envelope,
    envelopes,
    frame_times,
    hilbert_envelope,
    homomorphic_envelope,
    shannon_envelope,
)
from eddyphone.errors import InputError, ParameterError

FS = 4000.0


def _tone(f_hz: float, amp: float = 1.0, dur_s: float = 4.0) -> np.ndarray:
    t = np.arange(int(dur_s * FS)) / FS
    return amp * np.sin(2 * np.pi * f_hz * t)


def test_hilbert_matches_scipy_inside():
    rng = np.random.default_rng(1)
    x = scipy.signal.sosfiltfilt(scipy.signal.butter(4, [25, 400], "band", fs=FS, output="sos"),
                                 rng.normal(size=40_000))
    hop = 80
    # Reference: scipy.signal.hilbert, frame-averaged the same way.
    ref = np.abs(scipy.signal.hilbert(x))[: len(x) // hop * hop].reshape(-1, hop).mean(axis=1)
    got = hilbert_envelope(x, FS)
    assert got.shape == ref.shape == (500,)
    # Away from the edges (where FFT padding differs) the two agree closely.
    np.testing.assert_allclose(got[10:-10], ref[10:-10], rtol=0.02)


def test_homomorphic_follows_slow_amplitude():
    t = np.arange(int(6 * FS)) / FS
    amp = 1.0 + 0.5 * np.sin(2 * np.pi * 1.0 * t)
    x = amp * np.sin(2 * np.pi * 100.0 * t)
    env = homomorphic_envelope(x, FS)
    # Closed form: for a 1 Hz modulation well below the 8 Hz cut-off, the envelope is
    # the amplitude itself (exp of the low-passed log of |analytic| = amp).
    ref = amp[: len(env) * 80].reshape(-1, 80).mean(axis=1)
    np.testing.assert_allclose(env[25:-25], ref[25:-25], rtol=0.03)


def test_band_envelope_parseval():
    # A sine of amplitude A has RMS A / sqrt(2) (closed form); a tone outside the band
    # gives almost nothing (Hann leakage only).
    x = _tone(50.0, amp=2.0)
    assert np.median(band_envelope(x, FS, (25.0, 100.0))) == pytest.approx(np.sqrt(2.0),
                                                                           rel=1e-3)
    leak = np.median(band_envelope(_tone(400.0, amp=2.0), FS, (25.0, 100.0)))
    assert leak < 1e-3


def test_shannon_standardised_and_peaks_on_clicks():
    from _clicks import click_train

    x, segs = click_train(70.0, noise_rms=0.01, seed=3)
    env = shannon_envelope(x, FS)
    # Normalised average Shannon energy (published definition): zero mean, unit sd.
    assert env.mean() == pytest.approx(0.0, abs=1e-9)
    assert env.std() == pytest.approx(1.0, rel=1e-9)
    t = frame_times(len(env), 50.0)
    inside = np.zeros(len(t), bool)
    for a, b, _ in segs:
        inside |= (t >= a) & (t < b)
    assert env[inside].mean() > env[~inside].mean() + 1.0


def test_envelopes_bundle_and_rate():
    x = _tone(60.0, dur_s=2.01)
    env = envelopes(x, FS)
    assert env.feature_fs == 50.0
    assert env.n_frames == len(x) // 80 == 100
    for name in ("homomorphic", "hilbert", "shannon", "low_band", "mid_band"):
        assert len(getattr(env, name)) == env.n_frames
    np.testing.assert_allclose(env.t[:2], [0.01, 0.03])
    # The bundle agrees with the single functions.
    np.testing.assert_allclose(env.hilbert, hilbert_envelope(x, FS))
    np.testing.assert_allclose(env.homomorphic, homomorphic_envelope(x, FS))
    # At 3 kHz the hop is 60 samples and the rate stays 50 Hz.
    assert envelopes(x[:6000], 3000.0).feature_fs == pytest.approx(50.0)


def test_errors_name_the_value():
    with pytest.raises(ParameterError, match="feature_fs=0"):
        hilbert_envelope(np.ones(1000), FS, feature_fs=0)
    with pytest.raises(InputError, match="NaN"):
        envelopes(np.array([0.0, np.nan] * 200), FS)
    with pytest.raises(InputError, match="one channel"):
        envelopes(np.ones((100, 2)), FS)
    with pytest.raises(ParameterError, match="band_hz"):
        band_envelope(np.ones(4000), FS, (300.0, 100.0))


def test_band_envelopes_equal_a_direct_windowed_spectrum():
    # Reference: each frame cut out by hand (two hops, centred on its feature frame,
    # zero beyond the ends), scipy.signal.get_window("hann") and numpy.fft.rfft.
    x = np.random.default_rng(8).standard_normal(8_030)
    hop, width = 80, 160
    n = len(x) // hop
    padded = np.concatenate([np.zeros(hop // 2), x[: n * hop], np.zeros(width)])
    win = scipy.signal.get_window("hann", width)
    spec = np.fft.rfft(np.stack([padded[k * hop: k * hop + width] for k in range(n)]) * win)
    freqs = np.fft.rfftfreq(width, 1 / FS)
    env = envelopes(x, FS)
    for band, got in (((25.0, 100.0), env.low_band), ((100.0, 300.0), env.mid_band)):
        sel = (freqs >= band[0]) & (freqs < band[1])
        ref = np.sqrt(2 * np.sum(np.abs(spec[:, sel]) ** 2, axis=1) / (width * np.sum(win ** 2)))
        # samples are processed in single precision (eps 6e-8): agreement to 1e-5
        np.testing.assert_allclose(got, ref, rtol=1e-5)
        np.testing.assert_allclose(band_envelope(x, FS, band), ref, rtol=1e-5)


def test_homomorphic_low_pass_equals_scipy_butterworth():
    # Reference: scipy.signal.butter(1, 8 Hz) at the 50-Hz frame rate, applied by
    # scipy.signal.sosfiltfilt, then exp; the frame means of log|hilbert| from scipy.
    x = np.random.default_rng(9).standard_normal(12_000)
    log_mag = np.log(np.abs(scipy.signal.hilbert(x)) + 1e-12).reshape(-1, 80).mean(axis=1)
    sos = scipy.signal.butter(1, 8.0, fs=50.0, output="sos")
    ref = np.exp(scipy.signal.sosfiltfilt(sos, log_mag, padlen=12))
    for _ in range(2):  # the second call uses the cached design
        # single-precision samples (eps 6e-8): agreement to 1e-5
        np.testing.assert_allclose(homomorphic_envelope(x, FS), ref, rtol=1e-5)
