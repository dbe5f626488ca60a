"""Findings: murmur and extra-sound description.

Outside references: scipy.signal (periodogram, welch) and librosa (spectral
centroid) for the spectral measures; the simulator's exact truth for murmur
descriptions; trade conventions marked "common practice".
"""

from __future__ import annotations

import json
from dataclasses import replace

import librosa
import numpy as np
import pytest
from conftest import murmur_record
from scipy import signal

from eddyphone import physiology
from eddyphone.condition import condition
from eddyphone.findings import FindingsConfig, describe, summarise_patient
from eddyphone.findings import extra as extra_mod
from eddyphone.findings.config import PITCH_BOUNDARIES_HZ, TIMING_THIRDS, pitch_word
from eddyphone.findings.grade import MAX_AUDIO_GRADE, grade_range
from eddyphone.findings.measures import beat_windows, spectrogram
from eddyphone.findings.spectrum import noise_relative_centroid_hz
from eddyphone.findings.words import (
    continuous_words,
    quality_words,
    shape_word,
    timing_word,
)
from eddyphone.segment.beats import Segment, beats_from_segments
from eddyphone.simulate import CaseSpec, MurmurSpec, generate

FS = 4000.0


def _truth_beats(sim):
    segs = [Segment(a, b, lab) for a, b, lab in sim.segments]
    return beats_from_segments(segs, [1.0] * len(segs))


def _findings(spec: CaseSpec):
    sim = generate(spec)
    c = condition(sim.x, sim.fs)
    return sim, describe(c.x, c.fs, _truth_beats(sim))


# --- constants against their sources ---------------------------------------------------

def test_extra_sound_windows_are_the_published_ones():
    # S3 about 120-180 ms after S2 (common practice; also the wording)
    assert pytest.approx((0.120, 0.180)) == physiology.S3_AFTER_A2_S
    # the extra-sound search uses the shared physiology windows, not private copies
    with open(extra_mod.__file__) as fh:
        src = fh.read()
    for name in ("S3_AFTER_A2_S", "S4_BEFORE_S1_S", "EJECTION_CLICK_AFTER_S1_S",
                 "OPENING_SNAP_AFTER_A2_S"):
        assert f"phy.{name}" in src
    # S3/S4 low-pitched, clicks/snaps high-pitched (common practice): the search bands
    # sit on the right side of each other
    assert extra_mod.LOW_BAND_HZ[1] <= physiology.CLICK_BAND_HZ[0]
    assert extra_mod.HIGH_BAND_HZ[0] >= physiology.CLICK_BAND_HZ[0]


def test_pitch_boundaries_and_timing_thirds():
    # common practice, from memory: low below ~150 Hz (bell range), high from ~300 Hz
    assert PITCH_BOUNDARIES_HZ == (150.0, 300.0)
    assert [pitch_word(f) for f in (60.0, 149.0, 150.0, 299.0, 300.0, 600.0)] == \
        ["low", "low", "medium", "medium", "high", "high"]
    # common practice: early/mid/late are the thirds of the window
    assert pytest.approx((1 / 3, 2 / 3)) == TIMING_THIRDS
    assert timing_word(0.0, 1.0) == "holo"
    assert timing_word(0.0, 0.5) == "early"
    assert timing_word(0.3, 0.75) == "mid"
    assert timing_word(0.6, 1.0) == "late"


def test_grade_never_above_three_from_sound():
    # Levine scale (common practice): grades IV-VI need a palpable thrill
    levels = np.linspace(-60, 30, 91)
    ranges = [grade_range(v) for v in levels]
    assert max(hi for _, hi in ranges) == MAX_AUDIO_GRADE == 3
    assert all(1 <= lo <= hi for lo, hi in ranges)
    # monotone: louder never grades lower
    assert all(a[0] <= b[0] and a[1] <= b[1] for a, b in zip(ranges, ranges[1:]))
    # "about as loud as the heart sounds" straddles II-III (after Keren et al. 2005,
    # from memory)
    assert grade_range(0.0) == (2, 3)


def test_noise_relative_pitch_cancels_a_device_tilt():
    # a murmur band 150-600 Hz standing 10 dB over a flat noise floor, recorded
    # through no tilt and through a -12 dB/octave tilt (murmur and floor alike)
    f = np.linspace(25.0, 900.0, 400)
    band = (f >= 150.0) & (f < 600.0)
    # expected: exp of the mean of ln f over the band on a linear frequency grid, in
    # closed form from the integral of ln f (calculus; the same at every tilt)
    a, b = 150.0, 600.0
    expected = np.exp((b * np.log(b) - b - a * np.log(a) + a) / (b - a))
    for tilt_db_per_oct in (0.0, -12.0, -35.0):
        gain = 10 ** (tilt_db_per_oct * np.log2(f / 25.0) / 10)
        noise = np.ones_like(f) * gain
        excess = np.where(band, 9.0, 0.0) * gain  # +10 dB over the floor
        got = noise_relative_centroid_hz(f, excess, noise, width_oct=1e-6)
        assert got == pytest.approx(expected, rel=0.01)
    # while the plain spectral centroid of the tilted murmur (librosa) falls
    rng = np.random.default_rng(3)
    n = int(FS)
    fr = np.fft.rfftfreq(n, 1 / FS)
    spec = np.fft.rfft(rng.standard_normal(n)) * ((fr >= 150) & (fr < 600))
    plain = []
    for tilt in (0.0, -12.0):
        y = np.fft.irfft(spec * 10 ** (tilt * np.log2(np.maximum(fr, 25.0) / 25.0) / 20), n)
        plain.append(float(librosa.feature.spectral_centroid(
            y=y, sr=int(FS), n_fft=n, hop_length=n, center=False)[0, 0]))
    assert plain[1] < 0.8 * plain[0]
    # no murmur above the floor: no pitch
    assert np.isnan(noise_relative_centroid_hz(f, np.zeros_like(f), np.ones_like(f)))


def test_quality_words_follow_the_trade():
    # common practice: "rumbling" is kept for low diastolic murmurs (the inflow
    # rumble), a tonal murmur is "musical", a rough one "harsh", a smooth one "blowing"
    common = {"relative_spread": 0.5, "tonal_threshold": 0.5}
    assert quality_words(pitch="low", tonality=0.1, roughness=0.1, phase="diastolic",
                         **common) == ("rumbling",)
    assert quality_words(pitch="low", tonality=0.1, roughness=0.1, phase="systolic",
                         **common) != ("rumbling",)
    # heard below the low-pitch edge through the device used, not measured high
    assert quality_words(pitch="medium", tonality=0.1, roughness=0.1, phase="diastolic",
                         centroid_hz=100.0, **common) == ("rumbling",)
    assert quality_words(pitch="high", tonality=0.1, roughness=0.1, phase="diastolic",
                         centroid_hz=100.0, **common) == ("blowing",)
    assert quality_words(pitch="high", tonality=0.9, roughness=0.1, dominant_hz=400.0,
                         **common) == ("musical",)
    assert quality_words(pitch="medium", tonality=0.1, roughness=0.4, phase="systolic",
                         **common) == ("harsh",)
    # common practice: the early diastolic decrescendo of a leaking outflow valve is
    # "blowing"; the rumble is mid-diastolic or fills diastole
    assert quality_words(pitch="low", tonality=0.1, roughness=0.1, phase="diastolic",
                         timing="early", centroid_hz=230.0, **common) == ("blowing",)
    assert quality_words(pitch="low", tonality=0.1, roughness=0.1, phase="diastolic",
                         timing="holo", centroid_hz=230.0, **common) == ("rumbling",)
    # common practice: a continuous murmur through S2 is the "machinery" murmur,
    # whatever its pitch or roughness; a tonal one stays musical
    for words in (("blowing",), ("harsh",), ("rumbling",)):
        assert continuous_words(words) == ("machinery",)
    assert continuous_words(("musical",)) == ("musical",)


