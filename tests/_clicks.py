"""A tiny synthetic heart-sound click train for unit tests of the segmenter.

Our own construction, independent of ``eddyphone.simulate``: S1 is a 100 ms
Hann-windowed 50 Hz tone burst, S2 a 80 ms 90 Hz burst at 0.6 of S1's amplitude,
placed at known onsets; Gaussian noise sets the SNR.
"""

from __future__ import annotations

import numpy as np


def click_train(heart_rate_bpm: float = 72.0, duration_s: float = 12.0, fs: float = 4000.0,
                *, systole_s: float | None = None, rr_jitter: float = 0.0,
                noise_rms: float = 0.02, seed: int = 0):
    """Return ``(x, segments)`` with ``segments`` = list of (start_s, end_s, label)."""
    rng = np.random.default_rng(seed)
    rr_mean = 60.0 / heart_rate_bpm
    n = int(duration_s * fs)
    x = rng.normal(0.0, noise_rms, n)
    t0 = 0.3
    segs = []
    while True:
        rr = rr_mean * (1.0 + rr_jitter * rng.uniform(-1, 1))
        sys = systole_s if systole_s is not None else max(0.42 - 0.0017 * heart_rate_bpm,
                                                          0.45 * rr_mean)
        s1_len, s2_len = 0.10, 0.08
        if t0 + rr + 0.2 > duration_s:
            break
        for onset, length, f0, amp, label in ((t0, s1_len, 50.0, 1.0, "S1"),
                                              (t0 + sys, s2_len, 90.0, 0.6, "S2")):
            i0 = int(onset * fs)
            m = int(length * fs)
            tt = np.arange(m) / fs
            x[i0: i0 + m] += amp * np.hanning(m) * np.sin(2 * np.pi * f0 * tt)
            segs.append((onset, onset + length, label))
        t0 += rr
    return x, segs
