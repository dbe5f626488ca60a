"""Murmur candidates: in each window, the strongest run of bins whose excess stands
out of the recording's quiet level, told from a transient (S3, S4, click, snap or a
sound's tail) by how long it stays near its peak.

Public functions
----------------
find_candidates(M, active, X, dur_s, cfg, rejected) -> list of Candidate
judge_run(M, w, bands, s, e, bin_s, dur_s, cfg) -> (Candidate or None, ...)
runs(mask), fill_gaps(mask) -> runs of true bins, small gaps bridged
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from eddyphone.findings.config import FindingsConfig
from eddyphone.findings.measures import DIA, PHASES, SYS


def fill_gaps(mask: np.ndarray, gap: int = 1) -> np.ndarray:
    """``mask`` with gaps of at most ``gap`` bins between true bins filled."""
    m = mask.copy()
    idx = np.flatnonzero(m)
    for a, b in zip(idx[:-1], idx[1:]):
        if 1 < b - a <= gap + 1:
            m[a:b] = True
    return m


def runs(mask: np.ndarray) -> list[tuple[int, int]]:
    """Start and end (exclusive) of each run of true bins in ``mask``."""
    edges = np.flatnonzero(np.diff(np.concatenate([[0], mask.astype(int), [0]])))
    return [(int(a), int(b)) for a, b in zip(edges[::2], edges[1::2])]


def _contiguous_block(bands: list[int], top: int) -> list[int]:
    """The run of consecutive band indices in ``bands`` that holds ``top``: a
    turbulent murmur's spectrum is smooth, so its excess over the same recording's
    floor does not skip an octave band; bands standing out beyond a gap belong to
    another sound (our own rule)."""
    out = [top]
    while out[0] - 1 in bands:
        out.insert(0, out[0] - 1)
    while out[-1] + 1 in bands:
        out.append(out[-1] + 1)
    return out


@dataclass(frozen=True)
class Candidate:
    """A run of active bins in one window that may be a murmur: its window (``SYS`` or
    ``DIA``), the bands that carry it, its bins ``k0:k1`` and its peak excess (dB)."""

    window: int
    bands: tuple[int, ...]
    k0: int
    k1: int  # exclusive
    peak_db: float


def judge_run(M: np.ndarray, w: int, bands: list[int], s: int, e: int, bin_s: float,
              dur_s: np.ndarray, cfg: FindingsConfig
              ) -> tuple[Candidate | None, float, bool, np.ndarray]:
    """A run of active bins judged as a murmur: the candidate (or None when it is a
    transient), how long it stays within 6 dB of its peak, whether it lies below
    150 Hz only, and its excess in dB averaged over its bands."""
    # bands that carry it (within 15 dB of its strongest band); nothing above
    # 150 Hz means it sounds like S3, S4 or a sound tail
    peak_b = M[w][bands][:, s:e].max(axis=1)
    top = bands[int(np.argmax(peak_b))]
    bands = [b for b, pk in zip(bands, peak_b) if pk >= peak_b.max() - 15.0]
    # ... around the strongest without a gap (a band between counts when it stands
    # out of its floor in the run, even more than 15 dB under the strongest)
    raised = {b for b in range(M.shape[1]) if M[w][b, s:e].max() >= cfg.excess_db}
    block = _contiguous_block(sorted(raised | set(bands)), top)
    bands = [b for b in bands if b in block]
    # how long it stays within 6 dB of its peak, on its excess in dB averaged
    # over those bands (a power sum lets one loud band and bin, such as a heart
    # sound's tail at the window's edge, make a long murmur look short)
    mdb = M[w][bands][:, s:e].mean(axis=0)
    sustained_s = int(np.sum(mdb >= mdb.max() - 6.0)) * bin_s
    low_only = max(bands) <= 1
    need = (min(cfg.min_low_murmur_s, 0.5 * dur_s[w]) if low_only
            else min(cfg.min_sustained_s, 0.25 * dur_s[w]))
    if sustained_s < need:
        return None, sustained_s, low_only, mdb
    return (Candidate(w, tuple(bands), s, e, float(M[w][bands][:, s:e].max())),
            sustained_s, low_only, mdb)


def find_candidates(M: np.ndarray, active: np.ndarray, X: np.ndarray, dur_s: np.ndarray,
                    cfg: FindingsConfig, rejected: list[str]) -> list[Candidate]:
    """The murmur candidate of each window: the run of active bins (``active``, per
    window, band and bin) with the most excess power (``X``), judged by
    :func:`judge_run` against a transient; what is set aside is said in ``rejected``."""
    n_bins = M.shape[2]
    n_min = 2
    out = []
    for w in (SYS, DIA):
        act = active[w]
        bands = []
        for b in range(M.shape[1]):
            band_runs = runs(fill_gaps(act[b]))
            if band_runs and max(e - s for s, e in band_runs) >= n_min:
                bands.append(b)
        if not bands:
            continue
        union = fill_gaps(act[bands].any(axis=0))
        s, e = max(runs(union), key=lambda r: (X[w, r[0]:r[1]].sum(), r[1] - r[0]))
        bin_s = dur_s[w] / n_bins
        # absolute durations, shortened in short windows (fast rates)
        shortest = min(cfg.min_murmur_s, 0.4 * dur_s[w])
        if e - s < 2 or (e - s) * bin_s < shortest:
            continue
        cand, sustained_s, low_only, mdb = judge_run(M, w, bands, s, e, bin_s, dur_s, cfg)
        if cand is None:
            # the run's loudest part is a transient (an S3, S4, click or snap in the
            # same window as a murmur): set it aside with a bin on each side and
            # judge what is left of the run on its own
            loud = np.flatnonzero(mdb >= mdb.max() - 6.0)
            a0, a1 = s + max(int(loud[0]) - 1, 0), s + min(int(loud[-1]) + 2, e - s)
            pieces = [(p0, p1) for p0, p1 in ((s, a0), (a1, e))
                      if p1 - p0 >= 2 and (p1 - p0) * bin_s >= shortest]
            for p0, p1 in sorted(pieces, key=lambda r: -X[w, r[0]:r[1]].sum()):
                cand = judge_run(M, w, bands, p0, p1, bin_s, dur_s, cfg)[0]
                if cand is not None:
                    break
        if cand is None:
            rejected.append(f"a short {'low-pitched ' if low_only else ''}{PHASES[w]} "
                            f"transient ({sustained_s * 1000:.0f} ms within 6 dB of its "
                            "peak) is not counted as a murmur")
            continue
        out.append(cand)
    return out
