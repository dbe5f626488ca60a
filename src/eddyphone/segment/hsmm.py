"""Viterbi decoding of a cyclic four-state hidden semi-Markov model.

The states follow each other in a fixed cycle (S1 -> systole -> S2 -> diastole ->
S1), so every state has exactly one predecessor and the only choice at each
frame is how long the current state has lasted. With ``C`` the cumulative sum of
the log emissions, the best score of a path whose state ``j`` ends at frame ``t``
is (the duration-dependent Viterbi recursion of a hidden semi-Markov model)::

    end[t, j] = max_d  end[t - d, j - 1] + log p_j(d) + C[t, j] - C[t - d, j]

The recursion runs frame by frame in a compiled loop (numba): about a microsecond
per frame, where numpy steps over blocks of frames spent most of their time in call
overhead.

The first and last segments may be cut by the edges of the recording; their
durations are scored by the survival function ``P(D >= d)`` instead of the
probability mass.

Public functions
----------------
viterbi_cyclic
    Most likely segmentation as arrays of (start frame, end frame, state).
"""

from __future__ import annotations

import numba
import numpy as np

from eddyphone.errors import ParameterError

N_STATES = 4


def viterbi_cyclic(log_emission: np.ndarray, log_duration: np.ndarray,
                   log_survival: np.ndarray, *, log_initial: np.ndarray | None = None
                   ) -> tuple[np.ndarray, np.ndarray, np.ndarray, float]:
    """Decode the most likely state segmentation of a cyclic HSMM.

    Parameters
    ----------
    log_emission : ndarray, shape (T, N)
        Log emission likelihood of each frame in each state.
    log_duration : ndarray, shape (N, D + 1)
        ``log P(duration = d)`` for ``d = 0 .. D`` frames (``-inf`` where impossible;
        column 0 must be ``-inf``).
    log_survival : ndarray, shape (N, D + 1)
        ``log P(duration >= d)``; used for the segments cut by the edges.
    log_initial : ndarray, shape (N,), optional
        Log probability of the state at frame 0 (uniform by default).

    Returns
    -------
    starts, ends, states : ndarray of int
        Segment ``k`` covers frames ``starts[k] .. ends[k] - 1`` in state ``states[k]``.
    score : float
        Log score of the best path.
    """
    e = np.asarray(log_emission, dtype=float)
    ld = np.asarray(log_duration, dtype=float)
    ls = np.asarray(log_survival, dtype=float)
    if e.ndim != 2 or ld.ndim != 2 or ld.shape != ls.shape or ld.shape[0] != e.shape[1]:
        raise ParameterError(
            f"shapes log_emission={e.shape}, log_duration={ld.shape}, "
            f"log_survival={ls.shape} do not agree; expected (T, N), (N, D+1), (N, D+1)"
        )
    n_frames, n = e.shape
    dmax = ld.shape[1] - 1
    if n_frames == 0 or dmax < 1:
        raise ParameterError(f"need at least one frame and one duration (T={n_frames}, D={dmax})")
    finite = np.isfinite(ld[:, 1:])
    if not finite.any(axis=1).all():
        raise ParameterError("every state needs at least one possible duration")
    dmins = finite.argmax(axis=1) + 1
    dmaxs = finite.shape[1] - finite[:, ::-1].argmax(axis=1)
    li = np.full(n, -np.log(n)) if log_initial is None else np.asarray(log_initial, float)
    starts, ends, states, score = _decode(np.ascontiguousarray(e), ld, ls, li, dmins, dmaxs)
    return starts, ends, states, float(score)


@numba.njit(cache=True, nogil=True)
def _decode(e: np.ndarray, ld: np.ndarray, ls: np.ndarray, li: np.ndarray,
            dmins: np.ndarray, dmaxs: np.ndarray
            ) -> tuple[np.ndarray, np.ndarray, np.ndarray, float]:
    """The recursion, the choice of the last (right-edge) segment and the backtrack."""
    t_total, n = e.shape
    dmax = ld.shape[1] - 1
    cum_t = np.zeros((n, t_total + 1))
    for j in range(n):
        acc = 0.0
        for t in range(t_total):
            acc += e[t, j]
            cum_t[j, t + 1] = acc
    end, back = _forward(cum_t, ld, ls, li, dmins, dmaxs)
    # The last segment, cut by the right edge: state j over the last d frames, scored by
    # survival; over all frames (start 0) only when no full duration fits before it.
    best, best_d, best_j = -np.inf, 1, 0
    for d in range(1, min(dmax, t_total) + 1):
        start = t_total - d
        for j in range(n):
            if start == 0:
                v = li[j] + ls[j, t_total] + cum_t[j, t_total]
            else:
                v = end[(j - 1) % n, start] - cum_t[j, start] + ls[j, d] + cum_t[j, t_total]
            if v > best:
                best, best_d, best_j = v, d, j
    starts, ends, states = _backtrack(back, t_total - best_d, t_total, best_j)
    return starts, ends, states, best


@numba.njit(cache=True, nogil=True)
def _forward(cum_t: np.ndarray, ld: np.ndarray, ls: np.ndarray, li: np.ndarray,
             dmins: np.ndarray, dmaxs: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Best score ``end[j, t]`` of a path whose state ``j`` ends at frame ``t``.

    ``back[j, t]`` holds the duration of that last segment, or ``-t`` when it is the
    first segment (starting at frame 0, cut by the left edge, scored by survival).
    """
    n, t_total = cum_t.shape[0], cum_t.shape[1] - 1
    dmax = ld.shape[1] - 1
    end = np.full((n, t_total + 1), -np.inf)
    back = np.zeros((n, t_total + 1), dtype=np.int32)
    for t in range(1, t_total + 1):
        for j in range(n):
            p = (j - 1) % n
            best = -np.inf
            arg = 0
            hi = min(dmaxs[j], t - 1)
            for d in range(dmins[j], hi + 1):
                v = end[p, t - d] + ld[j, d] - cum_t[j, t - d]
                if v > best:
                    best = v
                    arg = d
            best += cum_t[j, t]
            if t <= dmax:
                f = li[j] + ls[j, t] + cum_t[j, t]
                if f > best:
                    best = f
                    arg = -t
            end[j, t] = best
            back[j, t] = arg
    return end, back


@numba.njit(cache=True, nogil=True)
def _backtrack(back: np.ndarray, seg_start: int, seg_end: int, j: int
               ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Segments of the best path, in time order, from its last segment back to frame 0."""
    n = back.shape[0]
    starts = [seg_start]
    ends = [seg_end]
    states = [j]
    while seg_start > 0:
        j = (j - 1) % n
        seg_end = seg_start
        bd = back[j, seg_end]
        seg_start = 0 if bd < 0 else seg_end - bd
        starts.append(seg_start)
        ends.append(seg_end)
        states.append(j)
    return (np.array(starts[::-1], dtype=np.int64), np.array(ends[::-1], dtype=np.int64),
            np.array(states[::-1], dtype=np.int64))
