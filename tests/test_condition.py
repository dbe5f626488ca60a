"""Conditioning: band-pass response, despiking, hum removal, normalisation."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import burst_train
from scipy import signal

from eddyphone.condition import (
    ConditionConfig,
    bandpass,
    bandpass_sos,
    condition,
    despike,
    detect_hum,
    percentiles,
    remove_hum,
    welch_psd,
)

FS = 4000.0


def _gain_db(y: np.ndarray, x: np.ndarray) -> float:
    core = slice(len(x) // 4, 3 * len(x) // 4)
    return float(20 * np.log10(np.std(y[core]) / np.std(x[core])))


@pytest.mark.parametrize("band", [(25.0, 900.0), (25.0, 400.0), (50.0, 250.0)])
def test_bandpass_edges_match_the_designed_filter(band):
    # Reference: scipy.signal.sosfreqz of the designed Butterworth sections. A
    # Butterworth filter is -3.01 dB at its cut-offs (handbook property); applied
    # forward and backward the measured gain is twice the single-pass dB value.
    sos = bandpass_sos(FS, band)
    freqs, h = signal.sosfreqz(sos, worN=np.array(band), fs=FS)
    single_db = 20 * np.log10(np.abs(h))
    assert single_db == pytest.approx([-3.01, -3.01], abs=0.05)
    t = np.arange(int(20 * FS)) / FS
    for f, expected in zip(freqs, single_db):
        tone = np.sin(2 * np.pi * f * t)
        assert _gain_db(bandpass(tone, FS, band), tone) == pytest.approx(2 * expected, abs=0.1)
    mid = np.sqrt(band[0] * band[1])
    tone = np.sin(2 * np.pi * mid * t)
    assert _gain_db(bandpass(tone, FS, band), tone) == pytest.approx(0.0, abs=0.1)


def test_bandpass_is_zero_phase():
    x = burst_train(duration_s=4.0)
    y = bandpass(x, FS)
    lags = signal.correlation_lags(len(y), len(x))
    assert lags[np.argmax(signal.correlate(y, x))] == 0


def test_despike_removes_an_inserted_spike_and_keeps_heart_sounds():
    x = burst_train(duration_s=8.0)
    spiky = x.copy()
    spiky[int(2.62 * FS): int(2.62 * FS) + 6] = [3.0, 6.0, 8.0, 6.0, 3.0, 1.0]
    cleaned, n = despike(spiky, FS)
    assert n >= 1
    assert np.max(np.abs(cleaned)) <= np.max(np.abs(x)) + 1e-12
    untouched = np.abs(np.arange(len(x)) / FS - 2.62) > 0.3
    assert np.allclose(cleaned[untouched], x[untouched])
    assert despike(x, FS)[1] == 0


def test_despike_keeps_heart_sounds_of_a_slow_rhythm():
    # At 20 bpm (a 3-s cycle) two in three 0.5-s windows hold no heart sound, so
    # the median window peak (the reference of Schmidt et al. 2010) is the noise and
    # every sound passes for a spike. Heart sounds are not spikes (common practice);
    # the reference is taken over the windows that hold a sound.
    rng = np.random.default_rng(5)
    x = burst_train(duration_s=20.0, rr_s=3.0) + 0.002 * rng.standard_normal(80000)
    assert despike(x, FS)[1] == 0
    spiky = x.copy()
    spiky[int(7.31 * FS): int(7.31 * FS) + 3] = [2.0, 4.0, 2.0]
    cleaned, n = despike(spiky, FS)
    assert n >= 1
    assert np.max(np.abs(cleaned)) <= np.max(np.abs(x)) + 1e-12


@pytest.mark.parametrize("mains", [50.0, 60.0])
def test_hum_detected_and_removed(mains):
    rng = np.random.default_rng(3)
    x = burst_train(duration_s=10.0) + 0.003 * rng.standard_normal(40000)
    t = np.arange(len(x)) / FS
    hum = 0.05 * np.sin(2 * np.pi * mains * t) + 0.02 * np.sin(2 * np.pi * 3 * mains * t)
    assert detect_hum(x, FS) is None
    assert detect_hum(x + hum, FS) == mains
    core = slice(4000, -4000)
    # The notches are linear: check what is left of the hum and what is lost of the heart sounds.
    left = remove_hum(hum, FS, mains)
    assert 20 * np.log10(np.std(left[core]) / np.std(hum[core])) < -30
    lost = remove_hum(x, FS, mains) - x
    assert 20 * np.log10(np.std(lost[core]) / np.std(x[core])) < -10


def test_condition_normalises_and_reports():
    x = 0.01 * burst_train(duration_s=6.0) + 0.2  # quiet, with DC offset
    out = condition(x, FS, ConditionConfig())
    assert np.sqrt(np.mean(out.x ** 2)) == pytest.approx(1.0, rel=1e-6)
    assert abs(np.mean(out.x)) < 1e-3
    assert out.describe()["band_hz"] == [25.0, 900.0]


@pytest.mark.parametrize("band", [(25.0, 900.0), (25.0, 400.0), (50.0, 1990.0)])
@pytest.mark.parametrize("order", [4, 3])  # four sections have their own compiled loop
def test_bandpass_equals_scipy_sosfiltfilt(band, order):
    # Reference: scipy.signal.sosfiltfilt of scipy.signal.butter's design (the cached
    # design and the written-out forward-backward pass must give the same samples).
    x = np.random.default_rng(7).standard_normal(12_345)
    high = min(band[1], 0.95 * FS / 2)
    sos = signal.butter(order, [band[0], high], btype="bandpass", fs=FS, output="sos")
    for _ in range(2):  # the second call uses the cached design
        np.testing.assert_allclose(bandpass(x, FS, band, order), signal.sosfiltfilt(sos, x),
                                   rtol=0, atol=1e-12)
    design = bandpass_sos(FS, band, order)
    design[0, 0] = 0.0  # a caller's copy: editing it must not touch the cache
    np.testing.assert_array_equal(bandpass_sos(FS, band, order), sos)


@pytest.mark.parametrize(("n", "nperseg"), [(80_000, 16_000), (40_123, 16_000), (16_001, 16_001),
                                            (5_000, 255), (3_000, 1_000)])
def test_welch_psd_equals_scipy_welch(n, nperseg):
    # Reference: scipy.signal.welch with its defaults (periodic Hann, half overlap,
    # constant detrend, density scaling, one-sided, mean of the segments).
    x = 0.3 + np.random.default_rng(n).standard_normal(n)
    f_ref, p_ref = signal.welch(x, fs=FS, nperseg=nperseg)
    f, p = welch_psd(x, FS, nperseg)
    np.testing.assert_allclose(f, f_ref, rtol=1e-12)
    np.testing.assert_allclose(p, p_ref, rtol=1e-9, atol=1e-12 * p_ref.max())


def test_welch_psd_in_single_precision_stays_close_to_scipy_welch():
    # Reference: scipy.signal.welch in double precision; single-precision transforms keep
    # about seven significant digits (IEEE 754 binary32), so 1e-5 of the peak is ample.
    x = np.random.default_rng(7).standard_normal(80_000)
    _, p_ref = signal.welch(x, fs=FS, nperseg=16_000)
    _, p = welch_psd(x.astype(np.float32), FS, 16_000)
    assert p.dtype == np.float64
    np.testing.assert_allclose(p, p_ref, rtol=0, atol=1e-5 * p_ref.max())


@pytest.mark.parametrize("mains", [50.0, 60.0])
def test_remove_hum_equals_scipy_notch_chain(mains):
    # Reference: scipy.signal.iirnotch + scipy.signal.filtfilt at each harmonic in turn.
    x = np.random.default_rng(2).standard_normal(20_000)
    ref = x
    f0 = mains
    while f0 < 900.0:
        b, a = signal.iirnotch(f0, f0 / 1.0, fs=FS)
        ref = signal.filtfilt(b, a, ref)
        f0 += mains
    np.testing.assert_allclose(remove_hum(x, FS, mains), ref, rtol=0, atol=1e-9)


def test_percentiles_equal_numpy():
    # Reference: numpy.percentile (linear interpolation), value for value.
    rng = np.random.default_rng(4)
    q = (0.0, 10.0, 37.3, 50.0, 90.0, 95.0, 100.0)
    for n in (1, 2, 3, 7, 54, 200, 1001):
        for a in (rng.standard_normal(n) ** 2, np.round(rng.standard_normal(n), 1)):
            assert percentiles(a, q) == list(np.percentile(a, q))
    assert np.isnan(percentiles(np.array([]), (90.0,))[0])


def test_despike_counts_each_spike_once():
    x = burst_train(duration_s=8.0)
    spiky = x.copy()
    for t_s, height in ((1.62, 8.0), (2.63, 6.0), (2.9, 7.0), (5.37, 9.0)):
        i = int(t_s * FS)
        spiky[i: i + 3] = [height / 2, height, height / 2]
    cleaned, n = despike(spiky, FS)
    assert n == 4  # two in one 0.5-s window: both found, one after the other
    assert np.max(np.abs(cleaned)) <= np.max(np.abs(x)) + 1e-12
