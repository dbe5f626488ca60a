"""Tests of eddyphone.segment on synthetic recordings and against exhaustive search."""

from __future__ import annotations

import itertools
import json

import numpy as np
import pytest
from _clicks import click_train
from scipy.special import ndtr

from eddyphone.condition import condition
from eddyphone.errors import InputError, ParameterError
from eddyphone.evaluate import evaluate_events
from eddyphone.io.load import from_array
from eddyphone.physiology import systolic_interval_s
from eddyphone.quality import Quality, QualityMeasures, QualityWindow
from eddyphone.segment import SegmentConfig, segment
from eddyphone.segment.durations import duration_tables, state_durations
from eddyphone.segment.hsmm import viterbi_cyclic
from eddyphone.simulate import CaseSpec, MurmurSpec, generate

# Seeds here are below 1000, disjoint from the training seeds (7000000 upwards).


def _run(spec: CaseSpec, quality=None):
    sim = generate(spec)
    rec = from_array(sim.x, sim.fs)
    cond = condition(rec.x, rec.fs)
    seg = segment(cond.x, cond.fs, quality=quality)
    return sim, seg


def _f1(sim, seg) -> float:
    ev = evaluate_events(sim.segments, seg.segment_rows(), tolerance_ms=60)
    tp = sum(ev.scores[k].true_positives for k in ("S1", "S2"))
    fp = sum(ev.scores[k].false_positives for k in ("S1", "S2"))
    fn = sum(ev.scores[k].false_negatives for k in ("S1", "S2"))
    return 2 * tp / (2 * tp + fp + fn)


# --- the decoder against brute force ------------------------------------------------

def _brute_force(e, ld, ls):
    """Best cyclic segmentation by enumerating every start state and boundary set."""
    n_frames, n = e.shape
    best = -np.inf
    for first in range(n):
        for k in range(0, n_frames):
            for cuts in itertools.combinations(range(1, n_frames), k):
                bounds = (0, *cuts, n_frames)
                score = -np.log(n)
                for i, (a, b) in enumerate(itertools.pairwise(bounds)):
                    j = (first + i) % n
                    d = b - a
                    if d >= ld.shape[1]:
                        score = -np.inf
                        break
                    edge = i == 0 or i == len(bounds) - 2
                    score += (ls[j, d] if edge else ld[j, d]) + e[a:b, j].sum()
                best = max(best, score)
    return best


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_viterbi_matches_exhaustive_search(seed):
    rng = np.random.default_rng(seed)
    n_frames, n, dmax = 9, 4, 4
    e = rng.normal(size=(n_frames, n))
    mass = rng.uniform(0.1, 1.0, size=(n, dmax + 1))
    mass[:, 0] = 0
    mass[1, 1] = 0  # a state with a minimum duration of 2
    mass /= mass.sum(axis=1, keepdims=True)
    with np.errstate(divide="ignore"):
        ld = np.log(mass)
        ls = np.log(np.cumsum(mass[:, ::-1], axis=1)[:, ::-1])
    ls[:, 0] = 0.0
    starts, ends, states, score = viterbi_cyclic(e, ld, ls)
    assert score == pytest.approx(_brute_force(e, ld, ls))
    # The path is contiguous, covers every frame and follows the cycle.
    assert starts[0] == 0 and ends[-1] == n_frames
    np.testing.assert_array_equal(starts[1:], ends[:-1])
    assert np.all(np.diff(states) % n == 1)


def test_duration_tables_are_distributions():
    laws = state_durations(70.0, systolic_interval_s(70.0)[0], s1_s=(0.122, 0.022),
                           s2_s=(0.092, 0.022), systole_sd_s=0.025,
                           diastole_sd_fraction=0.07, diastole_sd_floor_s=0.02)
    ld, ls = duration_tables(laws, 50.0, floor_weight=0.03)
    np.testing.assert_allclose(np.exp(ld).sum(axis=1), 1.0)
    np.testing.assert_allclose(ls[:, 1], 0.0, atol=1e-12)  # P(D >= 1) = 1
    # The S1 law peaks at the published mean (Schmidt et al. 2010: 122 ms = 6 frames).
    assert int(np.argmax(ld[0])) == 6



def test_duration_tables_equal_the_gaussian_mass_from_scipy():
    # Reference: scipy.special.ndtr (the normal distribution function). Inside each
    # state's range the mass of d frames is the Gaussian mass in d +/- 1/2, normalised
    # over the range and mixed with the uniform floor; the survival sums it from above.
    laws = state_durations(95.0, systolic_interval_s(95.0)[0], s1_s=(0.122, 0.022),
                           s2_s=(0.092, 0.022), systole_sd_s=0.025,
                           diastole_sd_fraction=0.07, diastole_sd_floor_s=0.02,
                           rr_spread_s=0.1)
    fs, floor = 50.0, 0.03
    ld, ls = duration_tables(laws, fs, floor_weight=floor)
    for j, law in enumerate(laws):
        lo = max(1, int(np.floor(law.min_s * fs)))
        hi = max(lo + 1, int(np.ceil(law.max_s * fs)))
        d = np.arange(lo, hi + 1)
        mu, sd = law.mean_s * fs, max(law.sd_s * fs, 0.5)
        g = ndtr((d + 0.5 - mu) / sd) - ndtr((d - 0.5 - mu) / sd)
        mass = (1 - floor) * g / g.sum() + floor / len(d)
        np.testing.assert_allclose(np.exp(ld[j, lo: hi + 1]), mass, rtol=1e-9)
        assert np.all(np.isneginf(ld[j, hi + 1:])) and np.all(np.isneginf(ld[j, :lo]))
        np.testing.assert_allclose(np.exp(ls[j, lo: hi + 1]), np.cumsum(mass[::-1])[::-1],
                                   rtol=1e-9)


