"""Cycle segmentation: S1, systole, S2 and diastole of every beat.

A duration-dependent hidden semi-Markov model (published method: Schmidt et al.
2010, Springer et al. 2016) decoded by Viterbi over relative envelope features.
State durations are conditioned on the heart rate and systolic interval found
by the autocorrelation of the homomorphic envelope; a second pass re-decodes
with the RR spread measured in the first, so irregular rhythms still segment.
Windows that quality marked unusable are skipped and reported.

Public API
----------
segment(x, fs, *, quality=None, config=SegmentConfig()) -> Segmentation
SegmentConfig, Segmentation, Segment, Beat
"""

from __future__ import annotations

from dataclasses import asdict, dataclass

import numpy as np

from eddyphone.condition import median, percentiles
from eddyphone.envelope import Envelopes, envelopes
from eddyphone.errors import InputError, ParameterError
from eddyphone.physiology import systolic_interval_s
from eddyphone.rhythm import (
    IRREGULAR_RR_CV,
    HeartRateEstimate,
    Rhythm,
    period_candidates,
    rhythm_from_beats,
)
from eddyphone.segment.beats import Beat, Segment, beats_from_segments
from eddyphone.segment.durations import STATES, duration_tables, state_durations
from eddyphone.segment.emissions import FEATURE_NAMES, EmissionModel, frame_features
from eddyphone.segment.halving import (
    EVEN_SOUNDS_SD,
    looks_halved,
    sound_separation,
)
from eddyphone.segment.halving import sound_intervals as _intervals
from eddyphone.segment.hsmm import viterbi_cyclic
from eddyphone.segment.support import fold_doubtful_beats, segment_support

__all__ = ["Beat", "Segment", "SegmentConfig", "Segmentation", "segment"]

METHOD = "hsmm-viterbi/logistic-emissions/v1"


