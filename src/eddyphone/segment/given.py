"""A segmentation given by the user instead of decoded: a corrected ``segments.csv`` or
a dataset's reference annotation.

Beats and rhythm are computed from the given S1, systole, S2 and diastole intervals
exactly as from the decoder's, so findings, explanations and reports run on them
unchanged; the method names the file they came from.

Public API
----------
segmentation_from_intervals(intervals, duration_s, *, source) -> Segmentation
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

import numpy as np

from eddyphone.errors import InputError
from eddyphone.rhythm import HeartRateEstimate, rhythm_from_beats
from eddyphone.segment import Segmentation
from eddyphone.segment.beats import Segment, beats_from_segments
from eddyphone.segment.durations import STATES

#: Overlap (s) tolerated between neighbouring intervals: hand-made tables and other
#: tools round their boundaries (our own allowance, a frame of the decoder).
OVERLAP_TOLERANCE_S = 0.005
#: Annotations that mark only the sounds (S1 and S2, no systole or diastole rows) get
#: the silences between them filled in: systole from an S1 to the next S2, diastole
#: from an S2 to the next S1, when the gap is shorter than this (s; the longest
#: diastole at 30 bpm, our own bound); a longer gap is a stretch left unannotated.
MAX_FILLED_GAP_S = 2.0
#: Stretches at least this long (s) before the first or after the last given
#: interval are reported as skipped, "not in the given segmentation".
UNCOVERED_MIN_S = 0.5


def segmentation_from_intervals(intervals: Sequence[tuple[float, float, str]],
                                duration_s: float, *, source: str) -> Segmentation:
    """The :class:`~eddyphone.segment.Segmentation` of given intervals.

    Parameters
    ----------
    intervals : sequence of (start_s, end_s, label)
        Labels other than ``S1``, ``systole``, ``S2`` and ``diastole`` (extra sounds,
        murmur spans) are left out. Sound-only annotations (S1 and S2 without systole
        or diastole rows) get the silences between the sounds filled in
        (:data:`MAX_FILLED_GAP_S`).
    duration_s : float
        Length of the recording; every interval must lie within it.
    source : str
        Where the intervals came from (a file name), for the method and for errors.

    Raises
    ------
    InputError
        No cycle intervals, an interval that ends before it starts or lies outside the
        recording, two intervals that overlap, or no beat (S1, systole, S2 in order).
    """
    rows = sorted((float(a), float(b), lab) for a, b, lab in intervals if lab in STATES)
    if not rows:
        raise InputError(source, "holds no S1, systole, S2 or diastole intervals",
                         "label the cycle states S1, systole, S2 and diastole (or map "
                         "other spellings with --segment-labels)")
    for a, b, lab in rows:
        if not (np.isfinite(a) and np.isfinite(b)) or b <= a:
            raise InputError(source, f"the {lab} interval {a:g}-{b:g} s ends before it starts",
                             "give each interval as start_s < end_s")
        if a < -OVERLAP_TOLERANCE_S or b > duration_s + OVERLAP_TOLERANCE_S:
            raise InputError(source, f"the {lab} interval {a:g}-{b:g} s lies outside the "
                             f"{duration_s:.2f}-s recording",
                             "check that the segmentation belongs to this recording")
    for (a0, b0, l0), (a1, _, l1) in zip(rows, rows[1:]):
        if a1 < b0 - OVERLAP_TOLERANCE_S:
            raise InputError(source, f"the {l0} interval {a0:g}-{b0:g} s overlaps the {l1} "
                             f"interval starting at {a1:g} s",
                             "give each moment at most one cycle state")
    if not any(lab in ("systole", "diastole") for _, _, lab in rows):
        rows = _with_silences(rows)
    segments = [Segment(max(a, 0.0), min(b, duration_s), lab) for a, b, lab in rows]
    beats = beats_from_segments(segments, [1.0] * len(segments))
    if not beats:
        raise InputError(source, "holds no S1, systole, S2 run in that order, so no beat",
                         "check the order of the labels (S1, systole, S2, diastole, S1 ...)")
    rr = np.array([bt.rr_s for bt in beats if bt.rr_s is not None])
    systoles = np.array([bt.systole_ms / 1000.0 for bt in beats])
    # the given beats are the estimate too (there is no autocorrelation to check them by)
    given = HeartRateEstimate(60.0 / float(np.median(rr)) if len(rr) else float("nan"),
                              float(np.median(systoles)) if len(systoles) else float("nan"),
                              1.0)
    rhythm = rhythm_from_beats(np.array([bt.s1_onset_s for bt in beats]), rr, systoles, given,
                               beat_confidence=1.0 if beats else 0.0)
    skipped = [(a, b, "not in the given segmentation")
               for a, b in ((0.0, segments[0].start_s), (segments[-1].end_s, duration_s))
               if b - a >= UNCOVERED_MIN_S]
    return Segmentation(tuple(segments), beats, rhythm, tuple(skipped), None,
                        f"given: {Path(source).name}")


def _with_silences(sounds: list[tuple[float, float, str]]) -> list[tuple[float, float, str]]:
    """S1 and S2 rows with systole (S1 to S2) and diastole (S2 to S1) between them."""
    out = []
    for (a0, b0, l0), (a1, _, l1) in zip(sounds, sounds[1:]):
        out.append((a0, b0, l0))
        state = {("S1", "S2"): "systole", ("S2", "S1"): "diastole"}.get((l0, l1))
        if state is not None and 0.0 < a1 - b0 < MAX_FILLED_GAP_S:
            out.append((b0, a1, state))
    return out + sounds[-1:]
