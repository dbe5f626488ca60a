"""The beats table: one row per S1-systole-S2 triple found in the segments.

Public API
----------
Beat
beats_from_segments
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import asdict, dataclass

import numpy as np


@dataclass(frozen=True)
class Segment:
    """One labelled interval: ``label`` is ``S1``, ``systole``, ``S2`` or ``diastole``."""

    start_s: float
    end_s: float
    label: str

    def to_dict(self) -> dict:
        """JSON-ready values."""
        return {"start_s": round(float(self.start_s), 4), "end_s": round(float(self.end_s), 4),
                "label": self.label}


@dataclass(frozen=True)
class Beat:
    """One cardiac cycle.

    The systolic window for murmur analysis is ``s1_offset_s .. s2_onset_s``; the
    diastolic window is ``s2_offset_s .. next_s1_onset_s``.

    Attributes
    ----------
    index : int
        Beat number, from 0, in time order.
    s1_onset_s, s1_offset_s, s2_onset_s, s2_offset_s : float
        Sound boundaries in seconds from the start of the recording.
    next_s1_onset_s : float or None
        Onset of the following S1 when it directly follows this beat's diastole.
    rr_s : float or None
        ``next_s1_onset_s - s1_onset_s``.
    systole_ms : float
        S1 onset to S2 onset, in ms.
    diastole_ms : float or None
        S2 onset to the next S1 onset, in ms.
    confidence : float
        0-1: how strongly the frames support this beat's sounds and silences.
    """

    index: int
    s1_onset_s: float
    s1_offset_s: float
    s2_onset_s: float
    s2_offset_s: float
    next_s1_onset_s: float | None
    rr_s: float | None
    systole_ms: float
    diastole_ms: float | None
    confidence: float

    def to_dict(self) -> dict:
        """JSON-ready values (seconds to 0.1 ms, milliseconds to 0.1 ms)."""
        out = {}
        for key, value in asdict(self).items():
            if value is None or key == "index":
                out[key] = value
            elif key.endswith("_ms"):
                out[key] = round(float(value), 1)
            elif key == "confidence":
                out[key] = round(float(value), 3)
            else:
                out[key] = round(float(value), 4)
        return out


def beats_from_segments(segments: Sequence[Segment], segment_scores: Sequence[float],
                        cut_onsets_s: Sequence[float] = ()) -> tuple[Beat, ...]:
    """Find every S1, systole, S2 run and describe it as a beat.

    Parameters
    ----------
    segments : sequence of Segment
        In time order; gaps (skipped windows) break the cycle.
    segment_scores : sequence of float
        A 0-1 support score for each segment (mean frame probability of its kind:
        sound for S1/S2, silence for systole/diastole).
    cut_onsets_s : sequence of float
        Starts of the decoded stretches: an S1 starting there was cut by the edge of
        the recording or of a skipped window, so its onset (and the beat's RR and
        systole) is unknown and the beat is left out.

    Returns
    -------
    tuple of Beat
    """
    segs = list(segments)
    log_scores = np.log(np.clip(np.asarray(segment_scores, dtype=float), 1e-6, 1.0)).tolist()
    out: list[Beat] = []
    tol = 1e-6
    cut = sorted(float(v) for v in cut_onsets_s)
    for i in range(len(segs) - 2):
        s1, sys, s2 = segs[i], segs[i + 1], segs[i + 2]
        if (s1.label, sys.label, s2.label) != ("S1", "systole", "S2"):
            continue
        if any(abs(c - s1.start_s) <= tol for c in cut):
            continue
        if abs(s1.end_s - sys.start_s) > tol or abs(sys.end_s - s2.start_s) > tol:
            continue
        nxt = None
        used = [i, i + 1, i + 2]
        if i + 4 < len(segs):
            dia, s1n = segs[i + 3], segs[i + 4]
            if (dia.label == "diastole" and s1n.label == "S1"
                    and abs(s2.end_s - dia.start_s) <= tol and abs(dia.end_s - s1n.start_s) <= tol):
                nxt = s1n.start_s
                used.append(i + 3)
        # geometric mean of the segments' support
        conf = min(1.0, math.exp(sum(log_scores[k] for k in used) / len(used)))
        out.append(Beat(
            index=len(out),
            s1_onset_s=s1.start_s,
            s1_offset_s=s1.end_s,
            s2_onset_s=s2.start_s,
            s2_offset_s=s2.end_s,
            next_s1_onset_s=nxt,
            rr_s=None if nxt is None else nxt - s1.start_s,
            systole_ms=1000.0 * (s2.start_s - s1.start_s),
            diastole_ms=None if nxt is None else 1000.0 * (nxt - s2.start_s),
            confidence=conf,
        ))
    return tuple(out)