@dataclass(frozen=True)
class SegmentConfig:
    """Segmentation settings.

    Attributes
    ----------
    feature_fs : float
        Feature frame rate in Hz (50: one frame per 20 ms).
    min_bpm, max_bpm : float
        Heart-rate search range of the autocorrelation.
    s1_duration_s, s2_duration_s : (float, float)
        Mean and sd of the S1 and S2 durations (Schmidt et al. 2010, from memory:
        122 +/- 22 ms and 92 +/- 22 ms).
    systole_sd_s : float
        Spread of the systole (S1 end to S2 start) duration, plus 5 % of its mean.
    diastole_sd_fraction, diastole_sd_floor_s : float
        Diastole duration sd = fraction * mean + floor (before the RR spread is added).
    duration_floor_weight : float
        Weight of a uniform floor mixed into every duration law (robustness to
        premature beats and pauses).
    irregular_rr_cv : float
        RR coefficient of variation above which the rhythm is flagged irregular.
    refine_hr_change : float
        Relative change of heart rate between the autocorrelation and the first
        decoding that triggers a second decoding with the measured rate.
    chunk_s, overlap_s : float
        Long runs are decoded in chunks of ``chunk_s`` overlapping by ``overlap_s``
        (heart rate re-estimated per chunk; memory stays bounded).
    min_run_s : float
        Usable stretches shorter than this are skipped (too short for a rhythm).
    adapt_weight : float
        Weight (0-1) of emissions re-fitted to the recording's own first decoding
        (0 switches this adaptation off).
    diastole_tail_periods : float
        The diastole may last up to this many beat periods beyond its mean (carried
        by the uniform floor), so a pause or a long cycle of an irregular rhythm is
        not filled with an invented beat.
    regular_diastole_tail_periods : float
        The same for a rhythm decoded as regular (no RR spread): long enough for a
        premature beat's compensatory pause (about 0.3-0.5 of a period beyond the
        mean diastole), too short to pass over a whole beat whose sounds are faint.
    doubtful_beat_support, doubtful_beat_margin : float
        In an irregular rhythm a beat whose support (0-1, geometric mean of its
        segments' frame support) is below ``doubtful_beat_support`` and at least
        ``doubtful_beat_margin`` below the median beat is folded into the diastole,
        unless that would leave an interval longer than ``doubtful_beat_max_merged_rr``
        median RR (then the beat is more likely real and weak).
    emission_model : str or None
        Path of an emission model JSON; None uses the shipped model.
    missed_sound_cost : float
        Competing rates are scored by the mean frame log-likelihood of their decoding
        less this times the fraction of its systoles and diastoles that hold a sound
        it left unlabelled (half the true rate leaves whole S1-S2 pairs there; a
        murmur or an S3 leaves less).
    half_rate_margin : float
        A decoding that looks like one sound per beat read as S1 + S2 (see
        ``halving.looks_halved``) gives way to the doubled rate unless that scores
        more than this below it (same score, per frame).
    """

    feature_fs: float = 50.0
    min_bpm: float = 40.0
    max_bpm: float = 200.0
    s1_duration_s: tuple[float, float] = (0.122, 0.022)
    s2_duration_s: tuple[float, float] = (0.092, 0.022)
    systole_sd_s: float = 0.025
    diastole_sd_fraction: float = 0.07
    diastole_sd_floor_s: float = 0.02
    duration_floor_weight: float = 0.03
    irregular_rr_cv: float = IRREGULAR_RR_CV
    refine_hr_change: float = 0.05
    chunk_s: float = 60.0
    overlap_s: float = 6.0
    min_run_s: float = 2.5
    adapt_weight: float = 0.5
    diastole_tail_periods: float = 1.0
    regular_diastole_tail_periods: float = 0.7
    doubtful_beat_support: float = 0.7
    doubtful_beat_margin: float = 0.15
    doubtful_beat_max_merged_rr: float = 1.6
    emission_model: str | None = None
    missed_sound_cost: float = 0.3
    half_rate_margin: float = 0.15

    def __post_init__(self) -> None:
        if not 10.0 <= self.feature_fs <= 500.0:
            raise ParameterError(f"feature_fs={self.feature_fs} must lie in 10-500 Hz")
        if not 20.0 <= self.min_bpm < self.max_bpm <= 300.0:
            raise ParameterError(
                f"min_bpm={self.min_bpm}, max_bpm={self.max_bpm} must satisfy "
                "20 <= min_bpm < max_bpm <= 300")
        if self.chunk_s < 4 * self.overlap_s or self.overlap_s < 2.0:
            raise ParameterError(
                f"chunk_s={self.chunk_s} must be at least 4 x overlap_s={self.overlap_s}, "
                "and overlap_s at least 2 s")
        if not 0.0 <= self.duration_floor_weight < 0.5:
            raise ParameterError(
                f"duration_floor_weight={self.duration_floor_weight} must lie in [0, 0.5)")


@dataclass(frozen=True)
class Segmentation:
    """Result of :func:`segment`.

    Attributes
    ----------
    segments : tuple of Segment
        In time order.
    beats : tuple of Beat
    rhythm : Rhythm
    skipped : tuple of (start_s, end_s, reason)
        Stretches not segmented and why.
    feature_fs : float
        Frame rate of the decoder in Hz (boundaries are multiples of its period).
    method : str
    """

    segments: tuple[Segment, ...]
    beats: tuple[Beat, ...]
    rhythm: Rhythm
    skipped: tuple[tuple[float, float, str], ...]
    feature_fs: float
    method: str

    def segment_rows(self) -> list[tuple[float, float, str]]:
        """``(start_s, end_s, label)`` rows for ``segments.csv``."""
        return [(s.start_s, s.end_s, s.label) for s in self.segments]

    def to_dict(self) -> dict:
        """JSON-ready values."""
        return {
            "method": self.method,
            "feature_fs_hz": self.feature_fs,
            "rhythm": self.rhythm.to_dict(),
            "segments": [s.to_dict() for s in self.segments],
            "beats": [b.to_dict() for b in self.beats],
            "skipped": [{"start_s": round(a, 4), "end_s": round(b, 4), "reason": r}
                        for a, b, r in self.skipped],
        }


# --- envelopes of long signals in blocks ---------------------------------------------

_BLOCK_S = 60.0
_MARGIN_S = 2.0


