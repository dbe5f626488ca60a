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
murmur_to_noise_db
    What the recording carries: the murmur over the noise in its spans, best band.
audibility
    Whether the recording carries the murmur at all, and why not.
"""

from __future__ import annotations

import numpy as np

TRUTH_SCHEMA_VERSION = "1.1"

SEGMENT_LABELS = ("S1", "systole", "S2", "diastole")

#: Labels of ``Simulated.events``: valve components and extra sounds.
EVENT_LABELS = ("M1", "T1", "A2", "P2", "S3", "S4", "click", "snap")

#: Bands (Hz) in which the recorded murmur-to-noise ratio is measured: octave-wide
#: from 75 Hz, over 25-900 Hz where heart sounds and murmurs lie (our own convention;
#: equal to the findings' analysis bands when it was set, but kept here so that the
#: benchmark's definition of a carried murmur does not move when the findings' bands
#: change).
MNR_BANDS_HZ = ((25.0, 75.0), (75.0, 150.0), (150.0, 300.0), (300.0, 600.0),
                (600.0, 900.0))

#: Recorded murmur-to-noise ratio (dB, best band) from which a murmur counts as
#: carried by the recording: its power at least equals the noise's in some band
#: while it sounds (our own convention).
MIN_MURMUR_TO_NOISE_DB = 0.0

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


def murmur_to_noise_db(murmur: np.ndarray, noise: np.ndarray, fs: float,
                       spans: list[tuple[float, float]] | list[list[float]]) -> float | None:
    """Recorded murmur-to-noise power ratio (dB) inside the murmur's spans, in the best
    of :data:`MNR_BANDS_HZ` (what a band-selective listener could get).

    ``murmur`` and ``noise`` are the parts as recorded (after chest wall, device and
    gain). Bands reaching past 0.45 ``fs`` are skipped. ``None`` without spans or
    murmur.
    """
    from eddyphone.condition import bandpass

    if not len(spans) or not np.any(murmur):
        return None
    sel = np.zeros(len(murmur), dtype=bool)
    for a, b in spans:
        sel[int(a * fs): int(b * fs)] = True
    if not sel.any():
        return None
    best = -np.inf
    for lo, hi in MNR_BANDS_HZ:
        if hi > 0.45 * fs:
            continue
        mb, nb = bandpass(murmur, fs, (lo, hi)), bandpass(noise, fs, (lo, hi))
        best = max(best, float(10 * np.log10(max(np.mean(mb[sel] ** 2), 1e-30)
                                             / max(np.mean(nb[sel] ** 2), 1e-30))))
    return best


def audibility(level_db_re_s1: float, mnr_db: float | None,
               grade_i_edge_db: float) -> tuple[bool, str]:
    """Whether the recording carries the murmur, and the reason when it does not.

    Carried when its level reaches the grade I edge (``grade_i_edge_db`` re S1) and
    its recorded murmur-to-noise ratio reaches :data:`MIN_MURMUR_TO_NOISE_DB`;
    otherwise ``'below grade I'`` or ``'buried in noise'`` (both: the first).
    """
    if not np.isfinite(level_db_re_s1) or level_db_re_s1 < grade_i_edge_db:
        return False, "below grade I"
    if mnr_db is None or mnr_db < MIN_MURMUR_TO_NOISE_DB:
        return False, "buried in noise"
    return True, ""
