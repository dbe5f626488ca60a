"""Tests of eddyphone.rhythm: heart rate over 40-200 bpm, RR statistics, irregularity."""

from __future__ import annotations

import numpy as np
import pytest
from _clicks import click_train
from scipy import stats

from eddyphone.envelope import envelopes
from eddyphone.errors import ParameterError
from eddyphone.physiology import systolic_interval_s
from eddyphone.rhythm import (
    HeartRateEstimate,
    envelope_autocorrelation,
    heart_rate_autocorrelation,
    period_candidates,
    regular_rate_interval,
    rhythm_from_beats,
    rr_statistics,
    trimmed_mean,
    without_premature_pairs,
)


def test_autocorrelation_matches_numpy():
    rng = np.random.default_rng(0)
    v = rng.normal(size=300)
    ac = envelope_autocorrelation(v, max_lag=50)
    # Reference: numpy.correlate of the mean-removed series, normalised at lag 0.
    w = v - v.mean()
    full = np.correlate(w, w, mode="full")[len(w) - 1:]
    np.testing.assert_allclose(ac, full[:51] / full[0], atol=1e-12)


@pytest.mark.parametrize("hr", [40.0, 55.0, 72.0, 100.0, 130.0, 160.0, 180.0, 200.0])
def test_heart_rate_without_halving_or_doubling(hr):
    x, _ = click_train(hr, duration_s=16.0, noise_rms=0.05, seed=int(hr))
    env = envelopes(x, 4000.0)
    est = heart_rate_autocorrelation(env.homomorphic, env.feature_fs)
    assert est.heart_rate_bpm == pytest.approx(hr, abs=2.0)
    assert 0.3 < est.confidence <= 1.0
    # The true rate is among the candidates a decoder chooses from.
    cands = period_candidates(env.homomorphic, env.feature_fs)
    assert any(abs(c.heart_rate_bpm - hr) <= 2.0 for c in cands)


def test_systolic_interval_near_the_click_train():
    # Our click train puts S2 0.42 - 0.0017 HR s after S1 (at least 0.45 RR).
    for hr in (60.0, 90.0):
        x, segs = click_train(hr, duration_s=16.0, noise_rms=0.03, seed=5)
        env = envelopes(x, 4000.0)
        est = heart_rate_autocorrelation(env.homomorphic, env.feature_fs)
        s1 = [a for a, _, lab in segs if lab == "S1"]
        s2 = [a for a, _, lab in segs if lab == "S2"]
        true_sys = float(np.median(np.array(s2) - np.array(s1[: len(s2)])))
        assert est.systolic_interval_s == pytest.approx(true_sys, abs=0.03)


def test_noise_gives_low_confidence():
    rng = np.random.default_rng(7)
    env = envelopes(rng.normal(size=60_000), 4000.0)
    assert heart_rate_autocorrelation(env.homomorphic, env.feature_fs).confidence < 0.3


def test_rr_statistics_against_scipy():
    rr = np.array([0.8, 0.82, 0.79, 0.81, 0.8])
    mean, cv, irregular = rr_statistics(rr)
    assert mean == pytest.approx(np.mean(rr))
    # Reference: scipy.stats.variation with the sample (n - 1) standard deviation.
    assert cv == pytest.approx(stats.variation(rr, ddof=1))
    assert not irregular
    rng = np.random.default_rng(3)
    af = rng.uniform(0.45, 1.15, 30)  # atrial-fibrillation-like spread
    assert rr_statistics(af)[2]
    assert rr_statistics(np.array([0.8])) == (0.8, None, False)


def test_premature_beats_alone_do_not_make_a_rhythm_irregular():
    # Common practice: a regular rhythm with isolated premature beats (each followed by
    # a compensatory pause) is regular with ectopy, not irregularly irregular.
    rr = np.full(20, 0.8)
    rr[[4, 12]] = 0.5   # premature beats at 62 % of the cycle ...
    rr[[5, 13]] = 1.1   # ... and their compensatory pauses
    mean, cv, irregular = rr_statistics(rr)
    assert cv > 0.12 and not irregular
    # a rate drifting steadily (recovery after exercise) is not irregular either
    assert not rr_statistics(np.linspace(0.5, 0.8, 20))[2]


def test_frequent_premature_beats_are_taken_out_before_irregularity_is_judged():
    # Common practice: premature beats with compensatory pauses, even every third beat
    # (trigeminy), make a rhythm regularly irregular, not irregularly irregular. Here
    # most successive intervals change by over 8 %, so the test on the whole series
    # alone would flag it.
    rng = np.random.default_rng(5)
    rr = 0.8 + 0.01 * rng.standard_normal(24)
    rr[1::3] = 0.5 + 0.01 * rng.standard_normal(8)   # premature beats ...
    rr[2::3] = 1.1 + 0.01 * rng.standard_normal(8)   # ... and their pauses
    core = without_premature_pairs(rr)
    np.testing.assert_array_equal(core, rr[0::3])
    assert np.median(np.abs(np.diff(rr))) > 0.08 * np.median(rr)
    assert not rr_statistics(rr)[2]
    # an irregular rhythm keeps its flag: few of its intervals form such pairs
    af = rng.uniform(0.45, 1.15, 30)
    assert len(without_premature_pairs(af)) >= 20 and rr_statistics(af)[2]