def _envelopes_blockwise(x: np.ndarray, fs: float, feature_fs: float) -> Envelopes:
    hop = max(1, int(round(fs / feature_fs)))
    block = int(_BLOCK_S * fs) // hop * hop
    if len(x) <= block + 2 * int(_MARGIN_S * fs):
        return envelopes(x, fs, feature_fs=feature_fs)
    margin = int(_MARGIN_S * fs) // hop * hop
    n_frames = len(x) // hop
    parts: dict[str, list[np.ndarray]] = {k: [] for k in
                                          ("homomorphic", "hilbert", "shannon", "low_band",
                                           "mid_band")}
    for a in range(0, n_frames * hop, block):
        b = min(a + block, n_frames * hop)
        lo, hi = max(0, a - margin), min(len(x), b + margin)
        env = envelopes(x[lo:hi], fs, feature_fs=feature_fs)
        first = (a - lo) // hop
        count = (b - a) // hop
        for k in parts:
            parts[k].append(getattr(env, k)[first: first + count])
    return Envelopes(**{k: np.concatenate(v) for k, v in parts.items()},
                     feature_fs=fs / hop)


# --- decoding of one chunk ------------------------------------------------------------

@dataclass(frozen=True)
class _Decoded:
    starts: np.ndarray  # frames, relative to the chunk
    ends: np.ndarray
    states: np.ndarray
    estimate: HeartRateEstimate


def _tables(hr: float, sys_s: float, rr_spread_s: float, ffs: float, cfg: SegmentConfig):
    laws = state_durations(hr, sys_s, s1_s=cfg.s1_duration_s, s2_s=cfg.s2_duration_s,
                           systole_sd_s=cfg.systole_sd_s,
                           diastole_sd_fraction=cfg.diastole_sd_fraction,
                           diastole_sd_floor_s=cfg.diastole_sd_floor_s,
                           rr_spread_s=rr_spread_s,
                           diastole_tail_s=(cfg.diastole_tail_periods if rr_spread_s > 0
                                            else cfg.regular_diastole_tail_periods) * 60.0 / hr)
    return duration_tables(laws, ffs, floor_weight=cfg.duration_floor_weight)


def _swap_evidence(starts: np.ndarray, ends: np.ndarray, states: np.ndarray,
                   tilt: np.ndarray, ffs: float, loglik: np.ndarray | None = None) -> float:
    """Evidence (> 0) that the decoded S1/S2 labels are the right way round."""
    return sum(_swap_cues(starts, ends, states, tilt, ffs, loglik).values())


def _winsorised_sd(v: np.ndarray) -> float:
    """Standard deviation with values beyond the 10th and 90th percentiles pulled in to
    them: a premature beat or two does not decide it, and unlike a median it does not
    fall to zero on 20-ms frames."""
    lo, hi = percentiles(v, (10.0, 90.0))
    return float(np.std(np.clip(v, lo, hi)))


def _swap_cues(starts: np.ndarray, ends: np.ndarray, states: np.ndarray,
               tilt: np.ndarray, ffs: float, loglik: np.ndarray | None = None
               ) -> dict[str, float]:
    """The cues of :func:`_swap_evidence`, each > 0 for the labels as decoded.

    Four cues, each clipped to +/-3: timing (systole shorter than diastole by the
    margin the Weissler regression expects at this rate), stability (the systolic
    interval varies less than the diastolic one when the rhythm varies; spreads
    winsorised at 10/90 %, so a few premature beats cannot turn it), pitch (S2
    is higher-pitched than S1, common practice) and the emission model (log
    likelihood of the labels against the mirrored labels, per beat). The decoded
    sound durations are no cue: the duration laws give S1 the longer mean, so
    whichever sound is labelled S1 comes out longer.
    """
    sys, dia = _intervals(starts, states, ffs)
    if len(sys) < 2 or len(dia) < 2:
        return {}
    frame_state = np.repeat(states, ends - starts)
    emission = 0.0
    if loglik is not None:
        rows = np.arange(len(frame_state))
        diff = float(np.sum(loglik[rows, frame_state])
                     - np.sum(loglik[rows, (frame_state + 2) % 4]))
        emission = float(np.clip(diff / max(len(sys), 1), -3, 3))
    sys_m, dia_m = median(sys), median(dia)
    hr = 60.0 / (sys_m + dia_m)
    sys_reg = systolic_interval_s(float(np.clip(hr, 20.0, 250.0)))[0]
    expected = (60.0 / hr - sys_reg) - sys_reg
    timing = 0.0
    if abs(expected) >= 0.05:
        timing = float(np.clip((dia_m - sys_m) / 0.08, -3, 3)) * np.sign(expected)
    stability = 0.0
    sd_s, sd_d = _winsorised_sd(sys), _winsorised_sd(dia)
    if len(sys) >= 4 and max(sd_s, sd_d) > 0.015:
        stability = float(np.clip(np.log((sd_d + 0.005) / (sd_s + 0.005)) / 0.5, -3, 3))
    m1, m2 = tilt[frame_state == 0], tilt[frame_state == 2]
    pitch = 0.0
    if len(m1) and len(m2):
        pitch = float(np.clip((np.mean(m2) - np.mean(m1)) / 0.3, -3, 3))
    return {"timing": timing, "stability": stability, "pitch": pitch, "emission": emission}


