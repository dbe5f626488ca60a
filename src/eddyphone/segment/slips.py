"""Mending a parity slip: the S1/S2 labels turn round part-way through a recording.

When the decoder passes over one sound (or takes one sound for two) every label after
it is mirrored, while the orientation vote of :mod:`eddyphone.segment.orientation`
judges the whole stretch at once and can only keep or mirror all of it. A slip leaves
a gap between sounds about twice as long as the others of its kind. At each such gap
the vote is taken on either side; when the two sides vote clearly against each other,
each side is decoded again on its own and oriented by its own vote.

Public API
----------
mend_slip(path, loglik, tables, tilt, ffs, shipped, signal, min_evidence) -> path
"""

from __future__ import annotations

import numpy as np

from eddyphone.condition import median
from eddyphone.segment.hsmm import viterbi_cyclic
from eddyphone.segment.orientation import swap_evidence

#: A gap between sounds counts as long from this many times the median gap of its kind
#: (S1 to S2, or S2 to S1).
LONG_GAP = 1.5
#: Fewest S1 on each side of a gap for the two votes to be taken.
MIN_BEATS_PER_SIDE = 5

Path = tuple[np.ndarray, np.ndarray, np.ndarray]


Signal = tuple[np.ndarray, int] | None


def _frames(signal: Signal, a: int, b: int) -> Signal:
    """The samples of frames a..b-1 (``signal`` = samples, samples per frame)."""
    return None if signal is None else (signal[0][a * signal[1]: b * signal[1]], signal[1])


def _evidence(path: Path, lo: int, hi: int, tilt: np.ndarray, ffs: float,
              shipped: np.ndarray, signal: Signal) -> float:
    """Orientation vote on the segments lo..hi-1 of ``path`` alone."""
    starts, ends, states = path
    a, b = starts[lo], ends[hi - 1]
    return swap_evidence(starts[lo:hi] - a, ends[lo:hi] - a, states[lo:hi], tilt[a:b], ffs,
                         shipped[a:b], _frames(signal, a, b))


def _slip_gap(path: Path, tilt: np.ndarray, ffs: float, shipped: np.ndarray,
              signal: Signal, min_evidence: float) -> int | None:
    """Index of the first segment after the long gap where the two sides' votes
    disagree most (both at least ``min_evidence`` strong), or None."""
    starts, ends, states = path
    sounds = np.flatnonzero(states % 2 == 0)
    if np.sum(states == 0) < 2 * MIN_BEATS_PER_SIDE:
        return None
    gaps = np.diff(starts[sounds] + ends[sounds]) / 2.0
    kinds = states[sounds][:-1]
    best, best_score = None, min_evidence
    for kind in (0, 2):
        of_kind = kinds == kind
        if of_kind.sum() < 2 * MIN_BEATS_PER_SIDE:
            continue
        for i in np.flatnonzero(of_kind & (gaps > LONG_GAP * median(gaps[of_kind]))):
            j = sounds[i] + 1
            if (np.sum(states[:j] == 0) < MIN_BEATS_PER_SIDE
                    or np.sum(states[j:] == 0) < MIN_BEATS_PER_SIDE):
                continue
            left = _evidence(path, 0, j, tilt, ffs, shipped, signal)
            right = _evidence(path, j, len(starts), tilt, ffs, shipped, signal)
            score = min(abs(left), abs(right))
            if left * right < 0 and score >= best_score:
                best, best_score = j, score
    return best


def _decode_oriented(loglik: np.ndarray, tables, tilt: np.ndarray, ffs: float,
                     shipped: np.ndarray, signal: Signal) -> Path:
    starts, ends, states, _ = viterbi_cyclic(loglik, *tables)
    if swap_evidence(starts, ends, states, tilt, ffs, shipped, signal) < 0:
        states = (states + 2) % 4
    return starts, ends, states


def mend_slip(path: Path, loglik: np.ndarray, tables, tilt: np.ndarray, ffs: float,
              shipped: np.ndarray, signal: Signal,
              min_evidence: float) -> Path:
    """``path`` (oriented as a whole) with a parity slip mended, if there is one.

    Parameters
    ----------
    path : (starts, ends, states)
        The decoding, frames of this stretch.
    loglik, tables
        Emissions and (log duration, log survival) tables it was decoded with.
    tilt, shipped, signal
        What the orientation vote reads (see :func:`~eddyphone.segment.orientation.
        swap_cues`): pitch tilt per frame, the shipped model's emissions and the
        samples with the number per frame.
    min_evidence : float
        How strongly each side must vote against the other.
    """
    j = _slip_gap(path, tilt, ffs, shipped, signal, min_evidence)
    if j is None:
        return path
    cut = int(path[1][j - 1])
    parts = []
    for a, b in ((0, cut), (cut, len(loglik))):
        s, e, k = _decode_oriented(loglik[a:b], tables, tilt[a:b], ffs, shipped[a:b],
                                   _frames(signal, a, b))
        parts.append((s + a, e + a, k))
    return tuple(np.concatenate(p) for p in zip(*parts, strict=True))
