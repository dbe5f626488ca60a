"""Intensity grade range on the six-grade scale, anchored to the heart sounds.

Public functions
----------------
grade_range(level_db_re_heart_sounds) -> (lo, hi)
"""

from __future__ import annotations

import math

from eddyphone.findings.config import GRADE_ANCHORS_DB

#: Highest grade sound alone can support (IV and above need a palpable thrill).
MAX_AUDIO_GRADE = 3


def grade_range(level_db_re_heart_sounds: float,
                anchors_db: dict[str, float] | None = None) -> tuple[int, int]:
    """Plausible grade range from the murmur level relative to S1/S2.

    Parameters
    ----------
    level_db_re_heart_sounds : float
        Murmur peak level minus the level of the louder of S1 and S2 of the same beats, in dB.
    anchors_db : dict, optional
        ``faint``, ``softer`` and ``louder`` edges (default
        :data:`eddyphone.findings.config.GRADE_ANCHORS_DB`).

    Returns
    -------
    (lo, hi) : tuple of int
        Grades on I-VI (1-6); ``hi`` never exceeds :data:`MAX_AUDIO_GRADE`.

    Examples
    --------
    >>> grade_range(-30.0), grade_range(-10.0), grade_range(0.0), grade_range(10.0)
    ((1, 1), (1, 2), (2, 3), (3, 3))
    """
    a = anchors_db or GRADE_ANCHORS_DB
    level = float(level_db_re_heart_sounds)
    if math.isnan(level):
        return (1, MAX_AUDIO_GRADE)
    if level < a["faint"]:
        return (1, 1)
    if level < a["softer"]:
        return (1, 2)
    if level < a["louder"]:
        return (2, 3)
    return (3, MAX_AUDIO_GRADE)