def _refine(starts, states, est: HeartRateEstimate, ffs: float, cfg: SegmentConfig):
    """Duration tables for a second pass, from the rate, systolic interval and RR
    spread of the first (None when they agree with the first pass's assumptions)."""
    s1 = starts[(states == 0) & (starts > 0)]
    if len(s1) < 3:
        return None
    rr = np.diff(s1) / ffs
    rr_mean = float(np.mean(rr))
    hr = 60.0 / rr_mean
    cv = float(np.std(rr) / rr_mean)
    sys, _ = _intervals(starts, states, ffs)
    sys = sys[sys < 0.8 * rr_mean]
    sys_s = median(sys) if len(sys) else est.systolic_interval_s
    if (abs(hr - est.heart_rate_bpm) <= cfg.refine_hr_change * est.heart_rate_bpm
            and cv <= 0.5 * cfg.irregular_rr_cv
            and abs(sys_s - est.systolic_interval_s) <= 0.04):
        return None
    hr = float(np.clip(hr, cfg.min_bpm * 0.9, cfg.max_bpm * 1.1))
    spread = float(np.std(rr)) if cv > 0.5 * cfg.irregular_rr_cv else 0.0
    return _tables(hr, sys_s, spread, ffs, cfg)


#: Length of the excerpt on which competing heart rates are compared, s.
_PROBE_S = 8.0


def _missed_fraction(starts: np.ndarray, ends: np.ndarray, states: np.ndarray,
                     sound: np.ndarray) -> float:
    """Fraction of systoles and diastoles holding a sound the model did not label.

    A rate that is half the true one leaves a whole S1-S2 pair inside each of its
    diastoles. A gap "holds a sound" when at least 3 consecutive frames (60 ms at
    50 Hz) inside it have P(sound) above 0.6.
    """
    loud = sound > 0.6
    triple = np.zeros(len(sound) + 1, dtype=int)
    triple[1: max(len(sound) - 1, 1)] = loud[:-2] & loud[1:-1] & loud[2:]
    count = np.cumsum(triple)  # count[i] = triples starting before frame i
    gap = ((states == 1) | (states == 3)) & (ends - starts >= 5)
    gaps = int(np.count_nonzero(gap))
    # a triple inside frames s + 1 .. e - 2 starts at s + 1 .. e - 4
    hits = int(np.count_nonzero(count[ends[gap] - 3] - count[starts[gap] + 1] > 0))
    return hits / gaps if gaps else 0.0


def _reading_score(score: float, path, sound: np.ndarray, missed_cost: float) -> float:
    """How well a decoded reading explains its frames: the mean frame log-likelihood
    (``score`` over ``len(sound)`` frames) less ``missed_cost`` times the fraction of
    its systoles and diastoles that hold a sound it left unlabelled."""
    return score / len(sound) - missed_cost * _missed_fraction(*path, sound)