# --- facts of the trade on synthetic normal recordings -----------------------------

@pytest.mark.parametrize("hr", [60.0, 72.0])
def test_normal_rest_systole_shorter_and_in_weissler_band(hr):
    sim, seg = _run(CaseSpec(heart_rate_bpm=hr, snr_db=25.0, rsa_swing_bpm=2.0, seed=31))
    beats = [b for b in seg.beats if b.diastole_ms is not None]
    assert len(beats) >= 10
    systole = np.median([b.systole_ms for b in beats])
    diastole = np.median([b.diastole_ms for b in beats])
    # At rest systole is shorter than diastole (common practice).
    assert systole < diastole
    # S1 onset to S2 onset inside the Weissler et al. 1968 QS2 regression band
    # (minus the Q-M1 delay): mean +/- 3 sd, widened by one 20-ms frame.
    mean_s, sd_s = systolic_interval_s(seg.rhythm.heart_rate_bpm)
    assert abs(systole / 1000.0 - mean_s) <= 3 * sd_s + 0.02
    assert seg.rhythm.heart_rate_bpm == pytest.approx(sim.truth["rhythm"]["heart_rate_bpm"],
                                                      abs=2.0)
    assert not seg.rhythm.irregular
    assert _f1(sim, seg) >= 0.98


# --- hard cases ------------------------------------------------------------------------

LOUD_LEAK = MurmurSpec(cause="systolic_leak", diameter_m=0.006, velocity_m_s=5.5)

CASES = {
    "irregular": {"rhythm": "irregular", "heart_rate_bpm": 85.0},
    "tachycardia_180": {"heart_rate_bpm": 180.0},
    "bradycardia_40": {"heart_rate_bpm": 40.0, "duration_s": 24.0},
    "loud_holosystolic": {"murmur": LOUD_LEAK},
    "s3": {"s3": True},
}


def _sound_f1(sim, seg) -> float:
    """F1 of heart sounds regardless of which of S1/S2 they are called."""
    ref = [(a, b, "S") for a, b, lab in sim.segments if lab in ("S1", "S2")]
    det = [(a, b, "S") for a, b, lab in seg.segment_rows() if lab in ("S1", "S2")]
    return evaluate_events(ref, det, tolerance_ms=60, labels=("S",)).scores["S"].f1


@pytest.mark.parametrize("name", sorted(CASES))
def test_hard_cases_segment(name):
    labelled, sounds = [], []
    devices = ("diaphragm", "bell", "flat")
    for i, seed in enumerate(range(41, 47)):
        spec = CaseSpec(snr_db=20.0, seed=seed, device=devices[i % 3], **CASES[name])
        sim, seg = _run(spec)
        labelled.append(_f1(sim, seg))
        sounds.append(_sound_f1(sim, seg))
        if name == "loud_holosystolic":
            # The murmur really is loud: within 10 dB of S1 (simulator truth).
            assert sim.truth["murmur"]["level_db_re_s1"] > -10.0
        if name == "irregular":
            assert seg.rhythm.irregular
    # Every recording: the sounds are found and bounded (F1 >= 0.9 at +/-60 ms).
    assert min(sounds) >= 0.9, sounds
    # S1 and S2 named correctly (F1 >= 0.9) in at least 5 of 6 recordings. Known
    # limit: at 180 bpm systole and diastole are about equally long, and when S1
    # and S2 also sound alike the two names can swap for a whole recording.
    assert sum(f >= 0.9 for f in labelled) >= 5, labelled


def test_noise_types_and_devices_vary():
    # Robustness across device responses and noise kinds, one recording each.
    kinds = [dict(device="phone", speech=0.4), dict(device="steep_tilt", breathing=0.9),
             dict(device="bell", friction_per_min=6.0), dict(device="diaphragm", hum_hz=50.0,
                                                             hum_db=-10.0)]
    for i, kw in enumerate(kinds):
        sim, seg = _run(CaseSpec(snr_db=15.0, seed=60 + i, heart_rate_bpm=78.0, **kw))
        assert _f1(sim, seg) >= 0.9, kw


# --- outputs, skipping, long recordings ---------------------------------------------

