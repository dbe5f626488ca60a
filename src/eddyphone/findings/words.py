"""The trade's words for a murmur from its measures: timing, shape and quality.

Pure functions of fractions, profiles and spectral measures; the measuring is in
:mod:`eddyphone.findings.murmur` (with :mod:`~eddyphone.findings.candidates` and
:mod:`~eddyphone.findings.spectrum`).

Public functions
----------------
timing_word(onset_fraction, end_fraction) -> str
shape_word(profile_db, positions=None) -> (str, float)
quality_words(...) -> tuple of str
"""

from __future__ import annotations

import numpy as np

from eddyphone.findings.config import PITCH_BOUNDARIES_HZ

#: Envelope roughness (fast fluctuation re mean) from which a murmur is harsh. Our
#: own threshold, checked on simulated murmurs: regurgitant ones measure 0.12-0.18,
#: rough ejection ones 0.30-0.41.
HARSH_ROUGHNESS = 0.28

#: Lowest dominant frequency (Hz) at which a murmur can be called musical: the
#: 32-ms analysis frames resolve about 31 Hz, so a tone is only distinguishable from
#: a noise band when its peak is several bins wide apart (our own limit).
MIN_TONAL_HZ = 150.0


def timing_word(onset_fraction: float, end_fraction: float) -> str:
    """Timing word from where the murmur starts and ends in its window (0-1).

    Common practice, on the thirds of the window: ``holo`` from its start to its end
    (here: starts in the first 15 % and ends in the last 15 %, the window being
    trimmed at both sounds); ``late`` when it starts after the first half and runs
    on; ``early`` when it starts with the window and is over by two thirds;
    ``mid`` otherwise.

    Examples
    --------
    >>> timing_word(0.0, 1.0), timing_word(0.0, 0.5), timing_word(0.6, 1.0)
    ('holo', 'early', 'late')
    """
    if onset_fraction <= 0.15 and end_fraction >= 0.85:
        return "holo"
    if onset_fraction >= 0.5:
        return "late"
    if onset_fraction <= 0.25 and end_fraction <= 2.0 / 3.0 + 1e-9:
        return "early"
    return "mid"


def shape_word(profile_db: np.ndarray, positions: np.ndarray | None = None
               ) -> tuple[str, float]:
    """Shape word and a 0-1 confidence from a profile in dB re its peak.

    ``plateau`` when the middle 60 % of the murmur stays within 4 dB of its peak;
    otherwise by where the peak lies: first fifth ``decrescendo``, last fifth
    ``crescendo``, between ``crescendo-decrescendo`` (common practice: the shape is
    the loudness course of the murmur itself, from its start to its end).
    ``positions`` are the bins' centres as fractions (0-1) of the whole window
    (sound to sound) when the profile covers only part of it (default: equal bins
    over the whole window).
    """
    p = np.asarray(profile_db, dtype=float)
    n = len(p)
    if n == 0:
        return "plateau", 0.0
    x = (np.arange(n) + 0.5) / n if positions is None else np.asarray(positions, float)
    mid = p[(x >= 0.2) & (x <= 0.8)]
    if len(mid) == 0:
        mid = p
    pos = _peak_position(p, x, int(np.argmax(p)))
    if mid.min() >= -4.0:
        return "plateau", float(np.clip((mid.min() + 6.0) / 6.0, 0.3, 1.0))
    drop = float(-mid.min())
    conf = float(np.clip((drop - 2.0) / 6.0, 0.3, 1.0))
    if pos <= 0.2:
        return "decrescendo", conf
    if pos >= 0.8:
        return "crescendo", conf
    edge = min(pos - 0.2, 0.8 - pos) / 0.3
    return "crescendo-decrescendo", float(np.clip(conf * (0.5 + edge), 0.3, 1.0))


def _peak_position(p_db: np.ndarray, x: np.ndarray, k: int) -> float:
    """Where the profile peaks, between bin centres: a parabola through the peak bin
    and its neighbours (in dB), moved at most half a bin (common practice for
    locating a sampled peak)."""
    if 0 < k < len(p_db) - 1:
        a, b, c = p_db[k - 1], p_db[k], p_db[k + 1]
        den = a - 2.0 * b + c
        d = float(np.clip(0.5 * (a - c) / den, -0.5, 0.5)) if den < 0 else 0.0
        step = x[k + 1] - x[k] if d > 0 else x[k] - x[k - 1]
        return float(x[k] + d * step)
    return float(x[k])


#: Every quality word a murmur can carry (see :func:`quality_words` and
#: :func:`continuous_words`).
QUALITY_WORDS = ("harsh", "blowing", "rumbling", "musical", "machinery")


def continuous_words(words: tuple[str, ...]) -> tuple[str, ...]:
    """The words of a murmur found to run through S2: ``machinery``, the trade's word
    for the continuous murmur of an open arterial duct (common practice), unless it is
    ``musical``."""
    return words if "musical" in words else ("machinery",)


def quality_words(*, pitch: str, tonality: float, relative_spread: float, roughness: float,
                  tonal_threshold: float, dominant_hz: float = float("inf"),
                  phase: str = "diastolic", centroid_hz: float = float("inf"),
                  timing: str | None = None) -> tuple[str, ...]:
    """Descriptive words from spectral and envelope measures.

    ``musical`` when most excess energy sits in one narrow peak (tonality at or above
    ``tonal_threshold``) at or above :data:`MIN_TONAL_HZ` (below it the 32-ms frames
    cannot tell a tone from a narrow noise band); otherwise ``rumbling`` when
    diastolic and low (the trade keeps the word for diastolic murmurs): low-pitched,
    or not high-pitched with its heard spectrum (``centroid_hz``, as recorded) below
    the low-pitch edge of :data:`~eddyphone.findings.config.PITCH_BOUNDARIES_HZ`,
    except an ``early`` diastolic murmur (over by two thirds of diastole, as a leaking
    outflow valve's murmur, which the trade calls blowing, often is; the rumble is
    mid-diastolic or fills diastole, common practice) unless its heard spectrum lies
    below that edge (a leak that fills diastole is told from a rumble by its pitch
    alone; docs/findings.md, round 7); ``harsh`` when the envelope is rough (fast
    fluctuation at least :data:`HARSH_ROUGHNESS` of its mean), ``blowing`` when
    smoother. Our own rules on the usual meanings: musical = tonal, rumbling = low and
    noisy, harsh = rough, blowing = smooth. ``relative_spread`` (spectral spread over
    centroid) is accepted for callers but not used by the rule.
    """
    if tonality >= tonal_threshold and dominant_hz >= MIN_TONAL_HZ:
        return ("musical",)
    heard_below = centroid_hz < PITCH_BOUNDARIES_HZ[0]
    heard_low = pitch == "medium" and heard_below
    regurgitant = timing == "early" and not heard_below
    if (pitch == "low" or heard_low) and phase == "diastolic" and not regurgitant:
        return ("rumbling",)
    if pitch == "low":
        return ("blowing",)
    if roughness >= HARSH_ROUGHNESS:
        return ("harsh",)
    return ("blowing",)
