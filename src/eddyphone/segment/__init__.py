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

from eddyphone.condition import median
from eddyphone.envelope import Envelopes, envelopes
from eddyphone.errors import InputError
from eddyphone.physiology import systolic_interval_s
from eddyphone.rhythm import (
    HeartRateEstimate,
    Rhythm,
    period_candidates,
    rhythm_from_beats,
)
from eddyphone.segment.beats import Beat, Segment, beats_from_segments
from eddyphone.segment.config import SegmentConfig
from eddyphone.segment.durations import STATES, duration_tables, state_durations
from eddyphone.segment.emissions import (
    FEATURE_NAMES,
    EmissionModel,
    adapt_to_recording,
    frame_features,
)
from eddyphone.segment.halving import (
    EVEN_SOUNDS_SD,
    looks_halved,
    missed_fraction,
    sound_separation,
    too_even,
)
from eddyphone.segment.halving import sound_intervals as _intervals
from eddyphone.segment.hsmm import viterbi_cyclic
from eddyphone.segment.orientation import swap_evidence
from eddyphone.segment.slips import mend_slip
from eddyphone.segment.support import fold_doubtful_beats, segment_support

__all__ = ["Beat", "Segment", "SegmentConfig", "Segmentation", "segment"]

METHOD = "hsmm-viterbi/logistic-emissions/v1"


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
    feature_fs : float or None
        Frame rate of the decoder in Hz (boundaries are multiples of its period); None
        for a segmentation given by the user (:mod:`eddyphone.segment.given`).
    method : str
    """

    segments: tuple[Segment, ...]
    beats: tuple[Beat, ...]
    rhythm: Rhythm
    skipped: tuple[tuple[float, float, str], ...]
    feature_fs: float | None
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


#: Half-width of the band around the regression's systolic interval that a first
#: decoding's own interval is held to (about 3.5 sd of the regression).
_SYSTOLE_BAND_S = 0.06


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
    # A systolic interval far outside the regression band at this rate is a sound
    # misplaced (an inaudible S2 read in S1's tail), not a physiology to adopt.
    expected = systolic_interval_s(float(np.clip(hr, 20.0, 250.0)))[0]
    sys_s = float(np.clip(sys_s, expected - _SYSTOLE_BAND_S, expected + _SYSTOLE_BAND_S))
    if (abs(hr - est.heart_rate_bpm) <= cfg.refine_hr_change * est.heart_rate_bpm
            and cv <= 0.5 * cfg.irregular_rr_cv
            and abs(sys_s - est.systolic_interval_s) <= 0.04):
        return None
    hr = float(np.clip(hr, cfg.min_bpm * 0.9, cfg.max_bpm * 1.1))
    spread = float(np.std(rr)) if cv > 0.5 * cfg.irregular_rr_cv else 0.0
    return _tables(hr, sys_s, spread, ffs, cfg)


#: Length of the excerpt on which competing heart rates are compared, s.
_PROBE_S = 8.0


def _reading_score(score: float, path, sound: np.ndarray, missed_cost: float) -> float:
    """How well a decoded reading explains its frames: the mean frame log-likelihood
    (``score`` over ``len(sound)`` frames) less ``missed_cost`` times the fraction of
    its systoles and diastoles that hold a sound it left unlabelled."""
    return score / len(sound) - missed_cost * missed_fraction(*path, sound)


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


def _doubled(est: HeartRateEstimate) -> HeartRateEstimate:
    """Twice the rate, with the regression's systolic interval at that rate."""
    double = 2.0 * est.heart_rate_bpm
    return HeartRateEstimate(double, systolic_interval_s(double)[0], est.confidence)


def _decode_chunk(loglik: np.ndarray, homo: np.ndarray, tilt: np.ndarray, sound: np.ndarray,
                  homo_rel: np.ndarray, ffs: float, cfg: SegmentConfig,
                  feats: np.ndarray | None = None,
                  signal: tuple[np.ndarray, int] | None = None) -> _Decoded:
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
            and too_even(best_path[0], best_path[2], ffs)
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
        loglik = adapt_to_recording(loglik, feats, starts, ends, states, cfg.adapt_weight)
    if again is not None:
        ld, ls = again
    if again is not None or adapt:
        starts, ends, states, _ = viterbi_cyclic(loglik, ld, ls)
    # The shipped emissions judge the labels: the adapted ones were fitted to this
    # very labelling and would vouch for it whichever way round it is.
    if swap_evidence(starts, ends, states, tilt, ffs, shipped, signal) < 0:
        # S1 <-> S2 and systole <-> diastole: the same boundaries, labels mirrored.
        states = (states + 2) % 4
    if cfg.slip_min_evidence > 0:
        starts, ends, states = mend_slip((starts, ends, states), loglik, (ld, ls), tilt, ffs,
                                         shipped, signal, cfg.slip_min_evidence)
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
                cfg: SegmentConfig, a: int, b: int, x: np.ndarray, hop: int
                ) -> tuple[list[tuple[int, int, int]], list[HeartRateEstimate], np.ndarray]:
    """Decode frames a..b (absolute) in overlapping chunks and stitch the results
    (``x``: the samples, ``hop`` of them per frame)."""
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
                            post[:, 0] + post[:, 2], f[:, 0], ffs, cfg, feats=f,
                            signal=(x[lo * hop: hi * hop], hop))
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
        segs, ests, post = _decode_run(feat, env.homomorphic, model, ffs, cfg, a, b, x, hop)
        estimates.extend(ests)
        sound = post[:, 0] + post[:, 2]
        segs, seg_scores = fold_doubtful_beats(segs, segment_support(segs, sound, a),
                                               cfg.doubtful_beat_support,
                                               cfg.doubtful_beat_margin, cfg.irregular_rr_cv,
                                               cfg.doubtful_beat_max_merged_rr,
                                               signal=(x, hop),
                                               quiet_db=cfg.doubtful_beat_quiet_db,
                                               quiet_max_merged_rr=cfg.doubtful_beat_quiet_merged_rr)
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
