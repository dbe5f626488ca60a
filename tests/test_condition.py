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
    remove_hum,
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
