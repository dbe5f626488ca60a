"""Shared fixtures: small synthetic heart-sound-like signals written inside the tests."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

REPO = Path(__file__).resolve().parents[1]
SHARED_DATA = REPO.parent / "shared" / "data"
SAMPLE_AUDIO = REPO / "sample_audio"


def burst_train(duration_s: float = 8.0, fs: float = 4000.0, *, rr_s: float = 0.8,
                seed: int = 0, amplitude: float = 0.5) -> np.ndarray:
    """Pairs of short noise bursts (S1-like, S2-like) every ``rr_s`` s, peak ``amplitude``."""
    rng = np.random.default_rng(seed)
    t = np.arange(int(duration_s * fs)) / fs
    x = np.zeros_like(t)
    for onset in np.arange(0.1, duration_s - 0.5, rr_s):
        for offset in (0.0, 0.35 * rr_s):
            m = (t >= onset + offset) & (t < onset + offset + 0.06)
            x[m] += rng.standard_normal(m.sum()) * np.hanning(m.sum())
    return amplitude * x / np.max(np.abs(x))


@pytest.fixture
def heart_like() -> np.ndarray:
    return burst_train()


def murmur_record(**kw):
    """A murmur record with plausible values; keyword arguments override them."""
    from eddyphone.findings.records import GRADE_NOTE, Murmur

    base = dict(id="m1", phase="diastolic", presence="present", confidence=0.9,
                timing="early", timing_confidence=0.8, shape="decrescendo",
                shape_confidence=0.7, pitch="low", dominant_frequency_hz=188.0,
                centroid_hz=200.0, quality_words=("blowing",), consistency=0.9,
                grade_range=(1, 1), grade_note=GRADE_NOTE, level_db_re_heart_sounds=-18.0,
                peak_fraction=0.1, beats_with_murmur=14, beats_used=15, profile=(1.0, 0.3))
    base.update(kw)
    return Murmur(**base)