def _too_even(starts: np.ndarray, states: np.ndarray, ffs: float) -> bool:
    """True when "S1" and "S2" are evenly spaced although the rate says they should not be.

    At a given rate the Weissler regression fixes how unequal systole and diastole
    are (at 65 bpm diastole is about 0.2 s longer). Sounds spaced evenly where the
    regression expects a clear difference are more likely one sound per beat at
    twice the rate (a soft S2 at a fast rate) than S1 and S2 at this rate.
    """
    sys, dia = _intervals(starts, states, ffs)
    if len(sys) < 3 or len(dia) < 3:
        return False
    sys_m, dia_m = median(sys), median(dia)
    rr = sys_m + dia_m
    hr = 60.0 / rr
    expected_s = abs(rr - 2.0 * systolic_interval_s(float(np.clip(hr, 20.0, 250.0)))[0])
    measured_s = abs(dia_m - sys_m)
    # Even within a quarter of the expected difference (when that is over 8 % of
    # the cycle), or within about one frame (20 ms) where 40 ms or more is due.
    return ((expected_s > 0.08 * rr and measured_s < 0.25 * expected_s)
            or (expected_s >= 0.04 and measured_s <= 0.025))


def _hypotheses(cands: list[HeartRateEstimate], sound: np.ndarray, ffs: float,
                cfg: SegmentConfig) -> list[tuple[HeartRateEstimate, float]]:
    """(estimate, RR spread) pairs to try: each candidate regular, the first also irregular."""
    out = [(c, 0.0) for c in cands]
    first = cands[0]
    # An irregular rhythm smears the autocorrelation; add a broad-diastole hypothesis
    # at the rate given by counting the loud events (two per beat).
    loud = sound > 0.5
    onsets = np.count_nonzero(loud[1:] & ~loud[:-1])
    dur = len(sound) / ffs
    if onsets >= 4 and dur > 0:
        hr_count = float(np.clip(30.0 * onsets / dur, cfg.min_bpm, cfg.max_bpm))
        out.append((HeartRateEstimate(hr_count, systolic_interval_s(hr_count)[0], 0.0),
                    0.2 * 60.0 / hr_count))
    out.append((first, 0.2 * 60.0 / first.heart_rate_bpm))
    return out


def _adapted(loglik: np.ndarray, feats: np.ndarray, starts: np.ndarray, ends: np.ndarray,
             states: np.ndarray, weight: float) -> np.ndarray:
    """Mix the shipped emissions with Gaussians fitted to this recording's first decoding.

    One step of unsupervised adaptation: each state's frames (as first decoded) give a
    diagonal Gaussian over the features; its class posterior, divided by the state
    frequencies, is averaged (in the log domain, with ``weight``) with the shipped
    model. A device or noise the training never saw moves the features; the
    recording's own statistics follow them.
    """
    lab = np.repeat(states, ends - starts)
    n = loglik.shape[1]
    counts = np.bincount(lab, minlength=n)
    if np.any(counts < 10):
        return loglik
    onehot = np.eye(n)[lab]  # (T, N)
    mu = (onehot.T @ feats) / counts[:, None]  # (N, F)
    var = (onehot.T @ feats ** 2) / counts[:, None] - mu ** 2 + 0.05
    # -0.5 * sum_f ((x - mu)^2 / var + log var), expanded into matrix products
    ll = -0.5 * ((feats ** 2) @ (1.0 / var).T - 2.0 * feats @ (mu / var).T
                 + np.sum(mu ** 2 / var + np.log(var), axis=1))
    prior = np.log(counts / counts.sum())
    post = ll + prior
    top = post.max(axis=1, keepdims=True)
    post -= top + np.log(np.exp(post - top).sum(axis=1, keepdims=True))
    return (1.0 - weight) * loglik + weight * (post - prior)


def _doubled(est: HeartRateEstimate) -> HeartRateEstimate:
    """Twice the rate, with the regression's systolic interval at that rate."""
    double = 2.0 * est.heart_rate_bpm
    return HeartRateEstimate(double, systolic_interval_s(double)[0], est.confidence)