def _quality_with_bad_window(duration_s: float, bad: tuple[float, float]) -> Quality:
    m = QualityMeasures(20.0, 0.6, 0.0, 0.0, None)
    windows = []
    t = 0.0
    while t < duration_s - 1e-9:
        end = min(t + 4.0, duration_s)
        usable = not (t >= bad[0] and end <= bad[1])
        windows.append(QualityWindow(t, end, 0.9 if usable else 0.1, usable,
                                     () if usable else ("handling noise",), m))
        t = end
    return Quality(0.7, True, (), (), m, tuple(windows), 0.35)


def test_unusable_windows_are_skipped_and_reported():
    spec = CaseSpec(snr_db=25.0, duration_s=16.0, seed=71)
    quality = _quality_with_bad_window(16.0, (4.0, 8.0))
    sim, seg = _run(spec, quality=quality)
    assert seg.skipped == ((4.0, 8.0, "unusable quality: handling noise"),)
    assert all(s.end_s <= 4.0 + 1e-9 or s.start_s >= 8.0 - 1e-9 for s in seg.segments)
    # Sounds outside the skipped window are still found.
    kept = [r for r in sim.segments if r[1] <= 4.0 or r[0] >= 8.0]
    assert _f1_rows(kept, seg) >= 0.95
    # No beat spans the gap.
    assert all(not (b.s1_onset_s < 4.0 and (b.next_s1_onset_s or 0) > 8.0) for b in seg.beats)


def _f1_rows(ref, seg):
    ev = evaluate_events(ref, seg.segment_rows(), tolerance_ms=60, within_reference=False)
    tp = sum(ev.scores[k].true_positives for k in ("S1", "S2"))
    fn = sum(ev.scores[k].false_negatives for k in ("S1", "S2"))
    return tp / (tp + fn)


def test_beats_table_consistent_and_json_ready():
    sim, seg = _run(CaseSpec(snr_db=25.0, seed=72))
    assert seg.method.startswith("hsmm")
    assert seg.feature_fs == 50.0
    labels = [s.label for s in seg.segments]
    order = ["S1", "systole", "S2", "diastole"]
    assert all(order[(order.index(a) + 1) % 4] == b for a, b in itertools.pairwise(labels))
    for b in seg.beats:
        assert b.s1_onset_s < b.s1_offset_s <= b.s2_onset_s < b.s2_offset_s
        assert b.systole_ms == pytest.approx(1000 * (b.s2_onset_s - b.s1_onset_s))
        if b.next_s1_onset_s is not None:
            assert b.rr_s == pytest.approx(b.next_s1_onset_s - b.s1_onset_s)
            assert b.diastole_ms == pytest.approx(1000 * (b.next_s1_onset_s - b.s2_onset_s))
        assert 0.0 <= b.confidence <= 1.0
    assert np.mean([b.confidence for b in seg.beats]) > 0.5
    text = json.dumps(seg.to_dict())
    back = json.loads(text)
    assert back["rhythm"]["method"] == "beats"
    assert back["segments"][0]["label"] in order
    assert set(back["beats"][0]) == {
        "index", "s1_onset_s", "s1_offset_s", "s2_onset_s", "s2_offset_s", "next_s1_onset_s",
        "rr_s", "systole_ms", "diastole_ms", "confidence"}


def test_long_recording_in_chunks_keeps_the_cycle():
    spec = CaseSpec(snr_db=25.0, duration_s=150.0, seed=73, heart_rate_bpm=66.0)
    sim, seg = _run(spec)
    assert _f1(sim, seg) >= 0.97
    labels = [s.label for s in seg.segments]
    order = ["S1", "systole", "S2", "diastole"]
    breaks = sum(order[(order.index(a) + 1) % 4] != b for a, b in itertools.pairwise(labels))
    assert breaks <= 2  # at most one break per chunk junction (two junctions)
    assert all(b.end_s > b.start_s for b in seg.segments)


def test_click_train_no_simulator():
    x, segs = click_train(75.0, duration_s=12.0, noise_rms=0.02, seed=9)
    seg = segment(x / np.std(x), 4000.0)
    assert seg.rhythm.heart_rate_bpm == pytest.approx(75.0, abs=2.0)
    ev = evaluate_events(segs, seg.segment_rows(), tolerance_ms=60)
    assert ev.scores["S1"].f1 >= 0.95 and ev.scores["S2"].f1 >= 0.95


def test_errors():
    with pytest.raises(InputError, match="one channel"):
        segment(np.ones((10, 2)), 4000.0)
    with pytest.raises(InputError, match="s of signal"):
        segment(np.ones(100), 4000.0)
    with pytest.raises(ParameterError, match="min_bpm"):
        SegmentConfig(min_bpm=250.0)
    with pytest.raises(InputError, match="emission model"):
        segment(np.random.default_rng(0).normal(size=40_000), 4000.0,
                config=SegmentConfig(emission_model="/nonexistent/model.json"))


