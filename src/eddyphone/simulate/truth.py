"""Ground truth: the schema of ``truth.json`` and the measured murmur profile.

Public names
------------
TRUTH_SCHEMA_VERSION
    Version of the truth-file layout.
SEGMENT_LABELS, EVENT_LABELS, CSV_EXTRA_LABELS
    Labels used in segments, events and truth CSV rows.
profile_fractions
    Onset, peak and end of a murmur as fractions of its phase window.
timing_from_fractions, shape_from_profile
    The rules that turn a measured profile into timing and shape words.
"""

from __future__ import annotations

import numpy as np

TRUTH_SCHEMA_VERSION = "1.0"

SEGMENT_LABELS = ("S1", "systole", "S2", "diastole")

#: Labels of ``Simulated.events``: valve components and extra sounds.
EVENT_LABELS = ("M1", "T1", "A2", "P2", "S3", "S4", "click", "snap")

#: Rows added to ``<id>.truth.csv`` after the segments: extra sounds and murmur spans.
CSV_EXTRA_LABELS = ("S3", "S4", "click", "snap", "murmur")


def profile_fractions(env: np.ndarray, fs: float, t0_s: float, window: tuple[float, float],
                      *, floor: float = 0.1) -> dict | None:
    """Onset, peak and end of an envelope inside a phase window, as fractions 0-1.

    Parameters
    ----------
    env : ndarray
        Amplitude envelope sampled at ``fs``, sample 0 at time ``t0_s``.
    window : (start_s, end_s)
        The phase window (systole or diastole of one beat).
    floor : float
        Onset and end are where the envelope crosses ``floor`` times its peak in the
        window (0.1 = -20 dB).
    """
    a = int(round((window[0] - t0_s) * fs))
    b = int(round((window[1] - t0_s) * fs))
    a, b = max(a, 0), min(b, len(env))
    if b - a < 4:
        return None
    seg = env[a:b]
    peak = seg.max()
    if peak <= 0:
        return None
    above = np.nonzero(seg >= floor * peak)[0]
    n = len(seg)
    # ten-bin profile in dB re the peak, for the shape rule
    bins = np.array_split(seg, 10)
    prof = np.array([20 * np.log10(max(np.sqrt(np.mean(bb**2)), 1e-12) / peak) for bb in bins])
    return {
        "onset": above[0] / n,
        "end": (above[-1] + 1) / n,
        "peak": int(np.argmax(seg)) / n,
        "profile_db": prof,
    }


def timing_from_fractions(onset: float, end: float) -> str:
    """Timing word from onset and end fractions of the phase window.

    Rule (ours): ``holo`` if it starts in the first 10% and ends in the last 10%;
    ``late`` if it starts after the middle; ``early`` if it ends by two thirds;
    otherwise ``mid``.
    """
    if onset <= 0.1 and end >= 0.9:
        return "holo"
    if onset >= 0.5:
        return "late"
    if end <= 0.67:
        return "early"
    return "mid"


def shape_from_profile(profile_db: np.ndarray) -> str:
    """Shape word from a ten-bin profile in dB re its peak.

    Rule (ours): ``plateau`` if the middle 60% stays within 4 dB of the peak; else
    ``decrescendo`` if the loudest bin is among the first two and ``crescendo`` if it
    is among the last two; otherwise ``crescendo-decrescendo``.
    """
    p = np.asarray(profile_db)
    if p[2:8].min() >= -4.0:
        return "plateau"
    k = int(np.argmax(p))
    if k <= 1:
        return "decrescendo"
    if k >= 8:
        return "crescendo"
    return "crescendo-decrescendo"