def _decode_chunk(loglik: np.ndarray, homo: np.ndarray, tilt: np.ndarray, sound: np.ndarray,
                  homo_rel: np.ndarray, ffs: float, cfg: SegmentConfig,
                  feats: np.ndarray | None = None) -> _Decoded:
    cands = period_candidates(homo, ffs, min_bpm=cfg.min_bpm, max_bpm=cfg.max_bpm)
    hyps = _hypotheses(cands, sound, ffs, cfg)
    n_probe = min(len(loglik), int(_PROBE_S * ffs))
    best_key, est, spread, best_path, tables = None, cands[0], 0.0, None, None
    for c, sp in hyps:
        # The model's own score decides, less a cost for loud sounds a rate leaves
        # inside its silences (half the true rate leaves whole S1-S2 pairs there).
        ld, ls = _tables(c.heart_rate_bpm, c.systolic_interval_s, sp, ffs, cfg)
        st, en, k, score = viterbi_cyclic(loglik[:n_probe], ld, ls)
        key = _reading_score(score, (st, en, k), sound[:n_probe], cfg.missed_sound_cost)
        if best_key is None or key > best_key:
            best_key, est, spread, best_path, tables = key, c, sp, (st, en, k), (ld, ls)
    double = 2.0 * est.heart_rate_bpm
    if (best_path is not None and double <= 1.05 * cfg.max_bpm
            and _too_even(best_path[0], best_path[2], ffs)
            and (feats is None
                 or sound_separation(*best_path, feats[:n_probe]) < EVEN_SOUNDS_SD)):
        est = _doubled(est)
        tables = None
    ld, ls = tables or _tables(est.heart_rate_bpm, est.systolic_interval_s, spread, ffs, cfg)
    starts, ends, states, score = viterbi_cyclic(loglik, ld, ls)
    # One audible sound per beat at a fast rate reads as S1 + S2 at half the rate:
    # the doubled reading replaces it unless the model finds it clearly worse.
    if (feats is not None and 2.0 * est.heart_rate_bpm <= 1.05 * cfg.max_bpm
            and looks_halved(starts, ends, states, feats, 60.0 * ffs / est.heart_rate_bpm)):
        dbl = _doubled(est)
        ld2, ls2 = _tables(dbl.heart_rate_bpm, dbl.systolic_interval_s, spread, ffs, cfg)
        *doubled, score2 = viterbi_cyclic(loglik, ld2, ls2)
        if (_reading_score(score2, doubled, sound, cfg.missed_sound_cost)
                >= _reading_score(score, (starts, ends, states), sound, cfg.missed_sound_cost)
                - cfg.half_rate_margin):
            est, ld, ls = dbl, ld2, ls2
            starts, ends, states = doubled
    # Second pass: durations from the first pass where it disagrees with the
    # assumptions, emissions adapted to this recording; one decoding for both.
    again = _refine(starts, states, est, ffs, cfg)
    adapt = feats is not None and cfg.adapt_weight > 0
    shipped = loglik
    if adapt:
        loglik = _adapted(loglik, feats, starts, ends, states, cfg.adapt_weight)
    if again is not None:
        ld, ls = again
    if again is not None or adapt:
        starts, ends, states, _ = viterbi_cyclic(loglik, ld, ls)
    # The shipped emissions judge the labels: the adapted ones were fitted to this
    # very labelling and would vouch for it whichever way round it is.
    if _swap_evidence(starts, ends, states, tilt, ffs, shipped) < 0:
        # S1 <-> S2 and systole <-> diastole: the same boundaries, labels mirrored.
        states = (states + 2) % 4
    return _Decoded(starts, ends, states, est)