def test_silence_and_short_input_give_empty_but_valid_results():
    seg = segment(np.zeros(40_000), 4000.0)
    assert seg.segments == () and seg.beats == ()
    assert seg.skipped == ((0.0, 10.0, "no signal (flat samples)"),)
    d = seg.to_dict()
    assert d["rhythm"]["heart_rate_bpm"] is None and d["rhythm"]["method"] == "none"
    json.dumps(d, allow_nan=False)  # strict JSON: no NaN anywhere
    short = segment(np.random.default_rng(2).normal(size=8000), 4000.0)
    assert short.skipped[0][2] == "usable stretch shorter than 2.5 s"
    json.dumps(short.to_dict(), allow_nan=False)


# --- beats table and doubtful beats ---------------------------------------------------

def test_beat_whose_s1_is_cut_by_the_stretch_start_is_left_out():
    from eddyphone.segment.beats import Segment, beats_from_segments

    # hand-made cycle: an S1 cut by the start (0.0), then one whole beat
    rows = [(0.0, 0.05, "S1"), (0.05, 0.3, "systole"), (0.3, 0.4, "S2"), (0.4, 0.8, "diastole"),
            (0.8, 0.92, "S1"), (0.92, 1.1, "systole"), (1.1, 1.2, "S2"), (1.2, 1.6, "diastole"),
            (1.6, 1.72, "S1")]
    segs = [Segment(a, b, lab) for a, b, lab in rows]
    kept = beats_from_segments(segs, [1.0] * len(segs), cut_onsets_s=[0.0])
    assert [b.s1_onset_s for b in kept] == [0.8]
    assert kept[0].rr_s == pytest.approx(0.8)
    assert len(beats_from_segments(segs, [1.0] * len(segs))) == 2


def test_doubtful_beat_folded_only_in_irregular_rhythm():
    from eddyphone.segment.support import fold_doubtful_beats

    def cycle(rr_frames: list[int], weak: int) -> tuple[list, list]:
        segs, scores, t = [], [], 0
        for i, rr in enumerate(rr_frames):
            for k, d in zip((0, 1, 2, 3), (6, 12, 5, rr - 23), strict=True):
                segs.append((t, t + d, k))
                scores.append(0.5 if i == weak and k in (0, 2) else 0.95)
                t += d
        return segs, scores

    cfg = SegmentConfig()
    irregular = [40, 70, 30, 55, 80, 35, 60, 45]  # RR coefficient of variation about 0.3
    segs, scores = cycle(irregular, weak=3)
    fold = (cfg.doubtful_beat_support, cfg.doubtful_beat_margin, cfg.irregular_rr_cv)
    out, out_scores = fold_doubtful_beats(segs, scores, *fold)
    assert len(out) == len(segs) - 4 and len(out_scores) == len(out)
    merged = [s for s in out if s[2] == 3 and s[1] - s[0] > 60]
    assert merged and merged[0][0] == segs[11][0] and merged[0][1] == segs[15][1]
    # the same weak beat in a steady rhythm is kept: the duration laws vouch for it
    segs, scores = cycle([50] * 8, weak=3)
    assert fold_doubtful_beats(segs, scores, *fold)[0] == segs
    # a weak beat whose folding would leave about two intervals in one (previous S1 to
    # next S1 = 30 + 80 = 110 frames, twice the median RR of 55) is more likely real
    segs, scores = cycle([40, 70, 55, 30, 80, 35, 60, 45], weak=4)
    assert fold_doubtful_beats(segs, scores, *fold)[0] == segs
    assert len(fold_doubtful_beats(segs, scores, *fold, max_merged_rr=2.5)[0]) == len(segs) - 4
    # two weak beats side by side (a real beat and a sound read as a beat just after
    # it): each alone folds within 1.6 median RR (previous to next S1: 55 and 75
    # frames against a median of 47.5), both together would leave 105 frames, two
    # intervals in one. Only the weaker (the second) is folded: 8 of 9 beats remain.
    segs, scores = cycle([50, 60, 30, 25, 50, 55, 45, 60, 50], weak=3)
    scores = [0.45 if 16 <= i < 20 and s[2] in (0, 2) else v
              for i, (v, s) in enumerate(zip(scores, segs, strict=True))]
    out, _ = fold_doubtful_beats(segs, scores, *fold)
    assert len(out) == len(segs) - 4
    assert sum(1 for s in out if s[2] == 0) == 8
    assert any(s[2] == 3 and s[0] == segs[15][0] and s[1] == segs[19][1] for s in out)


def test_weak_last_beat_is_kept_when_the_next_s1_shows_the_interval():
    """The last whole beat of a stretch, weak, followed by the S1 of a beat the
    stretch's end cuts: folding it would leave 80 + 80 = 160 frames, about two
    intervals of this rhythm (median 55), so it is kept as real. Without that S1 no
    interval can be checked and the weak beat is folded. (Benchmark case 700083,
    fast irregular rhythm at 28 dB: the last two real beats had been folded, leaving
    one interval of three beats and a rate 8.5 bpm slow.)"""
    from eddyphone.segment.support import fold_doubtful_beats

    segs, scores, t = [], [], 0
    for i, rr in enumerate([40, 70, 30, 55, 35, 60, 45, 80, 80]):
        for k, d in zip((0, 1, 2, 3), (6, 12, 5, rr - 23), strict=True):
            segs.append((t, t + d, k))
            scores.append(0.5 if i == 8 and k in (0, 2) else 0.95)
            t += d
    cfg = SegmentConfig()
    fold = (cfg.doubtful_beat_support, cfg.doubtful_beat_margin, cfg.irregular_rr_cv)
    cut = segs + [(t, t + 4, 0)]
    assert fold_doubtful_beats(cut, scores + [0.95], *fold)[0] == cut
    assert len(fold_doubtful_beats(segs, scores, *fold)[0]) == len(segs) - 4