def test_shape_words():
    n = 12
    u = np.linspace(0, 1, n)
    assert shape_word(np.zeros(n))[0] == "plateau"
    assert shape_word(-30 * u)[0] == "decrescendo"
    assert shape_word(-30 * (1 - u))[0] == "crescendo"
    assert shape_word(-40 * (u - 0.5) ** 2 * 4)[0] == "crescendo-decrescendo"
    # the shape is judged over the whole window, sound to sound (common practice):
    # a profile of the trimmed window peaking in its second bin, with guards that put
    # that bin at a quarter of the whole window, rises and falls
    prof = np.array([-3.0, 0.0] + [-3.0 - 3.0 * i for i in range(n - 2)])
    assert shape_word(prof)[0] == "decrescendo"
    centres = 0.15 + 0.7 * (np.arange(n) + 0.5) / n
    assert shape_word(prof, centres)[0] == "crescendo-decrescendo"
    # the peak is placed between bin centres: a loudness course that is a parabola in
    # dB peaking at 0.18 or at 0.22 of the window (its vertex, as numpy.polyfit finds
    # it) sits either side of the one-fifth edge although both peak in the same bin
    x = (np.arange(n) + 0.5) / n
    for top, word in ((0.18, "decrescendo"), (0.22, "crescendo-decrescendo")):
        p = -300.0 * (x - top) ** 2
        a2, a1, _ = np.polyfit(x, p, 2)
        assert -a1 / (2 * a2) == pytest.approx(top)
        assert int(np.argmax(p)) == 2
        assert shape_word(p)[0] == word


# --- spectral measures against reference libraries -------------------------------------

def test_spectrogram_band_power_matches_scipy_welch():
    rng = np.random.default_rng(0)
    x = signal.sosfiltfilt(signal.butter(4, [160, 280], "bandpass", fs=FS, output="sos"),
                           rng.standard_normal(int(4 * FS)))
    sp = spectrogram(x, FS)
    frac = sp.band_power.mean(axis=1) / sp.band_power.mean(axis=1).sum()
    f, p = signal.welch(x, FS, nperseg=128)  # scipy reference
    ref = np.array([p[(f >= lo) & (f < hi)].sum() for lo, hi in sp.bands_hz])
    ref /= ref.sum()
    assert frac[2] > 0.9  # the 150-300 Hz band holds the noise
    np.testing.assert_allclose(frac, ref, atol=0.03)