def _usable_runs(n_frames: int, ffs: float, quality, min_run_s: float,
                 silent: np.ndarray | None = None
                 ) -> tuple[list[tuple[int, int]], list[tuple[float, float, str]]]:
    usable = np.ones(n_frames, dtype=bool)
    skipped: list[tuple[float, float, str]] = []
    if silent is not None and silent.any():
        usable &= ~silent
        edges = np.flatnonzero(np.diff(np.concatenate([[0], silent.astype(int), [0]])))
        for a, b in zip(edges[::2], edges[1::2], strict=True):
            skipped.append((a / ffs, b / ffs, "no signal (flat samples)"))
    if quality is not None:
        for w in getattr(quality, "windows", ()):
            if getattr(w, "usable", True):
                continue
            a = max(0, int(round(w.start_s * ffs)))
            b = min(n_frames, int(round(w.end_s * ffs)))
            if b > a:
                usable[a:b] = False
                reasons = "; ".join(getattr(w, "reasons", ()) or ("poor quality",))
                skipped.append((a / ffs, b / ffs, f"unusable quality: {reasons}"))
    runs: list[tuple[int, int]] = []
    edges = np.flatnonzero(np.diff(np.concatenate([[0], usable.astype(int), [0]])))
    for a, b in zip(edges[::2], edges[1::2], strict=True):
        if (b - a) / ffs < min_run_s:
            skipped.append((a / ffs, b / ffs,
                            f"usable stretch shorter than {min_run_s:g} s"))
        else:
            runs.append((int(a), int(b)))
    skipped = sorted((float(a), float(b), r) for a, b, r in skipped)
    merged: list[tuple[float, float, str]] = []
    for item in skipped:
        if merged and abs(merged[-1][1] - item[0]) < 1e-9 and merged[-1][2] == item[2]:
            merged[-1] = (merged[-1][0], item[1], item[2])
        else:
            merged.append(item)
    return runs, merged


def _chunks(a: int, b: int, chunk: int, overlap: int) -> list[tuple[int, int]]:
    if b - a <= chunk:
        return [(a, b)]
    step = chunk - overlap
    n = int(np.ceil((b - a - overlap) / step))
    out = []
    for i in range(n):
        lo = a + i * step
        out.append((lo, min(lo + chunk, b)))
    if out[-1][1] < b:
        out.append((b - chunk, b))
    return out


def _decode_run(feat: np.ndarray, homo: np.ndarray, model: EmissionModel, ffs: float,
                cfg: SegmentConfig, a: int, b: int
                ) -> tuple[list[tuple[int, int, int]], list[HeartRateEstimate], np.ndarray]:
    """Decode frames a..b (absolute) in overlapping chunks and stitch the results."""
    chunk = int(cfg.chunk_s * ffs)
    overlap = int(cfg.overlap_s * ffs)
    out: list[tuple[int, int, int]] = []
    estimates = []
    posts = []
    for lo, hi in _chunks(a, b, chunk, overlap):
        f = feat[lo:hi]
        # Re-centre the relative features on this chunk (gain drift in long records).
        f = (f - np.median(f, axis=0)) if (b - a) > chunk else f
        loglik = model.log_likelihood(f)
        post = np.exp(loglik + model.log_prior)
        posts.append((lo, hi, post))
        dec = _decode_chunk(loglik, homo[lo:hi], f[:, FEATURE_NAMES.index("pitch_tilt")],
                            post[:, 0] + post[:, 2], f[:, 0], ffs, cfg, feats=f)
        estimates.append(dec.estimate)
        segs = [(int(s) + lo, int(e) + lo, int(k))
                for s, e, k in zip(dec.starts, dec.ends, dec.states, strict=True)]
        if not out:
            out = segs
            continue
        # Cut at the first S1 onset of the new chunk past the middle of the overlap.
        mid = lo + overlap // 2
        cut_seg = next((s for s in segs if s[2] == 0 and s[0] >= mid), None)
        if cut_seg is None:
            continue
        cut = cut_seg[0]
        kept = [s for s in out if s[0] < cut]
        if kept and kept[-1][1] > cut:
            kept[-1] = (kept[-1][0], cut, kept[-1][2])
        out = kept + [s for s in segs if s[0] >= cut]
    post = np.zeros((b - a, 4))
    for lo, hi, p in posts:
        post[lo - a: hi - a] = p
    return out, estimates, post