# --- half-rate readings -------------------------------------------------------------

def _pulse_features(n_frames: int, onsets: list[int], tilts: list[float]) -> np.ndarray:
    """Frame features (emissions.FEATURE_NAMES order) with a 4-frame sound at each onset."""
    feats = np.zeros((n_frames, 7))
    for a, tilt in zip(onsets, tilts, strict=True):
        feats[a: a + 4, [0, 1, 3, 4]] = [1.0, 1.0, 1.0, 1.0]
        feats[a: a + 4, 6] = tilt
    return feats


def _labelled(onsets: list[int], n_frames: int):
    """Segments S1, systole, S2, diastole ... with a 4-frame sound at each onset."""
    starts, ends, states = [], [], []
    for i, a in enumerate(onsets):
        nxt = onsets[i + 1] if i + 1 < len(onsets) else n_frames
        starts += [a, a + 4]
        ends += [a + 4, nxt]
        states += [0, 1] if i % 2 == 0 else [2, 3]
    return np.array(starts), np.array(ends), np.array(states)


def test_one_sound_per_beat_read_as_s1_and_s2_looks_halved():
    from eddyphone.segment.halving import looks_halved

    # 170 bpm (period 17.6 frames at 50 Hz) with one sound per beat, RR varying:
    # read as S1 + S2 at 85 bpm, the "systoles" vary as much as the "diastoles".
    rng = np.random.default_rng(3)
    rr = rng.uniform(15, 21, 60).round().astype(int)
    onsets = list(np.cumsum(rr)[:-1])
    n = int(onsets[-1] + 20)
    feats = _pulse_features(n, onsets, [0.0] * len(onsets))
    starts, ends, states = _labelled(onsets, n)
    assert looks_halved(starts, ends, states, feats, period_frames=2 * float(np.mean(rr)))


def test_real_s1_s2_cycle_does_not_look_halved():
    from eddyphone.segment.halving import looks_halved

    # 85 bpm: S1 (low tilt) then S2 (high tilt, common practice) after a steady
    # systole of 16 frames; the RR changes land in diastole.
    rng = np.random.default_rng(4)
    onsets, tilts, t = [], [], 5
    for _ in range(30):
        onsets += [t, t + 16]
        tilts += [-1.0, 1.0]
        t += 16 + int(rng.integers(15, 22))
    n = t + 20
    feats = _pulse_features(n, onsets, tilts)
    starts, ends, states = _labelled(onsets, n)
    assert not looks_halved(starts, ends, states, feats, period_frames=35.0)
    # The same sounds alike in pitch still keep their steady systole: not halved.
    feats_alike = _pulse_features(n, onsets, [0.0] * len(onsets))
    assert not looks_halved(starts, ends, states, feats_alike, period_frames=35.0)


def test_fast_rhythm_with_a_soft_second_sound_is_not_read_at_half_rate():
    # A benchmark case (draw 7, case 70: irregular at 164 bpm, 26 dB, one sound per
    # beat clearly audible) that read 85 bpm before the half-rate check.
    from eddyphone.simulate import benchmark_specs

    spec = benchmark_specs(120, seed=7)[70]
    sim, seg = _run(spec)
    truth = sim.truth["rhythm"]["heart_rate_bpm"]
    assert truth > 150
    assert abs(seg.rhythm.heart_rate_bpm - truth) < 0.05 * truth
    assert _sound_f1(sim, seg) >= 0.9


@pytest.mark.parametrize("draw, case, what", [
    (7, 51, "sinus at 182 bpm, 2 dB, only the second sound audible: read at 91 bpm"),
    (5, 78, "sinus at 92 bpm, phone, S1 and S2 alike: read at 185 bpm"),
    (9, 58, "sinus at 70 bpm, phone, flow murmur: read at 140 bpm"),
    (7, 115, "sinus at 63 bpm, ejection murmur and S3 in the gaps: read at 126 bpm"),
    (8, 12, "sinus at 86 bpm, flat, evenly spaced S1 and S2 2 sd apart: read at 172 bpm"),
])
def test_benchmark_cases_once_read_at_half_or_double_rate(draw, case, what):
    # Benchmark cases (simulator draws) that a rule read at the wrong rate before the
    # doubled reading had to be nearly as likely as the one it replaces and the
    # decoded lengths stopped counting as a difference between the sounds. Their S1/S2
    # F1 was then 0.32-0.52; now the rate is right and F1 at least 0.8 (at 2-4 dB).
    # Reference: the simulator's exact truth (heart rate of the whole beats, S1/S2
    # segments).
    from eddyphone.simulate import benchmark_specs

    spec = benchmark_specs(120, seed=draw)[case]
    sim, seg = _run(spec)
    truth = sim.truth["rhythm"]["heart_rate_bpm"]
    assert abs(seg.rhythm.heart_rate_bpm - truth) < 0.05 * truth, what
    assert _f1(sim, seg) >= 0.8, what