def test_trimmed_mean_against_scipy():
    # Reference: scipy.stats.trim_mean (cuts int(proportion * n) values from each end).
    v = np.random.default_rng(8).gamma(2.0, 0.4, 37)
    for proportion in (0.0, 0.1, 0.25):
        assert trimmed_mean(v, proportion) == pytest.approx(stats.trim_mean(v, proportion))


def test_odd_interval_at_the_edge_does_not_move_a_regular_rate():
    # A regular 75-bpm rhythm whose last interval ends in an S1 invented at the end of
    # the recording (0.3 s): the 10 % trimmed mean of the per-beat intervals leaves it
    # out, where the plain mean would read 77.3 bpm.
    rr = np.append(np.full(20, 0.8), 0.3)
    s1 = np.concatenate([[0.0], np.cumsum(rr)])[:-1]
    r = rhythm_from_beats(s1, rr, np.full(21, 0.3), HeartRateEstimate(75.0, 0.3, 0.9))
    assert not r.irregular
    assert r.heart_rate_bpm == pytest.approx(75.0, abs=0.1)


def test_rhythm_from_beats_and_fallback():
    est = HeartRateEstimate(70.0, 0.35, 0.8)
    rr = np.full(10, 60.0 / 72.0)
    r = rhythm_from_beats(np.zeros(11), rr, np.full(11, 0.34), est)
    assert r.method == "beats"
    assert r.heart_rate_bpm == pytest.approx(72.0)
    assert r.systolic_interval_s == pytest.approx(0.34)
    assert not r.irregular
    d = r.to_dict()
    assert d["rr_cv"] == 0.0 and len(d["rr_s"]) == 10
    fb = rhythm_from_beats(np.zeros(1), np.array([]), np.array([]), est)
    assert fb.method == "autocorrelation" and fb.heart_rate_bpm == 70.0


def test_missed_beat_in_a_rhythm_with_premature_beats_counts_twice():
    # Hand count: 20 beats of 0.8 s with one premature beat (0.5 s) and its pause
    # (1.1 s), one beat missed by the detector (an interval of 1.6 s): 21 intervals
    # in 16.8 s, so 75 bpm; taken at face value the 20 found intervals give 71.4 bpm.
    rr = np.full(20, 0.8)
    rr[4], rr[5], rr[12] = 0.5, 1.1, 1.6
    est = HeartRateEstimate(75.0, 0.35, 0.8)
    r = rhythm_from_beats(np.zeros(21), rr, np.full(21, 0.34), est)
    assert not r.irregular
    assert r.heart_rate_bpm == pytest.approx(60.0 * 21 / rr.sum())


def test_regression_band_used_is_weissler():
    # The systolic interval the segmenter assumes follows the Weissler et al. 1968 QS2
    # regression minus the Q-M1 delay: at 60 bpm 0.546 - 0.126 - 0.050 = 0.370 s.
    assert systolic_interval_s(60.0)[0] == pytest.approx(0.370, abs=1e-9)


def test_bad_range():
    with pytest.raises(ParameterError, match="min_bpm"):
        heart_rate_autocorrelation(np.ones(100), 50.0, min_bpm=200, max_bpm=40)


def test_jitter_of_s1_onsets_alone_does_not_make_a_rhythm_irregular():
    # Regular 160 bpm whose S1 onsets jump up to four 20-ms frames early (an S4 merging
    # into S1 now and then) while the S2 onsets stay steady, with one beat missed by
    # the detector; and a truly irregular rhythm (independent RR) that moves both
    # sounds. Common practice: atrial fibrillation is "irregularly irregular", every
    # interval of the beat changes.
    rng = np.random.default_rng(13)
    est = HeartRateEstimate(160.0, 0.25, 0.8)
    s2 = 0.25 + 0.375 * np.arange(40)
    s1 = s2 - 0.25 - 0.02 * rng.integers(0, 5, 40)
    s1, s2 = np.delete(s1, 5), np.delete(s2, 5)
    rr = np.diff(s1)
    assert rr_statistics(rr)[2]  # the S1 series alone looks irregular
    r = rhythm_from_beats(s1, rr, np.full(39, 0.25), est, s2_intervals_s=np.diff(s2))
    assert not r.irregular
    # The beats come every 0.375 s (160 bpm; the jittered onsets leave up to 0.6 bpm);
    # the missed beat's interval counts twice (counted once, the rate would read 156).
    assert r.heart_rate_bpm == pytest.approx(160.0, abs=1.0)
    af = np.cumsum(rng.uniform(0.25, 0.55, 40))
    rr_af = np.diff(af)
    r_af = rhythm_from_beats(af, rr_af, np.full(40, 0.25), est,
                             s2_intervals_s=np.diff(af + 0.25 + 0.01 * rng.standard_normal(40)))
    assert r_af.irregular


