"""Heart rate, systolic interval and regularity.

Public API
----------
envelope_autocorrelation
    Normalised autocorrelation of an envelope.
heart_rate_autocorrelation
    Heart rate and systolic interval from the autocorrelation of an envelope
    (the published method of Schmidt et al. 2010 / Springer et al. 2016), with
    a physiological consistency check against halving and doubling.
rr_statistics
    Mean, coefficient of variation and irregularity of an RR series.
rhythm_from_beats
    A :class:`Rhythm` from S1 onsets, falling back to the autocorrelation estimate.
Rhythm
    Heart rate, systolic interval, RR series and regularity.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.fft

from eddyphone.condition import median, trimmed_mean
from eddyphone.errors import ParameterError
from eddyphone.physiology import systolic_interval_s

#: Coefficient of variation of RR above which a rhythm is flagged irregular. Resting
#: sinus rhythm with respiratory arrhythmia stays below about 0.1; atrial
#: fibrillation is typically well above 0.15 (common practice, from memory).
IRREGULAR_RR_CV = 0.12
#: Median beat-to-beat RR change, relative to the median RR, above which a rhythm that
#: also passes :data:`IRREGULAR_RR_CV` is flagged irregular. Atrial fibrillation is
#: irregular from one beat to the next; isolated premature beats with their
#: compensatory pauses, respiratory sinus arrhythmia and a drifting rate leave most
#: successive intervals alike (common practice). For independent RR with a CV of
#: 0.15 the median change is about 0.14 of the median RR.
IRREGULAR_RR_STEP = 0.08


@dataclass(frozen=True)
class HeartRateEstimate:
    """Result of :func:`heart_rate_autocorrelation`.

    Attributes
    ----------
    heart_rate_bpm : float
    systolic_interval_s : float
        S1-onset to S2-onset interval.
    confidence : float
        Height of the autocorrelation at the chosen beat period, 0-1.
    """

    heart_rate_bpm: float
    systolic_interval_s: float
    confidence: float


@dataclass(frozen=True)
class Rhythm:
    """Heart rate and regularity of one recording.

    Attributes
    ----------
    heart_rate_bpm : float
        ``60 / rr_mean_s`` when beats were found (unless the rhythm is irregular, an interval near
        a multiple of the median counts as that many beats and two short ones adding
        up to about the median count as one), else the autocorrelation estimate.
    systolic_interval_s : float
        Median S1-onset to S2-onset interval.
    rr_s : tuple of float
        Successive S1-onset intervals in seconds.
    rr_mean_s, rr_cv : float or None
        Mean RR interval and its coefficient of variation (None with < 2 intervals).
    irregular : bool
        ``rr_cv`` above ``IRREGULAR_RR_CV`` and the median successive RR change above
        ``IRREGULAR_RR_STEP`` of the median RR.
    confidence : float
        0-1; how far the estimate can be trusted.
    method : str
        ``"beats"`` (from the segmentation) or ``"autocorrelation"``.
    """

    heart_rate_bpm: float
    systolic_interval_s: float
    rr_s: tuple[float, ...]
    rr_mean_s: float | None
    rr_cv: float | None
    irregular: bool
    confidence: float
    method: str

    def to_dict(self) -> dict:
        """JSON-ready values (seconds rounded to 0.1 ms; None where not measured)."""
        return {
            "heart_rate_bpm": _finite(self.heart_rate_bpm, 2),
            "systolic_interval_s": _finite(self.systolic_interval_s, 4),
            "rr_s": [round(float(v), 4) for v in self.rr_s],
            "rr_mean_s": None if self.rr_mean_s is None else round(float(self.rr_mean_s), 4),
            "rr_cv": None if self.rr_cv is None else round(float(self.rr_cv), 4),
            "irregular": bool(self.irregular),
            "confidence": round(float(self.confidence), 3),
            "method": self.method,
        }


def _finite(v: float | None, digits: int) -> float | None:
    return None if v is None or not np.isfinite(v) else round(float(v), digits)


def envelope_autocorrelation(env: np.ndarray, max_lag: int | None = None) -> np.ndarray:
    """Autocorrelation of the mean-removed envelope, normalised to 1 at lag 0.

    Parameters
    ----------
    env : ndarray
        Envelope samples.
    max_lag : int, optional
        Last lag (in samples) to return; all lags by default.

    Returns
    -------
    ndarray
        ``ac[k]`` for ``k = 0 .. max_lag``.
    """
    v = np.asarray(env, dtype=float)
    v = v - v.mean()
    n = len(v)
    nfft = scipy.fft.next_fast_len(2 * n, real=True)
    spec = scipy.fft.rfft(v, nfft)
    ac = scipy.fft.irfft(spec * np.conj(spec), nfft)[:n]
    if ac[0] <= 0:
        return np.zeros(n if max_lag is None else min(n, max_lag + 1))
    ac = ac / ac[0]
    return ac if max_lag is None else ac[: max_lag + 1]


def autocorrelation_at(ac: np.ndarray, lag: float) -> float:
    """``ac`` linearly interpolated at a fractional ``lag`` (0 outside it)."""
    lo = int(np.floor(lag))
    if lo < 0 or lo + 1 >= len(ac):
        return 0.0
    w = lag - lo
    return float((1 - w) * ac[lo] + w * ac[lo + 1])


def _peak_lag(ac: np.ndarray, k: int) -> float:
    """Parabolic refinement of a local maximum at index ``k``."""
    if 0 < k < len(ac) - 1:
        a, b, c = ac[k - 1], ac[k], ac[k + 1]
        den = a - 2 * b + c
        if den < 0:
            return k + 0.5 * (a - c) / den
    return float(k)


def _local_maxima(ac: np.ndarray, lo: int, hi: int) -> np.ndarray:
    seg = ac[lo: hi + 1]
    if len(seg) < 3:
        return np.array([], dtype=int)
    idx = np.flatnonzero((seg[1:-1] > seg[:-2]) & (seg[1:-1] >= seg[2:])) + 1
    return idx + lo


def heart_rate_autocorrelation(env: np.ndarray, feature_fs: float, *, min_bpm: float = 40.0,
                               max_bpm: float = 200.0) -> HeartRateEstimate:
    """Heart rate and systolic interval from the autocorrelation of an envelope.

    The beat period is the highest local maximum of the autocorrelation between
    ``60 / max_bpm`` and ``60 / min_bpm``, or half of it when the half-lag peak is
    at least 0.7 as high and the autocorrelation also peaks where the S1-S2 cross
    term of that shorter beat must lie (the systolic interval of the Weissler
    regression, :func:`eddyphone.physiology.systolic_interval_s`). The systolic
    interval is then the cross peak below the period nearest the regression value
    (the autocorrelation cannot tell systole from diastole by itself).

    Parameters
    ----------
    env : ndarray
        Envelope at ``feature_fs`` (the homomorphic envelope works best).
    feature_fs : float
        Envelope rate in Hz.
    min_bpm, max_bpm : float
        Search range in beats per minute.

    Returns
    -------
    HeartRateEstimate
    """
    if not (0 < min_bpm < max_bpm):
        raise ParameterError(f"min_bpm={min_bpm} and max_bpm={max_bpm} must satisfy "
                             "0 < min_bpm < max_bpm")
    hi = int(np.ceil(60.0 / min_bpm * feature_fs))
    return _rate_from_autocorrelation(envelope_autocorrelation(env, max_lag=hi + 2),
                                      feature_fs, min_bpm, max_bpm)


def _rate_from_autocorrelation(ac: np.ndarray, feature_fs: float, min_bpm: float,
                               max_bpm: float) -> HeartRateEstimate:
    """:func:`heart_rate_autocorrelation` on an autocorrelation already computed."""
    lo = max(2, int(np.floor(60.0 / max_bpm * feature_fs)))
    hi = int(np.ceil(60.0 / min_bpm * feature_fs))
    ac = ac[: hi + 3]
    peaks = _local_maxima(ac, lo - 1, min(hi + 1, len(ac) - 1))
    peaks = peaks[(peaks >= lo) & (peaks <= hi)]
    if len(peaks) == 0:
        # No periodic structure: fall back to 75 bpm with zero confidence.
        hr = 75.0
        return HeartRateEstimate(hr, systolic_interval_s(hr)[0], 0.0)
    # The highest peak, unless half its lag is nearly as high and shows the S1-S2
    # cross peaks a beat of that shorter period must have (then the highest peak
    # was two beats).
    k = int(peaks[np.argmax(ac[peaks])])
    best_lag = _peak_lag(ac, k)
    half = best_lag / 2.0
    if half >= lo and autocorrelation_at(ac, half) >= 0.7 * ac[k]:
        near = peaks[np.abs(peaks - half) <= max(1.5, 0.08 * half)]
        if len(near):
            h_lag = _peak_lag(ac, int(near[np.argmax(ac[near])]))
            h_hr = 60.0 * feature_fs / h_lag
            sys_h = systolic_interval_s(float(np.clip(h_hr, 20.0, 250.0)))[0] * feature_fs
            cross = max(autocorrelation_at(ac, sys_h), autocorrelation_at(ac, h_lag - sys_h))
            if cross >= 0.3:
                best_lag = h_lag
    hr = 60.0 * feature_fs / best_lag
    sys_reg_s = systolic_interval_s(float(np.clip(hr, 20.0, 250.0)))[0]
    sys_s = _systole_from_ac(ac, feature_fs, best_lag, sys_reg_s)
    conf = float(np.clip(autocorrelation_at(ac, best_lag), 0.0, 1.0))
    return HeartRateEstimate(float(hr), sys_s, conf)


def period_candidates(env: np.ndarray, feature_fs: float, *, min_bpm: float = 40.0,
                      max_bpm: float = 200.0, max_candidates: int = 5) -> list[HeartRateEstimate]:
    """Plausible heart rates from the autocorrelation, most likely first.

    The first candidate is :func:`heart_rate_autocorrelation`'s answer; then the
    other autocorrelation peaks in range at least 0.3 high (highest first), then
    half and double the first rate where a peak lies there. Rates within 8 % of an
    earlier candidate are dropped. A decoder picks among them by how well each
    explains the recording.

    Returns
    -------
    list of HeartRateEstimate
    """
    if not (0 < min_bpm < max_bpm):
        raise ParameterError(f"min_bpm={min_bpm} and max_bpm={max_bpm} must satisfy "
                             "0 < min_bpm < max_bpm")
    lo = max(2, int(np.floor(60.0 / max_bpm * feature_fs)))
    hi = int(np.ceil(60.0 / min_bpm * feature_fs))
    ac = envelope_autocorrelation(env, max_lag=2 * hi + 4)
    first = _rate_from_autocorrelation(ac, feature_fs, min_bpm, max_bpm)
    out = [first]
    peaks = _local_maxima(ac, lo - 1, min(hi + 1, len(ac) - 1))
    peaks = peaks[(peaks >= lo) & (peaks <= hi)]
    if len(peaks) == 0:
        return out
    lag1 = 60.0 * feature_fs / first.heart_rate_bpm
    lags = [_peak_lag(ac, int(k)) for k in peaks[np.argsort(-ac[peaks])] if ac[k] >= 0.3]
    for factor in (0.5, 2.0):
        target = lag1 * factor
        near = peaks[np.abs(peaks - target) <= max(2.0, 0.1 * target)]
        if len(near):
            lags.append(_peak_lag(ac, int(near[np.argmax(ac[near])])))
    for lag in lags:
        hr = 60.0 * feature_fs / lag
        if any(abs(hr - c.heart_rate_bpm) <= 0.08 * c.heart_rate_bpm for c in out):
            continue
        sys_reg = systolic_interval_s(float(np.clip(hr, 20.0, 250.0)))[0]
        out.append(HeartRateEstimate(float(hr), _systole_from_ac(ac, feature_fs, lag, sys_reg),
                                     float(np.clip(autocorrelation_at(ac, lag), 0.0, 1.0))))
        if len(out) >= max_candidates:
            break
    return out


def _systole_from_ac(ac: np.ndarray, feature_fs: float, period: float, sys_reg_s: float) -> float:
    """Cross peak (or its mirror) nearest the regression, else the regression value."""
    lo = max(1, int(0.08 * feature_fs))
    hi = int(period - 0.08 * feature_fs)
    cands = _local_maxima(ac, lo, hi)
    if len(cands) == 0:
        return sys_reg_s
    k = cands[np.argmax(ac[cands])]
    p = _peak_lag(ac, int(k)) / feature_fs
    best = min((p, period / feature_fs - p), key=lambda v: abs(v - sys_reg_s))
    # Trust the measured peak only near the regression (within 30 %).
    return float(best) if abs(best - sys_reg_s) <= 0.3 * sys_reg_s else float(sys_reg_s)


def rr_statistics(rr_s: np.ndarray, *, irregular_cv: float = IRREGULAR_RR_CV,
                  irregular_step: float = IRREGULAR_RR_STEP
                  ) -> tuple[float | None, float | None, bool]:
    """Mean RR, its coefficient of variation and the irregular-rhythm flag.

    A rhythm is irregular when its RR coefficient of variation exceeds
    ``irregular_cv`` and the median change between successive intervals exceeds
    ``irregular_step`` of the median interval (see :data:`IRREGULAR_RR_STEP`), both
    measured without the premature beats (see :func:`without_premature_pairs`): a
    sinus rhythm with premature beats is regularly irregular, not irregular.

    Parameters
    ----------
    rr_s : ndarray
        RR intervals in seconds.
    irregular_cv : float
        Coefficient of variation the rhythm must exceed to be called irregular.
    irregular_step : float
        Median successive change (relative) it must exceed too.

    Returns
    -------
    rr_mean_s, rr_cv : float or None
        None when fewer than two intervals are given.
    irregular : bool
    """
    rr = np.asarray(rr_s, dtype=float)
    if len(rr) < 2:
        return (float(rr[0]) if len(rr) else None), None, False
    mean = float(rr.mean())
    cv = float(rr.std(ddof=1) / mean) if mean > 0 else None
    if mean <= 0:
        return mean, cv, False
    core = without_premature_pairs(rr)
    if len(core) < 2:
        core = rr
    core_cv = float(core.std(ddof=1) / core.mean())
    step = median(np.abs(np.diff(core))) / median(core)
    return mean, cv, bool(core_cv > irregular_cv and step > irregular_step)


def without_premature_pairs(rr_s: np.ndarray) -> np.ndarray:
    """``rr_s`` without the interval pairs of premature beats.

    A premature beat shortens its interval (under 0.85 of the median) and is followed
    by a compensatory pause (over 1.1 of it), the two adding up to about two median
    intervals (within 15 %): that pattern is taken out before irregularity is judged
    (common practice: isolated premature beats with compensatory pauses do not make
    a rhythm irregularly irregular). On the simulator's benchmark draws 0-9 this cut
    sinus rhythms flagged irregular from 56 to 22 of 769 and irregular ones flagged
    from 188 to 187 of 190.
    """
    rr = np.asarray(rr_s, dtype=float)
    m = median(rr)
    starts = _pair_starts(rr, lambda a, b: a < 0.85 * m and b > 1.1 * m
                          and abs(a + b - 2.0 * m) <= 0.15 * m)
    return np.delete(rr, [j for i in starts for j in (i, i + 1)])


#: A regular rhythm's rate is the mean of its per-beat intervals, leaving out those that
#: a misplaced or invented sound made odd. An interval stays when, with one of its
#: neighbours, it adds up to two median intervals within this fraction of one median:
#: a sound placed late or early moves one S1, shortening one interval and lengthening
#: the next by as much, and a premature beat's short interval and its compensatory
#: pause add up to about two, so those pairs keep the mean rate; an interval a sound at
#: the edge of the recording or in a diastole cut short adds up with neither
#: neighbour. The 20 % echoes the normal-to-normal rule of heart-rate-variability
#: analysis (common practice, from memory). On the captured intervals of benchmark
#: draws 0, 1, 3 and 5-9 this gained 5 of 960 recordings for heart rate within 2 bpm
#: against keeping each interval within 20 % of the median (2 on draws 0, 1, 3, 5 and
#: 3 on 6-9): at 150-180 bpm a premature beat's pause (1.3 median) fell outside that
#: band while its short interval (0.8) stayed in, and the rate read 3-5 bpm fast.
REGULAR_BAND = 0.2


def regular_rate_interval(per_beat_s: np.ndarray) -> float:
    """Mean of the per-beat intervals that add up with a neighbour to two medians
    within :data:`REGULAR_BAND` of a median (the 10 % trimmed mean when fewer than
    three do)."""
    v = np.asarray(per_beat_s, dtype=float)
    m = median(v)
    pair_ok = np.abs(v[:-1] + v[1:] - 2.0 * m) <= REGULAR_BAND * m
    keep = np.zeros(len(v), dtype=bool)
    keep[:-1] |= pair_ok
    keep[1:] |= pair_ok
    return float(v[keep].mean()) if np.count_nonzero(keep) >= 3 else float(trimmed_mean(v, 0.1))


def _pair_starts(rr: np.ndarray, is_pair) -> list[int]:
    """Starts ``i`` of the successive pairs ``(rr[i], rr[i + 1])`` that ``is_pair``
    accepts, scanned left to right without overlap."""
    starts, i = [], 0
    while i + 1 < len(rr):
        if is_pair(rr[i], rr[i + 1]):
            starts.append(i)
            i += 2
        else:
            i += 1
    return starts


def _merge_inserted(rr: np.ndarray, median_s: float) -> np.ndarray:
    """``rr`` with every two successive short intervals that add up to about one
    median interval (within 15 %, each under 0.8 of it) made one: a sound taken for
    an extra beat splits one interval so. A premature beat differs: its short
    interval is followed by a compensatory pause, the two adding up to about two."""
    starts = _pair_starts(rr, lambda a, b: max(a, b) < 0.8 * median_s
                          and abs(a + b - median_s) <= 0.15 * median_s)
    out = np.array(rr, dtype=float)
    out[starts] += out[[i + 1 for i in starts]]
    return np.delete(out, [i + 1 for i in starts])


def per_beat_intervals(rr_s: np.ndarray) -> np.ndarray:
    """The RR series as one interval per beat, for the rate of a regular rhythm.

    Two short intervals adding up to about one median hide an invented beat and count
    as one (:func:`_merge_inserted`); an interval over 1.7 median hides missed beats and
    counts as ``round(interval / median)`` equal ones.
    """
    rr = np.asarray(rr_s, dtype=float)
    med = median(rr)
    whole = _merge_inserted(rr, med)
    n_beats = np.where(whole > 1.7 * med, np.round(whole / med), 1.0)
    return np.repeat(whole / n_beats, n_beats.astype(int))


def rhythm_from_beats(s1_onsets_s: np.ndarray, rr_s: np.ndarray, systoles_s: np.ndarray,
                      estimate: HeartRateEstimate, *, irregular_cv: float = IRREGULAR_RR_CV,
                      beat_confidence: float = 1.0,
                      s2_intervals_s: np.ndarray | None = None) -> Rhythm:
    """Combine the beats of a segmentation with the autocorrelation estimate.

    Parameters
    ----------
    s1_onsets_s : ndarray
        S1 onset times (only used for the count).
    rr_s : ndarray
        RR intervals in seconds (beats whose next S1 was found).
    systoles_s : ndarray
        S1-onset to S2-onset intervals in seconds.
    estimate : HeartRateEstimate
        Autocorrelation estimate, used when fewer than two RR intervals exist.
    irregular_cv : float
        Threshold of the irregular flag.
    beat_confidence : float
        Mean confidence of the beats, 0-1.
    s2_intervals_s : ndarray, optional
        S2-onset to next S2-onset intervals of consecutive beats. Given two or more,
        the rhythm is irregular only when they are irregular too: a sound merging
        into S1 now and then (an S4, a late murmur) jitters S1 onsets by a frame or
        three, which at fast rates passes for beat-to-beat irregularity, while a truly
        irregular rhythm moves both sounds.

    Returns
    -------
    Rhythm
    """
    rr = np.asarray(rr_s, dtype=float)
    mean, cv, irregular = rr_statistics(rr, irregular_cv=irregular_cv)
    if irregular and s2_intervals_s is not None and len(s2_intervals_s) >= 2:
        irregular = rr_statistics(np.asarray(s2_intervals_s, dtype=float),
                                  irregular_cv=irregular_cv)[2]
    sys_s = median(systoles_s) if len(systoles_s) else estimate.systolic_interval_s
    if len(rr) >= 2 and mean:
        hr = 60.0 / mean
        # In a rhythm that is not irregular (premature beats allowed) the rate is the
        # mean of the per-beat intervals near their median (see per_beat_intervals and
        # regular_rate_interval), robust to the odd interval a misplaced sound leaves.
        # A series that is irregular only through its missed and invented beats
        # (regular once they are counted right) is a regular rhythm: missed beats at
        # a fast rate leave intervals of one and two periods, which pass every
        # irregularity test.
        if len(rr) >= 3:
            per_beat = per_beat_intervals(rr)
            if irregular and not rr_statistics(per_beat, irregular_cv=irregular_cv)[2]:
                irregular = False
            if not irregular:
                hr = 60.0 / regular_rate_interval(per_beat)
        agree = float(np.exp(-abs(hr - estimate.heart_rate_bpm) / 10.0))
        conf = float(np.clip(beat_confidence * (0.5 + 0.5 * max(agree, estimate.confidence)),
                             0.0, 1.0))
        if irregular:
            conf *= 0.8
        return Rhythm(hr, sys_s, tuple(float(v) for v in rr), mean, cv, irregular, conf, "beats")
    return Rhythm(estimate.heart_rate_bpm, estimate.systolic_interval_s,
                  tuple(float(v) for v in rr), mean, cv, False,
                  0.5 * estimate.confidence, "autocorrelation")