def test_decoded_lengths_do_not_separate_alike_sounds():
    from eddyphone.segment.halving import ALIKE_SOUNDS_SD, sound_separation

    # One kind of sound, labelled alternately S1 (6 frames) and S2 (3 frames): the
    # duration laws make whichever is labelled S1 longer, so length is no difference.
    rng = np.random.default_rng(6)
    onsets = list(range(5, 5 + 18 * 40, 18))
    n = onsets[-1] + 20
    starts, ends, states = _labelled(onsets, n)
    ends = np.where(states == 0, starts + 6, np.where(states == 2, starts + 3, ends))
    alike = _pulse_features(n, onsets, list(0.3 * rng.standard_normal(40)))
    assert sound_separation(starts, ends, states, alike) < ALIKE_SOUNDS_SD


def test_sound_separation_tells_s1_s2_pairs_from_alike_sounds():
    from eddyphone.segment.halving import EVEN_SOUNDS_SD, sound_separation

    rng = np.random.default_rng(5)
    onsets = list(range(5, 5 + 18 * 40, 18))
    n = onsets[-1] + 20
    starts, ends, states = _labelled(onsets, n)
    # S2 higher pitched than S1 (common practice), with beat-to-beat scatter.
    tilts = [(-1.0 if i % 2 == 0 else 1.0) + 0.3 * rng.standard_normal() for i in range(40)]
    paired = _pulse_features(n, onsets, tilts)
    assert sound_separation(starts, ends, states, paired) > EVEN_SOUNDS_SD
    alike = _pulse_features(n, onsets, list(0.3 * rng.standard_normal(40)))
    assert sound_separation(starts, ends, states, alike) < 1.0
    # Too few sounds of one label: no verdict either way.
    assert sound_separation(starts[:4], ends[:4], states[:4], alike) == float("inf")


def test_evenly_spaced_but_distinct_s1_and_s2_are_not_read_at_double_rate():
    # A benchmark case (draw 6, case 71: sinus at 84 bpm, 17 dB, systole and diastole
    # within 20 ms of each other) that read 167 bpm before S1 and S2 were compared.
    from eddyphone.simulate import benchmark_specs

    spec = benchmark_specs(120, seed=6)[71]
    sim, seg = _run(spec)
    truth = sim.truth["rhythm"]["heart_rate_bpm"]
    assert abs(seg.rhythm.heart_rate_bpm - truth) < 0.05 * truth
    assert _f1(sim, seg) >= 0.9


def test_stability_cue_is_not_turned_by_a_few_premature_beats():
    # Common practice: the systolic interval barely follows RR changes, which land in
    # diastole. Correctly labelled beats at 50 frames/s: systole 15 frames except two
    # premature beats (7 frames), diastole 20 +/- 2 frames. The plain standard
    # deviation of the systoles (0.048 s) exceeds the diastoles' (0.025 s) and would
    # vote to mirror the labels; the robust spread of the beat-to-beat changes
    # (median absolute deviation) does not.
    from eddyphone.segment.orientation import swap_cues

    rng = np.random.default_rng(8)
    systole = np.full(20, 15)
    systole[[6, 14]] = 7
    diastole = 20 + rng.integers(-2, 3, 20)
    starts, states, t = [], [], 0
    for sys_f, dia_f in zip(systole, diastole, strict=True):
        starts += [t, t + 5, t + sys_f, t + sys_f + 4]
        states += [0, 1, 2, 3]
        t += sys_f + 4 + dia_f
    starts, states = np.array(starts), np.array(states)
    ends = np.append(starts[1:], t)
    assert np.std(systole) / 50 > np.std(diastole) / 50  # what the old cue compared
    cues = swap_cues(starts, ends, states, np.zeros(t), 50.0)
    assert cues["stability"] > 0


def _burst_train(times_s: np.ndarray, fs: float, n: int) -> np.ndarray:
    """Gaussian-windowed 60-Hz bursts (sd 12 ms) centred on ``times_s``."""
    t = np.arange(n) / fs
    x = np.zeros(n)
    for c in times_s:
        x += np.exp(-0.5 * ((t - c) / 0.012) ** 2) * np.sin(2 * np.pi * 60.0 * (t - c))
    return x