def test_centroid_matches_librosa():
    rng = np.random.default_rng(1)
    x = signal.sosfiltfilt(signal.butter(4, [120, 380], "bandpass", fs=FS, output="sos"),
                           rng.standard_normal(int(FS)))
    ours = extra_mod._centroid_hz(x, FS, 0.5, frame_s=0.256)
    n = int(0.256 * FS)
    seg = x[int(0.5 * FS) - n // 2: int(0.5 * FS) + n // 2] * np.hanning(n)
    ref = librosa.feature.spectral_centroid(y=seg, sr=int(FS), n_fft=n, hop_length=n,
                                            center=False, window="boxcar")[0, 0]
    assert ours == pytest.approx(float(ref), rel=0.08)


def test_beat_windows_follow_the_segment_contract():
    sim = generate(CaseSpec(seed=2, duration_s=6.0))
    b = _truth_beats(sim)[1]
    sys, dia = beat_windows(b, 0.02)
    # systolic window = end of S1 to start of S2, diastolic = end of S2 to next S1
    assert b.s1_offset_s < sys[0] < sys[1] < b.s2_onset_s
    assert b.s2_offset_s < dia[0] < dia[1] < b.next_s1_onset_s


# --- each simulated murmur type at moderate noise ---------------------------------------

CASES = {
    "narrowed_outflow": (MurmurSpec("narrowed_outflow", diameter_m=0.008, velocity_m_s=4.0),
                         "aortic"),
    "systolic_leak": (MurmurSpec("systolic_leak", diameter_m=0.005, velocity_m_s=5.0),
                      "mitral"),
    "diastolic_leak": (MurmurSpec("diastolic_leak", diameter_m=0.006, velocity_m_s=4.5),
                       "tricuspid"),
    "narrowed_inflow": (MurmurSpec("narrowed_inflow", diameter_m=0.012, velocity_m_s=1.8),
                        "mitral"),
    "high_flow": (MurmurSpec("high_flow", diameter_m=0.022, velocity_m_s=2.4), "pulmonic"),
    "wall_irregularity": (MurmurSpec("wall_irregularity", diameter_m=0.02, velocity_m_s=1.8,
                                     transition_factor=0.4), "aortic"),
    "low_viscosity": (MurmurSpec("low_viscosity", diameter_m=0.022, velocity_m_s=2.0,
                                 hematocrit=0.2), "pulmonic"),
}


@pytest.mark.parametrize("cause", sorted(CASES))
def test_simulated_murmur_described(cause):
    # three recordings of the same murmur (seeds 12-14) at moderate noise: presence,
    # phase and grade cap in every one; timing and shape (against the simulator's
    # measured labels, its rules on the clean murmur envelope) in at least two of
    # three, since a murmur near a rule boundary may fall either side
    murmur, site = CASES[cause]
    timing_ok = shape_ok = 0
    for seed in (12, 13, 14):
        spec = CaseSpec(murmur=murmur, site=site, snr_db=18, device="diaphragm",
                        heart_rate_bpm=72, breathing=0.3, seed=seed)
        sim, f = _findings(spec)
        truth = sim.truth["murmur"]
        assert truth["present"]
        m = f.main()
        assert f.presence == "present" and m is not None, f.presence_reason
        assert m.phase == truth["phase"]
        assert m.grade_range[1] <= 3
        assert m.consistency >= 0.7
        timing_ok += m.timing == truth["measured"]["timing"]
        shape_ok += m.shape == truth["measured"]["shape"]
    assert timing_ok >= 2 and shape_ok >= 2, (timing_ok, shape_ok)


def test_rumble_with_the_bell_is_low_pitched():
    # common practice: low-pitched diastolic rumbles are listened for with the bell
    murmur, site = CASES["narrowed_inflow"]
    sim, f = _findings(CaseSpec(murmur=murmur, site=site, snr_db=18, device="bell",
                                heart_rate_bpm=72, breathing=0.3, seed=12))
    m = f.main()
    assert sim.truth["murmur"]["pitch"] == "low"
    assert m is not None and m.phase == "diastolic"
    assert m.pitch == "low" and m.quality_words == ("rumbling",)
    assert m.centroid_hz < PITCH_BOUNDARIES_HZ[0]


@pytest.mark.parametrize("seed", [21, 22, 23])
def test_normal_recordings_called_absent(seed):
    spec = CaseSpec(snr_db=15, breathing=0.6, friction_per_min=6.0, seed=seed)
    _, f = _findings(spec)
    assert f.presence == "absent", f.presence_reason
    assert f.main() is None
    s = f.summary_dict()
    assert s["murmur"] == "absent" and s["murmur_phase"] is None


def test_json_contract():
    murmur, site = CASES["systolic_leak"]
    _, f = _findings(CaseSpec(murmur=murmur, site=site, snr_db=20, seed=5))
    items = json.loads(json.dumps(f.to_list()))
    assert items and all("id" in d and d["kind"] in ("murmur", "extra_sound") for d in items)
    s = f.summary_dict()
    for key in ("murmur", "murmur_phase", "murmur_timing", "murmur_shape", "murmur_pitch",
                "murmur_grade_range", "murmur_dominant_frequency_hz", "murmur_consistency",
                "murmur_quality", "extra_sounds", "murmur_reason"):
        assert key in s
    assert s["murmur"] == "present" and s["murmur_phase"] == "systolic"
    assert "thrill" in items[0]["grade_note"]


def test_split_s2_interval_in_published_range():
    # fixed split: A2-P2 within the published 20-80 ms range (physiology constants)
    _, f = _findings(CaseSpec(s2_split="fixed", snr_db=25, site="pulmonic", seed=7))
    split = [e for e in f.extra_sounds if e.kind == "split_S2"]
    assert split, [e.kind for e in f.extra_sounds]
    lo = physiology.S2_SPLIT_EXPIRATION_S[0]
    hi = physiology.S2_SPLIT_INSPIRATION_S[1]
    assert 1000 * lo <= split[0].timing_ms <= 1000 * hi


def test_too_few_beats_is_uncertain():
    sim = generate(CaseSpec(seed=3, duration_s=6.0))
    c = condition(sim.x, sim.fs)
    f = describe(c.x, c.fs, _truth_beats(sim)[:2], config=FindingsConfig())
    assert f.presence == "uncertain"


# --- patient view --------------------------------------------------------------------------

@pytest.mark.parametrize("cause,loudest", [("narrowed_outflow", "aortic"),
                                           ("systolic_leak", "mitral")])
def test_patient_view_picks_loudest_site(cause, loudest):
    murmur = MurmurSpec(cause, diameter_m=0.006, velocity_m_s=4.5)
    pairs = []
    for site in ("aortic", "pulmonic", "tricuspid", "mitral"):
        _, f = _findings(CaseSpec(murmur=murmur, site=site, snr_db=20, seed=3))
        pairs.append((site, f))
    p = summarise_patient(pairs, patient_id="P-0001")
    assert p.presence == "present"
    assert p.murmurs[0].loudest_site == loudest  # the simulator's loudest site
    d = json.loads(json.dumps(p.to_dict()))
    assert d["murmurs"][0]["loudest_site"] == loudest and loudest in p.summary


def test_beat_measures_show_the_murmur_window():
    murmur, site = CASES["systolic_leak"]
    _, f = _findings(CaseSpec(murmur=murmur, site=site, snr_db=20, seed=5))
    bm = f.beat_measures
    assert len(bm) >= 10
    # the holosystolic murmur raises systole, not diastole, beat by beat
    assert np.mean([b.sys_murmur for b in bm]) >= 0.7
    assert not any(b.dia_murmur for b in bm)
    assert np.median([b.sys_db_re_hs - b.dia_db_re_hs for b in bm]) > 6.0
    # its energy sits higher in frequency than the diastolic noise (centroid, Hz)
    assert np.median([b.sys_centroid_hz for b in bm]) > np.median(
        [b.dia_centroid_hz for b in bm])
    assert all(0.0 <= b.sys_tonality <= 1.0 for b in bm)


def test_harsh_ejection_blowing_leak():
    # common practice: a narrowed outflow valve gives a harsh murmur, a systolic leak a
    # blowing one (the simulator roughens ejection murmurs' envelopes, not leaks')
    words = {}
    for cause in ("narrowed_outflow", "systolic_leak"):
        murmur, site = CASES[cause]
        _, f = _findings(CaseSpec(murmur=murmur, site=site, snr_db=20, device="diaphragm",
                                  seed=12))
        words[cause] = f.main().quality_words
    assert words == {"narrowed_outflow": ("harsh",), "systolic_leak": ("blowing",)}


# --- S2 onsets refined from the recording's own S2 template ------------------------------

def test_s2_onset_pulled_early_by_an_ejection_murmur_is_refined():
    # demo 03: a loud ejection murmur runs up to S2, and a segmenter misled by it starts
    # S2 about 0.1 s early (ours did until its own boundaries improved); the findings
    # move it back to the gap before S2. The misplaced onsets are made here from the
    # simulator's exact ones, 0.1 s early, so the check does not depend on the
    # segmenter. Reference: the simulator's exact S2 onsets and its measured
    # timing/shape labels.
    from dataclasses import replace

    from eddyphone.findings.boundaries import refine_s2_onsets
    from eddyphone.simulate import demo_specs

    sim = generate(demo_specs()["03_older_adult_outflow"])
    c = condition(sim.x, sim.fs)
    truth_beats = _truth_beats(sim)
    true_on = np.array([b.s2_onset_s for b in truth_beats])
    early = [replace(b, s2_onset_s=b.s2_onset_s - 0.1) for b in truth_beats]
    new, shift = refine_s2_onsets(c.x, c.fs, early)
    assert shift > 0.03

    def err(beats):
        return np.median([np.min(np.abs(true_on - b.s2_onset_s)) for b in beats])

    assert err(early) > 0.05  # the misplaced onsets sit well before S2
    assert err(new) < 0.015   # refined: within about one short frame of the truth
    m = describe(c.x, c.fs, early).main()
    truth = sim.truth["murmur"]["measured"]
    assert (m.timing, m.shape) == (truth["timing"], truth["shape"])


@pytest.mark.parametrize("name", ["01_resting_adult", "05_systolic_leak", "09_diastolic_leak"])
def test_s2_onsets_left_alone_when_already_right(name):
    # correct onsets (the simulator's exact segments) and a murmur that runs into S2
    # (05) must not be moved: the template rises steadily from onset to peak
    from eddyphone.findings.boundaries import refine_s2_onsets
    from eddyphone.simulate import demo_specs

    sim = generate(demo_specs()[name])
    c = condition(sim.x, sim.fs)
    beats = _truth_beats(sim)
    new, shift = refine_s2_onsets(c.x, c.fs, beats)
    assert shift == 0.0
    assert [b.s2_onset_s for b in new] == [b.s2_onset_s for b in beats]


# --- continuous murmurs --------------------------------------------------------------------

def test_continuous_murmur_runs_through_s2():
    # demo 10 (a shunt): the murmur fills the whole cycle, so it barely stands above
    # the quiet parts (late diastole is the murmur itself at its quietest); it fades
    # across diastole from S2 on, beat by beat. Reference: the simulator's exact
    # segments and its truth (phase continuous, measured shape crescendo-decrescendo
    # peaking around S2)
    from eddyphone.findings.murmur import CONT_DECAY_T, CONT_MAX_RISE_DB
    from eddyphone.simulate import demo_specs

    sim = generate(demo_specs()["10_continuous_shunt"])
    c = condition(sim.x, sim.fs)
    f = describe(c.x, c.fs, _truth_beats(sim))
    truth = sim.truth["murmur"]
    m = f.main()
    assert f.presence == "present" and m.phase == truth["phase"] == "continuous"
    assert m.shape == truth["measured"]["shape"]
    # its profile covers both windows and peaks before mid-diastole (truth: in systole)
    assert len(m.profile) == 2 * FindingsConfig().bins_per_window
    assert truth["measured"]["peak_fraction"] < 0.5 and m.peak_fraction < 0.75
    assert f.summary_dict()["murmur_phase"] == "continuous"
    # a holosystolic leak whose murmur ends inside S2 (simulator truth: phase
    # systolic) stands far over its murmur-free diastole just before S2
    sim2 = generate(demo_specs()["05_systolic_leak"])
    c2 = condition(sim2.x, sim2.fs)
    from eddyphone.findings.measures import beat_profiles, spectrogram
    from eddyphone.findings.murmur import find_murmurs

    cfg = FindingsConfig()
    sp = spectrogram(c2.x, c2.fs)
    s = find_murmurs(sp, beat_profiles(sp, _truth_beats(sim2), cfg), cfg)
    assert s.murmurs[0].phase == sim2.truth["murmur"]["phase"] == "systolic"
    assert s.through_s2 and s.through_s2["rise_db"] > CONT_MAX_RISE_DB
    # ... while the shunt's upper bands rise only a few dB over late diastole and fade
    # across it
    sp1 = spectrogram(c.x, c.fs)
    s1 = find_murmurs(sp1, beat_profiles(sp1, _truth_beats(sim), cfg), cfg)
    assert s1.through_s2["rise_db"] <= CONT_MAX_RISE_DB
    assert s1.through_s2["decay_t"] <= CONT_DECAY_T


def test_faint_murmur_present_from_paired_evidence():
    # a faint continuous murmur at 145 bpm through a phone: single beats are too noisy
    # to show it in most of them (consistency under the 'present' bar), but on average
    # every beat's excess beats the same beat's murmur-free null (paired t across
    # beats). Reference: the simulator's truth (an audible murmur is present).
    spec = CaseSpec(
        heart_rate_bpm=144.9, respiration_per_min=12.75, breath_held=True, rsa_swing_bpm=0.0,
        fs=8000.0, sex="female",
        murmur=MurmurSpec("continuous", diameter_m=0.00666, velocity_m_s=4.157),
        s2_split="single", snr_db=21.87, device="phone", chest_wall_cutoff_hz=162.4,
        breathing=0.0, timbre_drift=0.0213, precordial_motion=0.401,
        respiratory_loudness=0.1146, adventitious_db=-6.89, device_ripple_db=1.76,
        gain_wander_db=4.0, hum_db=-17.0, peak_dbfs=-7.18, site="mitral", seed=200099)
    sim, f = _findings(spec)
    assert sim.truth["murmur"]["present"]
    m = f.main()
    assert f.presence == "present", f.presence_reason
    assert m.consistency < FindingsConfig().present_consistency


def test_faint_excess_in_few_beats_is_not_present():
    # a murmur-free benchmark recording (simulator truth: no murmur) whose diastole
    # shows a faint (-27 dB re S1/S2) excess in 6 of 10 beats: too faint and too
    # irregular to call a murmur
    from eddyphone.simulate import benchmark_specs

    spec = next(s for s in benchmark_specs(120, seed=2) if s.seed == 200065)
    sim, f = _findings(spec)
    assert not sim.truth["murmur"]["present"]
    assert f.presence != "present", f.presence_reason


@pytest.mark.parametrize("seed", [31, 32])
def test_s4_beside_a_flow_murmur_is_an_s4(seed):
    # An S4 (30-50 ms, 60-120 ms before S1; common practice, physiology.S4_*) beside a
    # soft systolic flow murmur: the murmur is the systolic one, the S4 is reported as
    # an extra sound and not as a late-diastolic murmur. Reference: the simulator's
    # truth (a systolic murmur and an S4 event).
    spec = CaseSpec(murmur=CASES["high_flow"][0], site="pulmonic", snr_db=20,
                    device="steep_tilt", heart_rate_bpm=90, s4=True, breathing=0.3,
                    seed=seed)
    sim, f = _findings(spec)
    assert any(lab == "S4" for _, _, lab in sim.events)
    m = f.main()
    assert m is not None and m.phase == sim.truth["murmur"]["phase"] == "systolic"
    assert not any(x.phase == "diastolic" and x.presence == "present" for x in f.murmurs)
    assert "S4" in {e.kind for e in f.extra_sounds}


@pytest.mark.parametrize("cause", ["systolic_leak", "narrowed_inflow"])
def test_pitch_word_is_the_one_heard_at_the_chest(cause):
    # Reference: the simulator's pitch word at the chest surface (its source spectrum
    # through the chest wall), for a low rumble and a leak through a diaphragm and a
    # steeply tilted chest piece (the device must not move the word).
    murmur, site = CASES[cause]
    for device in ("diaphragm", "steep_tilt"):
        sim, f = _findings(CaseSpec(murmur=murmur, site=site, snr_db=20, device=device,
                                    heart_rate_bpm=72, breathing=0.3, seed=15))
        m = f.main()
        assert m is not None, f.presence_reason
        assert m.pitch == sim.truth["murmur"]["pitch"], (device, m.pitch,
                                                          sim.truth["murmur"]["centre_hz"])


def test_long_ejection_murmur_is_mid_systolic_not_holosystolic():
    # Common practice: a holosystolic (regurgitant) murmur keeps its intensity up to
    # S2, an ejection murmur through a narrowed outflow valve fades before it. At 140
    # bpm the ejection murmur runs close to S2; reference: the simulator's measured
    # timing ('mid', its rule on the clean envelope), and 'holo' for a leak at the
    # same rate.
    for cause, site, word in (("narrowed_outflow", "aortic", "mid"),
                              ("systolic_leak", "mitral", "holo")):
        for seed in (40, 41, 42):
            sim, f = _findings(CaseSpec(murmur=CASES[cause][0], site=site, snr_db=20,
                                        device="diaphragm", heart_rate_bpm=140,
                                        breathing=0.3, seed=seed))
            m = f.main()
            assert sim.truth["murmur"]["measured"]["timing"] == word
            assert m is not None and m.phase == "systolic", f.presence_reason
            assert m.timing == word, (cause, seed, m.timing)


@pytest.mark.parametrize("draw,case_seed", [(2, 200094), (2, 200348), (1, 100336)])
def test_ejection_murmur_swelling_and_fading_within_systole_is_mid_systolic(draw, case_seed):
    # Common practice: a regurgitant (holosystolic) murmur keeps its intensity from S1
    # to S2; an ejection murmur swells and fades. Reference: the simulator's measured
    # timing ('mid', its rule on the clean envelope) for benchmark ejection murmurs
    # whose recorded profile stays within 10 dB of its peak next to S2 but is several
    # dB under it next to both sounds.
    from eddyphone.simulate import benchmark_specs

    spec = next(s for s in benchmark_specs(600, seed=draw) if s.seed == case_seed)
    sim, f = _findings(spec)
    assert sim.truth["murmur"]["measured"]["timing"] == "mid"
    m = f.main()
    assert m is not None and m.phase == "systolic", f.presence_reason
    assert m.timing == "mid", (m.timing, m.shape)

def test_tonal_excess_in_few_beats_is_not_reported():
    # A voice or a wheeze comes and goes; a murmur is locked to the cycle. Reference:
    # the demo's noisy-room recording (simulator truth: no murmur; speech, friction
    # and hum in the room), whose tonal diastolic excess shows in under half the beats.
    from pathlib import Path

    from eddyphone.io import load
    from eddyphone.segment import segment

    root = Path(__file__).resolve().parents[1] / "sample_audio"
    truth = json.loads((root / "06_noisy_room.truth.json").read_text())
    assert not truth["murmur"]["present"]
    rec = load(root / "06_noisy_room.wav")
    c = condition(rec.x, rec.fs)
    f = describe(c.x, c.fs, segment(c.x, c.fs))
    assert f.presence == "absent", f.presence_reason
    assert "musical" in f.presence_reason


def test_ragged_excess_with_weak_paired_evidence_is_not_present():
    # A murmur-free benchmark recording (simulator truth: no murmur) with a voice in
    # the room behind a steeply tilted chest piece: its diastolic excess is ragged
    # across the window and barely beats the same beats' null, so it is not called a
    # murmur (at most 'uncertain').
    from eddyphone.simulate import benchmark_specs

    spec = next(s for s in benchmark_specs(600, seed=2) if s.seed == 200022)
    sim, f = _findings(spec)
    assert not sim.truth["murmur"]["present"] and spec.speech > 0
    assert f.presence != "present", f.presence_reason


def test_pitch_text_never_contradicts_the_printed_frequency():
    # common-practice edges, from memory: below ~150 Hz low, from ~300 Hz high; a
    # clinician reads the printed Hz on those edges, so a word from the noise-relative
    # measure that differs from them is explained, not set beside a number that
    # seems to say otherwise
    lo, hi = PITCH_BOUNDARIES_HZ
    text = murmur_record(pitch="low", dominant_frequency_hz=188.0).describe()
    assert "low-pitched (dominant" not in text
    assert "would read medium" in text and "188 Hz" in text
    for pitch, f in (("low", lo - 1.0), ("medium", lo), ("medium", hi - 1.0), ("high", hi)):
        text = murmur_record(pitch=pitch, dominant_frequency_hz=f).describe()
        assert f"{pitch}-pitched (dominant {f:.0f} Hz)" in text
    text = murmur_record(pitch="high", dominant_frequency_hz=250.0).describe()
    assert "high-pitched by its rise over the noise floor" in text and "read medium" in text


def test_level_murmur_missing_one_edge_bin_still_fills_the_window():
    # Common practice: a murmur of level loudness from S1 to S2 is holosystolic. A
    # time course within 2 dB of its peak in every bin, whose active run (found on
    # the longer frames) starts one bin after the window opens or ends one bin
    # before it closes, reaches the window's edges.
    from eddyphone.findings.murmur import _extent

    flat = 10.0 ** (-np.array([2.0, 2, 2, 1, 1, 2, 1, 1, 2, 0, 0, 0]) / 10.0)
    assert _extent(flat, 1, 12, 15.0) == (0.0, 1.0)
    assert _extent(flat, 0, 11, 15.0) == (0.0, 1.0)
    assert timing_word(*_extent(flat, 1, 11, 15.0)) == "holo"
    # an edge bin 20 dB down is not part of it
    dipped = flat.copy()
    dipped[0] = 0.01
    assert _extent(dipped, 1, 12, 15.0)[0] > 0.0


@pytest.mark.parametrize("draw,case_seed,sound", [(2, 200390, "click"), (4, 400078, "S4")])
def test_murmur_sharing_its_window_with_a_short_sound_is_found(draw, case_seed, sound):
    # A benchmark recording whose murmur (carried by the recording, simulator truth)
    # shares its window with a louder short sound (an ejection click, an S4): the
    # short sound is set aside and the murmur beside it is still found, in the
    # truth's phase.
    from eddyphone.simulate import benchmark_specs

    spec = next(s for s in benchmark_specs(600, seed=draw) if s.seed == case_seed)
    sim, f = _findings(spec)
    truth = sim.truth["murmur"]
    assert truth["audible_in_recording"] and sound in {lab for _, _, lab in sim.events}
    assert f.presence == "present", f.presence_reason
    assert f.main().phase == truth["phase"]


def test_time_course_is_not_flattened_by_a_few_noisy_beats():
    # A murmur's time course is averaged over beats like its detection: each beat in
    # units of its own quiet level, the interquartile mean over beats (a quarter of
    # the beats trimmed at each end). Reference: the hand-computed mean of the murmur
    # band, whose beats all carry the same swell (ratio 1 + 10 * bump), while a
    # quarter of the beats hold a breath-like burst 300 times the quiet level in
    # another band of the same window: the bursts are trimmed away, and the shape
    # word is crescendo-decrescendo (common practice: swelling and fading).
    from eddyphone.findings.murmur import _snr_profile

    n_beats, n_bins = 12, 12
    bump = np.sin(np.pi * (np.arange(n_bins) + 0.5) / n_bins) ** 4
    ratio = np.ones((n_beats, 2, n_bins))
    ratio[:, 0] += 10.0 * bump
    ratio[:3, 1] = 300.0
    prof = _snr_profile(ratio, np.ones(2), [0, 1])
    assert np.allclose(prof, 10.0 * bump)
    db = 10.0 * np.log10(np.maximum(prof / prof.max(), 1e-6))
    assert shape_word(db)[0] == "crescendo-decrescendo"


def test_ejection_murmur_behind_a_tilted_chest_piece_with_breathing_keeps_its_swell():
    # A benchmark recording (simulator truth: an ejection murmur through a narrowed
    # outflow valve, measured on its clean envelope as mid-systolic and
    # crescendo-decrescendo) behind the steeply tilted chest piece with loud
    # breathing: the murmur's time course is not flattened by the breathing beats
    # into a holosystolic plateau.
    from eddyphone.simulate import benchmark_specs

    spec = next(s for s in benchmark_specs(600, seed=2) if s.seed == 200360)
    sim, f = _findings(spec)
    truth = sim.truth["murmur"]["measured"]
    assert (truth["timing"], truth["shape"]) == ("mid", "crescendo-decrescendo")
    assert spec.device == "steep_tilt" and spec.breathing > 0.5
    m = f.main()
    assert m is not None and m.phase == "systolic", f.presence_reason
    assert (m.timing, m.shape) == ("mid", "crescendo-decrescendo")


def test_split_heard_in_only_some_beats_is_not_called_fixed():
    # Common practice: a physiological split widens on inspiration and closes (single
    # S2) on expiration; a fixed split is there in every beat, unchanged. Hand-built
    # A2-P2 series (s), None where S2 was single.
    from eddyphone.findings.extra import _split_variation

    steady = [0.040, 0.042, 0.038, 0.041, 0.039] * 4
    assert _split_variation(steady) == ("fixed across the recording", False)
    half = [0.040, None, 0.041, None, 0.039, None, 0.040, None] * 3
    text, varies = _split_variation(half)
    assert varies and text.startswith("heard in 12 of 24 beats")
    breathing = [0.025, 0.030, 0.045, 0.055, 0.050, 0.035] * 4
    assert _split_variation(breathing) == (
        "varies across the recording (as with breathing)", True)


def test_steady_narrow_split_is_not_called_fixed():
    # Common practice: a fixed split is a sign because it stays open on expiration;
    # a steady split no wider than a normal expiratory one (up to 30 ms,
    # physiology.S2_SPLIT_EXPIRATION_S, plus 5 ms of measuring jitter) is not called
    # fixed. On the simulator a single S2 measures 23-29 ms (docs/findings.md).
    from eddyphone.findings.extra import _split_variation

    narrow = [0.026, 0.025, 0.027, 0.024, 0.026] * 4
    text, varies = _split_variation(narrow)
    assert varies is None
    assert text == ("steady but no wider than a normal expiratory split (under 35 ms), "
                    "so not judged fixed")
    wide = [v + 0.015 for v in narrow]
    assert _split_variation(wide) == ("fixed across the recording", False)


def test_murmur_bands_do_not_skip_an_octave():
    # Our own rule: a turbulent murmur's spectrum is smooth, so its excess over the
    # floor does not skip an analysis band. Hand-built excess (dB) in the first five
    # bins of a 12-bin systolic window: a low decrescendo in 25-75 Hz (like S1's own
    # ringing) and a separate faint excess in 300-600 Hz with nothing between. The
    # candidate is the low band alone, judged as a low-only excess (100 ms within
    # 6 dB of its peak, FindingsConfig.min_low_murmur_s), and the 40-ms decrescendo
    # is set aside as a transient. With 75-300 Hz raised as well (a broadband
    # murmur) all four bands are kept and the same course is a murmur.
    from eddyphone.findings.candidates import judge_run

    cfg = FindingsConfig()
    n_bins, bin_s = 12, 0.01
    dur = np.array([n_bins * bin_s, 0.3])
    M = np.zeros((2, 5, n_bins))
    M[0, 0, :5] = [20.0, 18.0, 12.0, 8.0, 5.0]
    M[0, 3, :5] = [8.0, 8.0, 7.0, 7.0, 6.0]
    cand, _, low_only, _ = judge_run(M, 0, [0, 3], 0, 5, bin_s, dur, cfg)
    assert low_only and cand is None
    M[0, 1, :5] = M[0, 2, :5] = [9.0, 9.0, 8.0, 8.0, 7.0]
    cand, _, low_only, _ = judge_run(M, 0, [0, 1, 2, 3], 0, 5, bin_s, dur, cfg)
    assert not low_only and cand is not None and cand.bands == (0, 1, 2, 3)
    # a band between that stands out of its floor (4 dB, FindingsConfig.excess_db)
    # but more than 15 dB under the strongest still joins the bands on either side
    M[0, 0, :5] = [30.0, 28.0, 25.0, 22.0, 20.0]
    M[0, 1, :5] = [28.0, 27.0, 25.0, 22.0, 20.0]
    M[0, 2, :5] = [10.0, 10.0, 9.0, 9.0, 8.0]
    M[0, 3, :5] = [30.0, 30.0, 28.0, 27.0, 26.0]
    cand, _, _, _ = judge_run(M, 0, [0, 1, 3], 0, 5, bin_s, dur, cfg)
    assert cand is not None and cand.bands == (0, 1, 3)


@pytest.mark.parametrize("draw,case_seed,present", [(1, 100592, False), (1, 100296, True)])
def test_excess_beyond_a_band_gap_is_another_sound(draw, case_seed, present):
    # Benchmark recordings behind the steeply tilted chest piece (simulator truth): a
    # murmur-free one whose early-systolic excess stood in 25-150 Hz and, beyond an
    # empty octave, in 300-600 Hz (S1's low ringing and another sound, read as a
    # murmur), and one carrying an ejection murmur that a band skipped by it had kept
    # 'uncertain'.
    from eddyphone.simulate import benchmark_specs

    spec = next(s for s in benchmark_specs(600, seed=draw) if s.seed == case_seed)
    sim, f = _findings(spec)
    truth = sim.truth["murmur"]
    assert spec.device == "steep_tilt"
    assert bool(truth["audible_in_recording"]) is present
    assert (f.presence == "present") is present, f.presence_reason


@pytest.mark.parametrize("case_seed,present", [(200441, False), (100152, True)])
def test_low_only_diastolic_excess_is_only_possible(case_seed, present):
    # Benchmark recordings (simulator truth): a murmur-free one whose late-diastolic
    # excess lies below 150 Hz only (where the S3, S4, breathing and the next S1's low
    # onset also lie: common practice places the S3/S4 and the bell's range there),
    # reported as a possible murmur with that reason, not as present; and a carried
    # rumble through a narrowed inflow valve, whose excess reaches 150-300 Hz, still
    # present in diastole.
    from eddyphone.simulate import benchmark_specs

    spec = next(s for s in benchmark_specs(600, seed=case_seed // 100000)
                if s.seed == case_seed)
    sim, f = _findings(spec)
    truth = sim.truth["murmur"]
    assert bool(truth["audible_in_recording"]) is present
    if present:
        assert truth["cause"] == "narrowed_inflow"
        assert f.presence == "present" and f.main().phase == "diastolic"
    else:
        assert truth["cause"] == "none"
        assert f.presence == "uncertain" and "below 150 Hz" in f.presence_reason
        assert f.main().to_dict()["uncertain_reason"]


def test_loud_murmur_is_not_judged_ragged_by_its_own_swell():
    # A benchmark recording (simulator truth: a carried ejection murmur through a
    # narrowed outflow valve, grade III, 41 bpm, behind the bell) over only 8 beats:
    # the paired t across so few beats stays under 3, and the beat-averaged course of a
    # murmur 22 dB over the floor curves by more than 1 dB bin to bin by its own swell
    # and fade. Our own rule: the raggedness that marks a voice or friction is judged
    # relative to the excess's height (8 % of its peak, at least 1 dB), so the murmur
    # is present.
    from eddyphone.simulate import benchmark_specs

    spec = next(s for s in benchmark_specs(600, seed=1) if s.seed == 100283)
    sim, f = _findings(spec)
    truth = sim.truth["murmur"]
    assert truth["audible_in_recording"] and truth["phase"] == "systolic"
    assert f.presence == "present", f.presence_reason
    assert f.main().phase == "systolic"


def test_medium_murmur_behind_a_high_pass_chain_is_not_read_high():
    # A benchmark recording (simulator truth: a carried continuous murmur whose
    # centroid at the chest surface is 336 Hz, medium on the simulator's 180/400 Hz
    # edges, behind the phone's high-pass response). Its noise-relative measure lay
    # above the 540-Hz high edge mapped from the chest edges; the edge refitted on
    # benchmark seeds 1-2 (config.PITCH_BOUNDARIES_RE_NOISE_HZ, our own fit) reads
    # it medium.
    from eddyphone.simulate import benchmark_specs

    spec = next(s for s in benchmark_specs(600, seed=2) if s.seed == 200579)
    sim, f = _findings(spec)
    truth = sim.truth["murmur"]
    assert spec.device == "phone" and truth["pitch"] == "medium"
    assert f.presence == "present", f.presence_reason
    assert f.main().pitch == "medium"


def test_uncertain_murmur_names_the_rule_that_held_it_back():
    # A benchmark recording (simulator truth: a carried diastolic leak, 124 bpm,
    # behind the bell) that reads fainter than -25 dB re S1/S2 and shows in 15 of 18
    # beats, under the 85 % that a faint murmur needs
    # (FindingsConfig.faint_present_consistency, our own rule). The presence line
    # must name that rule, not only the consistency.
    from eddyphone.simulate import benchmark_specs

    spec = next(s for s in benchmark_specs(600, seed=1) if s.seed == 100483)
    sim, f = _findings(spec)
    assert sim.truth["murmur"]["cause"] == "diastolic_leak"
    assert f.presence == "uncertain", f.presence_reason
    assert "must show in 85%" in f.presence_reason
    assert f.main().uncertain_reason in f.presence_reason


def test_murmur_free_diastolic_excess_in_60_percent_of_beats_is_not_present():
    # A benchmark recording (simulator truth: no murmur; 90 bpm, steep tilt, heavy
    # breathing) whose diastoles show an excess in 12 of 20 beats: the ordinary 60 %
    # would call it present; a diastolic murmur must show in 65 %
    # (FindingsConfig.diastolic_present_consistency, our own rule) and the line says so.
    from eddyphone.simulate import benchmark_specs

    spec = next(s for s in benchmark_specs(600, seed=2) if s.seed == 200526)
    sim, f = _findings(spec)
    assert sim.truth["murmur"]["present"] is False
    assert f.presence == "uncertain", f.presence_reason
    assert "a diastolic excess must show in 65%" in f.presence_reason
    c = condition(sim.x, sim.fs)
    old = describe(c.x, c.fs, _truth_beats(sim),
                   config=FindingsConfig(diastolic_present_consistency=0.6))
    assert old.presence == "present"


@pytest.mark.parametrize("name", ["diastolic_present_consistency", "tonal_present_consistency",
                                  "faint_present_consistency"])
def test_consistency_settings_outside_0_1_are_refused(name):
    from eddyphone.errors import ParameterError

    with pytest.raises(ParameterError, match=name):
        FindingsConfig(**{name: 1.5})
    with pytest.raises(ParameterError, match=name):
        FindingsConfig(**{name: 0.0})
    assert getattr(FindingsConfig(**{name: 0.9}), name) == 0.9



@pytest.mark.parametrize("site", ["aortic", "pulmonic"])
@pytest.mark.parametrize("seed", [5, 7])
def test_late_a2_of_a_paradoxical_split_is_not_an_opening_snap(site, seed):
    # Common practice: in a paradoxically split S2 the aortic closure comes after the
    # pulmonic one, and an opening snap is timed from A2 (40-120 ms after it,
    # physiology.OPENING_SNAP_AFTER_A2_S). These simulated recordings have no snap;
    # timed from S2's onset (P2), their late A2 had read as one. The split is found.
    _, f = _findings(CaseSpec(s2_split="paradoxical", site=site, snr_db=25, seed=seed))
    kinds = [e.kind for e in f.extra_sounds]
    assert "opening_snap" not in kinds
    assert "split_S2" in kinds


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_opening_snap_after_a2_is_found(seed):
    # The simulator's snap (mitral area, physiological split) 40-120 ms after A2:
    # found, timed within the published window plus the segmentation tolerance.
    _, f = _findings(CaseSpec(s2_split="physiological", opening_snap=True, site="mitral",
                                snr_db=25, seed=seed))
    snap = [e for e in f.extra_sounds if e.kind == "opening_snap"]
    assert snap, [e.kind for e in f.extra_sounds]
    lo, hi = physiology.OPENING_SNAP_AFTER_A2_S
    tol = extra_mod.WINDOW_TOLERANCE_S
    assert 1000 * (lo - tol) <= snap[0].timing_ms <= 1000 * (hi + tol)


def test_opening_snap_is_not_read_as_p2():
    # Demo 08: a narrowed inflow valve's snap 85-94 ms after A2, inside the S2
    # segment, with a physiological split. The split read off the S2 envelope must
    # stay within the A2-P2 intervals the simulator made (its truth, per beat) and
    # end before the snap; read with the snap as P2 it was 66 ms, a wide split.
    from eddyphone.simulate import demo_specs

    sim, f = _findings(demo_specs()["08_diastolic_rumble"])
    kinds = {e.kind: e for e in f.extra_sounds}
    assert "opening_snap" in kinds and "split_S2" in kinds
    made = [1000 * b["s2_split_s"] for b in sim.truth["beats"]]
    split = kinds["split_S2"]
    assert min(made) <= split.timing_ms <= max(made)
    assert split.details["a2_p2_max_ms"] < kinds["opening_snap"].timing_ms


def test_onset_of_a_harsh_ejection_murmur_is_not_an_ejection_click(monkeypatch):
    # A benchmark recording (simulator truth: narrowed outflow, no click; 133 bpm,
    # aortic area) where the harsh murmur, 120 ms after S1 in 20 of 31 beats, stands
    # out of the high band and dips 6 dB for a moment: a click also stays down afterwards
    # (extra.SHORT_SETTLE_S, our own check), the murmur carries on.
    from eddyphone.simulate import benchmark_specs

    spec = next(s for s in benchmark_specs(600, seed=1) if s.seed == 100179)
    sim, f = _findings(spec)
    assert sim.truth["murmur"]["cause"] == "narrowed_outflow" and not spec.ejection_click
    assert "ejection_click" not in [e.kind for e in f.extra_sounds]
    monkeypatch.setattr(extra_mod, "SHORT_SETTLE_S", None)
    _, without = _findings(spec)
    assert "ejection_click" in [e.kind for e in without.extra_sounds]


def test_click_at_a_fast_rate_is_reported_as_possible():
    # A benchmark recording (simulator truth: narrowed outflow, no click; 159 bpm):
    # S1's end and the murmur's onset fall in the click's window. On the benchmark
    # every false click came at 144 bpm or faster (extra.FAST_CLICK_BPM, our own
    # edge), so a click there carries a caution and half its confidence.
    from eddyphone.simulate import benchmark_specs

    spec = next(s for s in benchmark_specs(600, seed=1) if s.seed == 100335)
    sim, f = _findings(spec)
    assert not spec.ejection_click and sim.truth["murmur"]["cause"] == "narrowed_outflow"
    click = next(e for e in f.extra_sounds if e.kind == "ejection_click")
    assert click.details["caution"].startswith("possible: above 140 bpm")
    assert click.confidence <= 0.5
    assert "possible" in click.describe()
    # below the edge the same kind of click is reported plainly (simulator truth:
    # narrowed outflow with a click, 75 bpm)
    slow = next(s for s in benchmark_specs(600, seed=2) if s.seed == 200254)
    _, g = _findings(slow)
    plain = next(e for e in g.extra_sounds if e.kind == "ejection_click")
    assert "caution" not in plain.details and slow.ejection_click


def test_patient_summary_marks_a_possible_click():
    # A click the findings report only as possible (details.caution) reads "(possible)"
    # beside its site in the patient summary; a plain one does not.
    from eddyphone.findings.records import ExtraSound, Findings

    click = ExtraSound("x1", "ejection_click", 0.4, 80.0, "after S1 onset",
                       details={"caution": "possible: at 160 bpm ..."})
    plain = ExtraSound("x1", "S3", 0.9, 150.0, "after S2 onset")
    f_aortic = Findings((), (click,), (), "absent", "no murmur")
    f_mitral = Findings((), (plain,), (), "absent", "no murmur")
    p = summarise_patient({"aortic": f_aortic, "mitral": f_mitral}, patient_id="P-0002")
    assert "ejection click at the aortic area (possible)" in p.summary, p.summary
    assert "S3 at the mitral area." in p.summary, p.summary


def _patient_findings(spec: CaseSpec) -> dict:
    """Findings of one benchmark case recorded at every site (simulate.site_specs)."""
    from eddyphone.simulate import site_specs

    return {site: _findings(s)[1] for site, s in site_specs(spec).items()}


def test_patient_murmur_in_one_recording_only_is_possible():
    # A murmur-free benchmark patient (simulator truth: no murmur; flat chest piece,
    # 22 dB, 146 bpm) whose tricuspid recording alone shows a diastolic excess called
    # present, in 2 of 3 beats. A murmur called present in only one of several
    # recordings, there in under 80 % of the beats, is possible for the patient
    # (patient.MIN_RECORDINGS_PRESENT and ONE_RECORDING_CONSISTENCY, our own rule
    # from bench/bench_patient.py: such calls were wrong more often than right).
    from eddyphone.findings.patient import ONE_RECORDING_CONSISTENCY
    from eddyphone.simulate import benchmark_specs

    spec = next(s for s in benchmark_specs(600, seed=1) if s.seed == 100410)
    assert spec.murmur is None
    per_site = _patient_findings(spec)
    called = [s for s, f in per_site.items() if f.presence == "present"]
    assert called == ["tricuspid"]  # the recording's own call stands
    assert per_site["tricuspid"].main().consistency < ONE_RECORDING_CONSISTENCY
    p = summarise_patient(per_site, patient_id="P-0003")
    assert p.presence == "uncertain"
    m = p.murmurs[0]
    assert m.possible and m.present_at == ("tricuspid",)
    assert p.summary.startswith("Possible: ") and "1 of the 4 recordings only" in p.summary
    d = json.loads(json.dumps(p.to_dict()))
    assert d["murmurs"][0]["possible"] is True and d["murmurs"][0]["present_at"] == called
    # the same recording alone is the patient's only evidence: present
    alone = summarise_patient({"tricuspid": per_site["tricuspid"]})
    assert alone.presence == "present" and not alone.murmurs[0].possible
    # and a murmur seen in most beats of its one recording counts for the patient
    firm = replace(per_site["tricuspid"].main(), consistency=ONE_RECORDING_CONSISTENCY)
    per_site["tricuspid"] = replace(per_site["tricuspid"], murmurs=(firm,))
    assert summarise_patient(per_site).presence == "present"


def test_a_rumble_heard_at_the_apex_only_counts_for_the_patient():
    # The rumble of a narrowed inflow valve stays at the apex (common practice), so a
    # low-pitched diastolic murmur present at the mitral area alone is not demoted to
    # 'possible' (patient._apical_rumble), even in under 80 % of its beats; the same
    # murmur alone at the aortic area is. The murmur is demo 08's (simulator: narrowed
    # inflow valve, mitral area), its consistency set to 0.7.
    from eddyphone.findings.records import Findings
    from eddyphone.simulate import demo_specs

    _, f08 = _findings(demo_specs()["08_diastolic_rumble"])
    rumble = replace(f08.main(), consistency=0.7)
    assert (rumble.phase, rumble.pitch, rumble.presence) == ("diastolic", "low", "present")
    alone = replace(f08, murmurs=(rumble,))
    quiet = Findings((), (), (), "absent", "windows stay quiet")
    others = ("aortic", "pulmonic", "tricuspid")
    at_apex = summarise_patient({"mitral": alone, **{s: quiet for s in others}})
    assert at_apex.presence == "present" and not at_apex.murmurs[0].possible
    at_base = summarise_patient({"aortic": alone, **{s: quiet for s in
                                                     ("pulmonic", "tricuspid", "mitral")}})
    assert at_base.presence == "uncertain" and at_base.murmurs[0].possible


def test_findings_read_back_from_their_json():
    # The output contract's findings list reads back into the same findings (what the
    # batch's patient table is built from): demo 08's murmur, opening snap and split
    # S2, through the standard library's JSON round trip.
    from eddyphone.findings.records import Findings
    from eddyphone.simulate import demo_specs

    sim = generate(demo_specs()["08_diastolic_rumble"])
    c = condition(sim.x, sim.fs)
    f = describe(c.x, c.fs, _truth_beats(sim))
    data = json.loads(json.dumps(f.to_list()))
    back = Findings.from_json(data, f.presence, f.presence_reason)
    assert back.to_list() == data
    assert back.main().describe() == f.main().describe()
    assert [e.kind for e in back.extra_sounds] == [e.kind for e in f.extra_sounds]