def segment(x: np.ndarray, fs: float, *, quality=None,
            config: SegmentConfig | None = None) -> Segmentation:
    """Segment a conditioned heart-sound signal into S1, systole, S2 and diastole.

    Parameters
    ----------
    x : ndarray
        Conditioned samples (band-passed, despiked; see :func:`eddyphone.condition.condition`).
    fs : float
        Sample rate in Hz.
    quality : eddyphone.quality.Quality, optional
        Its unusable windows are skipped and reported in ``skipped``.
    config : SegmentConfig, optional
        Settings; defaults documented on :class:`SegmentConfig`.

    Returns
    -------
    Segmentation

    Examples
    --------
    >>> from eddyphone.segment import segment
    >>> seg = segment(x, 4000.0)  # doctest: +SKIP
    >>> seg.rhythm.heart_rate_bpm, len(seg.beats)  # doctest: +SKIP
    """
    cfg = config or SegmentConfig()
    x = np.asarray(x, dtype=float)
    if x.ndim != 1:
        raise InputError(None, f"x has shape {x.shape}, expected one channel",
                         "pass a 1-D array of conditioned samples")
    if len(x) < 0.5 * fs:
        raise InputError(None, f"only {len(x) / fs:.2f} s of signal",
                         "give at least a few seconds (two or more beats)")
    model = EmissionModel.load(cfg.emission_model)
    env = _envelopes_blockwise(x, fs, cfg.feature_fs)
    ffs = env.feature_fs
    feat = frame_features(env)
    # Stretches of 1 s or more whose samples do not move at all (digital silence,
    # dropouts) hold nothing; shorter ones (e.g. despiked windows) are bridged.
    hop = int(round(fs / cfg.feature_fs))
    n = env.n_frames * hop
    silent = np.ptp(x[:n].reshape(env.n_frames, hop), axis=1) == 0.0
    if silent.any():
        edges = np.flatnonzero(np.diff(np.concatenate([[0], silent.astype(int), [0]])))
        for a, b in zip(edges[::2], edges[1::2], strict=True):
            if b - a < ffs:
                silent[a:b] = False
    runs, skipped = _usable_runs(env.n_frames, ffs, quality, cfg.min_run_s, silent)

    segments: list[Segment] = []
    scores: list[float] = []
    estimates: list[HeartRateEstimate] = []
    for a, b in runs:
        segs, ests, post = _decode_run(feat, env.homomorphic, model, ffs, cfg, a, b)
        estimates.extend(ests)
        sound = post[:, 0] + post[:, 2]
        segs, seg_scores = fold_doubtful_beats(segs, segment_support(segs, sound, a),
                                               cfg.doubtful_beat_support,
                                               cfg.doubtful_beat_margin, cfg.irregular_rr_cv,
                                               cfg.doubtful_beat_max_merged_rr)
        segments.extend(Segment(s / ffs, e / ffs, STATES[k]) for s, e, k in segs)
        scores.extend(seg_scores)

    beats = beats_from_segments(segments, scores, [a / ffs for a, _ in runs])
    if estimates:
        est = HeartRateEstimate(
            median([e.heart_rate_bpm for e in estimates]),
            median([e.systolic_interval_s for e in estimates]),
            median([e.confidence for e in estimates]))
    else:
        est = HeartRateEstimate(float("nan"), float("nan"), 0.0)
    if not segments:
        rhythm = Rhythm(float("nan"), float("nan"), (), None, None, False, 0.0, "none")
        return Segmentation((), (), rhythm, tuple(skipped), float(ffs), METHOD)
    rr = np.array([bt.rr_s for bt in beats if bt.rr_s is not None])
    systoles = np.array([bt.systole_ms / 1000.0 for bt in beats])
    mean_conf = float(np.mean([bt.confidence for bt in beats])) if beats else 0.0
    s2_intervals = np.array([b.s2_onset_s - a.s2_onset_s for a, b in zip(beats, beats[1:])
                             if a.next_s1_onset_s is not None
                             and abs(a.next_s1_onset_s - b.s1_onset_s) < 1e-9])
    rhythm = rhythm_from_beats(np.array([bt.s1_onset_s for bt in beats]), rr, systoles, est,
                               irregular_cv=cfg.irregular_rr_cv, beat_confidence=mean_conf,
                               s2_intervals_s=s2_intervals)
    return Segmentation(tuple(segments), beats, rhythm, tuple(skipped), float(ffs), METHOD)


def config_dict(config: SegmentConfig) -> dict:
    """JSON-ready settings (for echoing into outputs)."""
    return asdict(config)