def test_invented_beat_in_a_regular_rhythm_counts_once():
    # Hand count: 20 intervals of 1.25 s (48 bpm) with one split 0.45 + 0.80 by a sound
    # read as an extra beat (an S3 or a rub), and a premature beat (0.7 s) with its
    # compensatory pause (1.8 s): 21 true intervals in 26.25 s, 48 bpm. Taken at face
    # value the 22 found intervals give 50.3 bpm.
    rr = np.full(21, 1.25)
    rr[7], rr[15] = 0.7, 1.8
    rr = np.insert(np.delete(rr, 3), 3, [0.45, 0.80])
    est = HeartRateEstimate(48.0, 0.37, 0.8)
    r = rhythm_from_beats(np.zeros(23), rr, np.full(23, 0.37), est)
    assert not r.irregular
    assert len(r.rr_s) == 22  # the series is kept as found
    assert r.heart_rate_bpm == pytest.approx(60.0 * 21 / rr.sum())
    assert r.heart_rate_bpm == pytest.approx(48.0)


def test_regular_rhythm_with_many_missed_beats_is_not_irregular():
    # Hand count: 40 beats of 0.375 s (160 bpm), every third beat missed by the
    # detector, so the found series reads 0.375, 0.375, 0.75 and looks irregular by its
    # coefficient of variation and beat-to-beat change. Counted right it is 160 bpm and
    # regular. A lognormal series of coefficient of variation 0.25 (independent RR, the
    # irregularly irregular rhythm of atrial fibrillation, common practice) with one
    # long pause stays irregular and keeps its plain mean rate.
    rr = np.tile([0.375, 0.375, 0.75], 10)
    est = HeartRateEstimate(120.0, 0.25, 0.5)
    s2 = np.concatenate([[0.0], np.cumsum(rr)])[:-1] + 0.25
    assert rr_statistics(rr)[2]
    r = rhythm_from_beats(np.zeros(31), rr, np.full(31, 0.25), est,
                          s2_intervals_s=np.diff(s2))
    assert not r.irregular
    assert r.heart_rate_bpm == pytest.approx(160.0, abs=1e-6)
    rng = np.random.default_rng(21)
    sigma = np.sqrt(np.log(1 + 0.25 ** 2))
    rr_af = 0.6 * np.exp(rng.normal(-0.5 * sigma ** 2, sigma, 30))
    rr_af[11] = 1.3
    s2_af = np.concatenate([[0.0], np.cumsum(rr_af)])[:-1] + 0.25
    r_af = rhythm_from_beats(np.zeros(31), rr_af, np.full(31, 0.25), est,
                             s2_intervals_s=np.diff(s2_af))
    assert r_af.irregular
    assert r_af.heart_rate_bpm == pytest.approx(60.0 / rr_af.mean())


def test_regular_rate_keeps_interval_pairs_that_add_up_to_two_medians():
    # Hand count at a fast rate: 21 intervals of 0.35 s, two premature beats (0.29 s)
    # each with its compensatory pause (0.45 s), one S1 placed 60 ms late (0.41 s then
    # 0.29 s) and an odd 0.25-s interval a sound at the recording's end left. The
    # true rate is the mean of the 27 real intervals, (21 * 0.35 + 2 * 0.74 + 0.70) /
    # 27 = 0.3530 s, 170.0 bpm: the real pairs add up to two medians (0.70 s) within
    # 20 % of one (the normal-to-normal band of heart-rate-variability analysis,
    # common practice, from memory), the odd interval with neither neighbour (0.60 s).
    # Keeping each interval within 20 % of the median instead keeps the short
    # intervals (0.29 s) and drops the pauses (0.45 s): 173.8 bpm.
    v = np.concatenate([np.full(8, 0.35), [0.29, 0.45], np.full(6, 0.35), [0.41, 0.29],
                        np.full(6, 0.35), [0.29, 0.45, 0.35], [0.25]])
    assert 60.0 / v[:-1].mean() == pytest.approx(170.0, abs=0.05)
    assert 60.0 / regular_rate_interval(v) == pytest.approx(170.0, abs=0.1)
    single = v[np.abs(v - 0.35) <= 0.2 * 0.35]
    assert 60.0 / single.mean() == pytest.approx(173.8, abs=0.05)
