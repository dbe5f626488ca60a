"""Viterbi decoding of a cyclic four-state hidden semi-Markov model.

The states follow each other in a fixed cycle (S1 -> systole -> S2 -> diastole ->
S1), so every state has exactly one predecessor and the only choice at each
frame is how long the current state has lasted. With ``C`` the cumulative sum of
the log emissions, the best score of a path whose state ``j`` ends at frame ``t``
is (the duration-dependent Viterbi recursion of a hidden semi-Markov model)::

    end[t, j] = max_d  end[t - d, j - 1] + log p_j(d) + C[t, j] - C[t - d, j]

State ``j`` at frame ``t`` needs its predecessor only up to ``t - d_min(j)``, so
the states are advanced in turn, each by a whole block of frames in one numpy step
over all its durations: each round moves every state forward by the sum of the
shortest durations (the shortest possible beat, 15-20 frames at rest).

The first and last segments may be cut by the edges of the recording; their
durations are scored by the survival function ``P(D >= d)`` instead of the
probability mass.

Public functions
----------------
viterbi_cyclic
    Most likely segmentation as arrays of (start frame, end frame, state).
"""

from __future__ import annotations

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
    dmins = np.array([int(np.argmax(finite[j]) + 1) for j in range(n)])
    dmaxs = np.array([int(len(finite[j]) - np.argmax(finite[j][::-1])) for j in range(n)])
    li = np.full(n, -np.log(n)) if log_initial is None else np.asarray(log_initial, float)
    prev = (np.arange(n) - 1) % n

    cum = np.zeros((n_frames + 1, n))
    np.cumsum(e, axis=0, out=cum[1:])
    cum_t = np.ascontiguousarray(cum.T)
    # hp[j, pad + t] = end[t, j - 1] - cum[t, j]: the part of the recursion known at
    # t, padded in front with -inf so that lags before frame 0 need no clipping.
    pad = dmax + 1
    hp = np.full((n, n_frames + 1 + pad), -np.inf)
    end = np.full((n, n_frames + 1), -np.inf)
    back = np.zeros((n, n_frames + 1), dtype=np.int32)  # duration; negative = first segment
    # A first segment, starting at frame 0 and cut by the left edge, may end at
    # any t <= dmax with the survival of its duration.
    n_first = min(dmax, n_frames)
    first = np.full((n, n_frames + 1), -np.inf)
    first[:, 1: n_first + 1] = (li + ls.T[1: n_first + 1] + cum[1: n_first + 1]).T
    durs = [np.arange(dmins[j], dmaxs[j] + 1) for j in range(n)]
    ldj = [ld[j, dmins[j]: dmaxs[j] + 1] for j in range(n)]
    width = int(dmins.sum()) + 1
    # offs[j][r, k] = pad + r - durs[j][k]; row r is frame lo + r.
    offs = [pad + np.arange(width)[:, None] - durs[j][None, :] for j in range(n)]
    frames = np.arange(n_frames + 1)
    rows = [np.arange(width) * len(durs[j]) for j in range(n)]  # flat row offsets
    frontier = np.zeros(n, dtype=int)  # end[j, 1..frontier[j]] is known
    while frontier.min() < n_frames:
        for j in range(n):
            lo = frontier[j] + 1
            hi = min(n_frames, frontier[prev[j]] + dmins[j], lo + width - 1)
            if hi < lo:
                continue
            m = hi - lo + 1
            vals = hp[j].take(offs[j][:m] + lo)
            vals += ldj[j]
            k = vals.argmax(axis=1)
            best = vals.ravel().take(k + rows[j][:m])
            best += cum_t[j, lo: hi + 1]
            if lo <= n_first:
                f = first[j, lo: hi + 1]
                use_first = f > best
                best = np.where(use_first, f, best)
                back[j, lo: hi + 1] = np.where(use_first, -frames[lo: hi + 1], durs[j][k])
            else:
                back[j, lo: hi + 1] = durs[j][k]
            end[j, lo: hi + 1] = best
            nxt = (j + 1) % n
            hp[nxt, pad + lo: pad + hi + 1] = best - cum_t[nxt, lo: hi + 1]
            frontier[j] = hi
    surv_t = ls.T  # (D + 1, N)
    h = hp[:, pad:].T  # (T + 1, N)
    back = back.T

    # The last segment, cut by the right edge.
    d_last = np.arange(1, min(dmax, n_frames) + 1)
    start = n_frames - d_last
    last = h[start] + surv_t[d_last] + cum[n_frames]  # (d, N)
    last[start == 0] = -np.inf
    if n_frames <= dmax:  # one segment covering everything
        whole = li + surv_t[n_frames] + cum[n_frames]
        last[-1] = np.maximum(last[-1], whole) if start[-1] == 0 else last[-1]
    flat = int(np.argmax(last))
    k_d, j = divmod(flat, n)
    score = float(last[k_d, j])
    seg_end, seg_start = n_frames, n_frames - int(d_last[k_d])
    starts, ends, states = [seg_start], [seg_end], [j]
    if seg_start == 0:
        pass
    else:
        while True:
            j = int(prev[j])
            seg_end = seg_start
            bd = int(back[seg_end, j])
            seg_start = 0 if bd < 0 else seg_end - bd
            starts.append(seg_start)
            ends.append(seg_end)
            states.append(j)
            if seg_start == 0:
                break
    return (np.array(starts[::-1], dtype=int), np.array(ends[::-1], dtype=int),
            np.array(states[::-1], dtype=int), score)