def test_stability_cue_sees_interval_changes_shorter_than_a_frame():
    # Common practice: the systolic interval barely follows RR changes, which land in
    # diastole. Here systole is 300 ms in every beat and the RR swings by +/-8 ms
    # (respiratory sinus arrhythmia), less than one 20-ms frame, while the decoded
    # boundaries wander by a frame either way as a decoder's do: frame onsets cannot
    # tell the two intervals apart, the sounds' energy centres can.
    from eddyphone.segment.orientation import swap_cues

    fs, hop, ffs = 4000.0, 80, 50.0
    rng = np.random.default_rng(3)
    rr = 0.75 + 0.008 * np.sin(np.arange(24) * 2 * np.pi / 5)
    s1 = 0.1 + np.concatenate([[0.0], np.cumsum(rr)])[:-1]
    s2 = s1 + 0.300
    n = int((s1[-1] + 0.8) * fs)
    x = _burst_train(np.concatenate([s1, s2]), fs, n)
    starts, states = [0], [3]
    for a, b in zip(s1, s2, strict=True):
        for t0, k in ((a - 0.04, 0), (a + 0.04, 1), (b - 0.04, 2), (b + 0.04, 3)):
            starts.append(int(round(t0 * ffs)) + int(rng.integers(-1, 2)))
            states.append(k)
    starts, states = np.array(starts), np.array(states)
    ends = np.append(starts[1:], n // hop)
    tilt = np.zeros(n // hop)
    right = swap_cues(starts, ends, states, tilt, ffs, signal=(x, hop))
    mirrored = swap_cues(starts, ends, (states + 2) % 4, tilt, ffs, signal=(x, hop))
    frames_only = swap_cues(starts, ends, states, tilt, ffs)
    assert right["stability"] > 1.0
    assert mirrored["stability"] < -1.0
    assert abs(frames_only["stability"]) < 1.0


@pytest.mark.parametrize("draw, case, what", [
    (3, 77, "sinus at 109 bpm, phone, narrowed inflow valve, 14 dB"),
    (5, 16, "sinus at 144 bpm, diaphragm, narrowed inflow valve, 25 dB"),
])
def test_benchmark_cases_once_read_mirrored(draw, case, what):
    # Benchmark cases (simulator draws) whose every S1 was labelled S2 and back
    # (F1 0.00) until the stability cue measured the intervals between the sounds'
    # energy centres instead of frame onsets. Reference: the simulator's truth.
    from eddyphone.simulate import benchmark_specs

    sim, seg = _run(benchmark_specs(120, seed=draw)[case])
    assert _f1(sim, seg) >= 0.95, what


@pytest.mark.parametrize("draw, case, before, after", [
    (9, 80, 0.68, 0.9),   # irregular at 164 bpm, phone, 29 dB
    (1, 26, 0.38, 0.6),   # sinus at 141 bpm, phone, 6 dB
])
def test_benchmark_cases_whose_labels_slipped_part_way(draw, case, before, after):
    # Benchmark cases (simulator draws) where the decoder passed over one sound and
    # every S1/S2 label after it came out mirrored; the whole-recording vote kept the
    # larger half right and the rest wrong (F1 ``before``). Each side of the slip is
    # now decoded and oriented on its own. Reference: the simulator's truth.
    from eddyphone.simulate import benchmark_specs

    sim, seg = _run(benchmark_specs(120, seed=draw)[case])
    assert _f1(sim, seg) >= after > before


def test_a_sound_passed_over_is_mended_and_a_clean_path_left_alone():
    # Emissions that know every frame's state; a decoding that passed over the S1 of
    # beat 10 (its diastole runs on through it) and so labels every later sound the
    # other way round. Each side is decoded again on its own and oriented by its own
    # vote: the mended labels are the true ones. The true path is handed back as is.
    from eddyphone.segment.slips import mend_slip

    hr, n_beats = 85.0, 20
    laws = state_durations(hr, systolic_interval_s(hr)[0], s1_s=(0.122, 0.022),
                           s2_s=(0.092, 0.022), systole_sd_s=0.025,
                           diastole_sd_fraction=0.07, diastole_sd_floor_s=0.02)
    frames = [int(round(law.mean_s * 50.0)) for law in laws]
    truth = np.tile(np.arange(4), n_beats)
    lengths = np.tile(frames, n_beats)
    ends = np.cumsum(lengths)
    starts = ends - lengths
    frame_state = np.repeat(truth, lengths)
    loglik = np.full((len(frame_state), 4), -2.0)
    loglik[np.arange(len(frame_state)), frame_state] = 0.0
    tables = duration_tables(laws, 50.0, floor_weight=0.03)
    tilt = np.zeros(len(frame_state))
    # slipped: diastole of beat 9 + S1 + systole of beat 10 as one diastole, then mirrored
    k = 4 * 10
    slipped = (np.concatenate([starts[:k - 1], starts[k + 2:]]),
               np.concatenate([ends[:k - 2], [ends[k + 1]], ends[k + 2:]]),
               np.concatenate([truth[:k - 1], (truth[k + 2:] + 2) % 4]))
    mended = mend_slip(slipped, loglik, tables, tilt, 50.0, loglik, None, 2.0)
    s1_mended = mended[0][mended[2] == 0]
    s1_true = starts[truth == 0]
    assert len(s1_mended) == len(s1_true)
    assert np.max(np.abs(s1_mended - s1_true)) <= 1
    same = mend_slip((starts, ends, truth), loglik, tables, tilt, 50.0, loglik, None, 2.0)
    assert all(a is b for a, b in zip(same, (starts, ends, truth), strict=True))


def test_second_pass_holds_the_systolic_interval_to_the_regression_band():
    # A first decoding that read an inaudible S2 in S1's own tail (S1 onset to S2 onset
    # 120 ms at 80 bpm, where the Weissler regression expects about 330 ms) must not
    # teach the second pass that systole: the interval is held to the regression
    # +/- 60 ms (about 3.5 sd).
    from eddyphone.rhythm import HeartRateEstimate
    from eddyphone.segment import _refine, _tables

    cfg, ffs = SegmentConfig(), 50.0
    period, starts, states = 38, [], []     # 38 frames: 79 bpm
    for beat in range(15):
        t = 1 + beat * period
        starts += [t, t + 5, t + 6, t + 10]
        states += [0, 1, 2, 3]
    starts, states = np.array(starts), np.array(states)
    est = HeartRateEstimate(60.0, systolic_interval_s(60.0)[0], 0.8)  # rate off: refine
    hr = 60.0 / (period / ffs)
    low = systolic_interval_s(hr)[0] - 0.06
    ld, ls = _refine(starts, states, est, ffs, cfg)
    ld_low, ls_low = _tables(hr, low, 0.0, ffs, cfg)
    ld_raw, _ = _tables(hr, 6 / ffs, 0.0, ffs, cfg)
    np.testing.assert_allclose(ld, ld_low)
    assert ld_raw.shape != ld.shape or not np.allclose(ld, ld_raw)


def test_quiet_beat_folded_when_its_sounds_are_far_softer_than_the_rhythms():
    """An irregular rhythm whose beats all have full frame support, one of them with
    sounds 10 dB softer than the others (a breath or faint rub read as a beat in a
    long diastole): given the samples it is folded when that leaves at most 2 median
    intervals, and kept when it would leave more (then it is more likely a real,
    weak beat). Without the samples only the support decides, and all are kept."""
    from eddyphone.segment.support import fold_doubtful_beats

    hop, rng = 80, np.random.default_rng(7)

    def stretch(quiet: int) -> tuple[list, list, np.ndarray]:
        segs, t = [], 0
        x = 0.01 * rng.standard_normal(600 * hop)
        for i, rr in enumerate([40, 70, 30, 55, 80, 35, 60, 45, 50]):
            for k, d in zip((0, 1, 2, 3), (6, 12, 5, rr - 23), strict=True):
                segs.append((t, t + d, k))
                if k in (0, 2):
                    gain = 10 ** (-10 / 20) if i == quiet else 1.0
                    x[t * hop:(t + d) * hop] += gain * rng.standard_normal(d * hop)
                t += d
        return segs, [0.95] * len(segs), x[: t * hop]

    cfg = SegmentConfig()
    fold = (cfg.doubtful_beat_support, cfg.doubtful_beat_margin, cfg.irregular_rr_cv)
    # beat 3 sits between intervals of 30 and 55 frames (median 50): folding leaves 1.7
    segs, scores, x = stretch(quiet=3)
    assert fold_doubtful_beats(segs, scores, *fold)[0] == segs
    out = fold_doubtful_beats(segs, scores, *fold, signal=(x, hop))[0]
    assert len(out) == len(segs) - 4
    assert any(s[2] == 3 and s[0] == segs[11][0] and s[1] == segs[15][1] for s in out)
    # beat 5 sits between 80 and 35 frames: folding would leave 2.3 intervals
    segs, scores, x = stretch(quiet=5)
    assert fold_doubtful_beats(segs, scores, *fold, signal=(x, hop))[0] == segs


@pytest.mark.parametrize("draw, case, before", [
    (7, 62, 153.8),  # irregular at 162 bpm, steep tilt, 28 dB: last two beats folded
    (7, 4, 102.6),   # irregular at 98 bpm, steep tilt, 29 dB: a faint sound read as a beat
    (6, 46, 80.5),   # irregular at 76 bpm, diaphragm, 7 dB: the same
    (3, 17, 86.9),   # irregular at 83 bpm, flat, 6 dB: an S1 absorbed into a long S2
])
def test_benchmark_irregular_rates_once_a_beat_off(draw, case, before):
    # Benchmark cases (simulator draws) of atrial fibrillation whose rate was one beat
    # off (``before``, bpm) until the fold of doubtful beats took the S1 after a
    # stretch's last beat into account and folded beats far softer than the rhythm's
    # heart sounds, and S2 was held to 3 sd over its mean duration. Reference: the
    # simulator's truth (60 / mean RR of its whole beats); the target is within 2 bpm.
    from eddyphone.simulate import benchmark_specs

    sim, seg = _run(benchmark_specs(120, seed=draw)[case])
    truth = sim.truth["rhythm"]["heart_rate_bpm"]
    assert abs(before - truth) > 2.0
    assert abs(seg.rhythm.heart_rate_bpm - truth) <= 2.0
