"""The simulator against published timing, flow physics and the recording-chain spec."""

from __future__ import annotations

import csv
import json
from pathlib import Path

import numpy as np
import pytest
import soundfile as sf
from scipy import signal

from eddyphone import physiology as ph
from eddyphone.errors import InputError, ParameterError
from eddyphone.simulate import (
    MURMUR_CAUSES,
    SITES,
    CaseSpec,
    MurmurSpec,
    benchmark_specs,
    chain,
    demo_specs,
    generate,
    murmurs,
    write,
)

QUIET = dict(snr_db=40.0, breathing=0.0, speech=0.0, friction_per_min=0.0, hum_hz=None)


def _beats(sim):
    return sim.truth["beats"]


# --- timing ------------------------------------------------------------------------

@pytest.mark.parametrize("hr", [48.0, 72.0, 100.0, 140.0])
def test_systolic_interval_follows_weissler_within_spread(hr):
    # S1-onset to A2-onset against Weissler et al. 1968 QS2 minus the Q-M1 delay, at the
    # rate of the preceding cycle; each beat within 3 sd of the regression (its stated
    # residual spread), and the recording's mean within 1.5 sd (one subject's offset).
    sim = generate(CaseSpec(heart_rate_bpm=hr, duration_s=20.0, seed=int(hr), **QUIET))
    res = []
    for b in _beats(sim):
        mean, sd = ph.systolic_interval_s(b["hr_for_systole_bpm"])
        res.append((b["systolic_interval_s"] - mean) / sd)
    res = np.array(res)
    assert len(res) >= 10
    assert np.all(np.abs(res) < 3.0)
    assert abs(res.mean()) < 1.6


def test_heart_rate_and_rhythm():
    sinus = generate(CaseSpec(heart_rate_bpm=75, duration_s=30, rsa_swing_bpm=8, seed=3,
                              **QUIET))
    rr = np.array(sinus.truth["rhythm"]["rr_s"])
    assert 60 / rr.mean() == pytest.approx(75, rel=0.04)
    assert rr.std() / rr.mean() < 0.08
    # respiratory sinus arrhythmia: faster on inspiration (common practice)
    beats = _beats(sinus)
    rr_in = [b["rr_s"] for b in beats if b["lung_volume"] > 0.6]
    rr_out = [b["rr_s"] for b in beats if b["lung_volume"] < 0.3]
    assert np.mean(rr_in) < np.mean(rr_out)
    irregular = generate(CaseSpec(heart_rate_bpm=110, rhythm="irregular", duration_s=30,
                                  seed=4, **QUIET))
    rr = np.array(irregular.truth["rhythm"]["rr_s"])
    assert rr.std() / rr.mean() > 0.12  # atrial-fibrillation-like irregularity
    assert not any(lab == "S4" for _, _, lab in irregular.events)


def test_ectopic_beats_have_compensatory_pause():
    sim = generate(CaseSpec(heart_rate_bpm=70, ectopic_rate=0.2, duration_s=30, seed=9,
                            **QUIET))
    beats = _beats(sim)
    early = [i for i, b in enumerate(beats) if b["premature"] and 0 < i < len(beats) - 1]
    assert early
    for i in early:
        pair = beats[i - 1]["rr_s"] + beats[i]["rr_s"]
        assert beats[i - 1]["rr_s"] < 0.8 * beats[i]["rr_s"]
        assert pair == pytest.approx(2 * np.median([b["rr_s"] for b in beats]), rel=0.12)


def test_segments_cover_whole_cycles_in_order():
    for spec in list(demo_specs().values())[:4]:
        sim = generate(spec)
        labels = [lab for _, _, lab in sim.segments]
        assert labels[:4] == ["S1", "systole", "S2", "diastole"]
        assert labels == ["S1", "systole", "S2", "diastole"] * (len(labels) // 4)
        starts = np.array([a for a, _, _ in sim.segments])
        ends = np.array([b for _, b, _ in sim.segments])
        assert np.all(ends > starts)
        assert np.allclose(starts[1:], ends[:-1])
        assert starts[0] >= 0 and ends[-1] <= spec.duration_s


def test_extra_sounds_land_in_published_windows():
    spec = CaseSpec(heart_rate_bpm=64, s3=True, s4=True, ejection_click=True,
                    opening_snap=True, duration_s=20, seed=11, **QUIET)
    sim = generate(spec)
    beats = _beats(sim)
    ev = sim.events
    a2 = np.array([b["a2_s"] for b in beats])
    s1 = np.array([b["s1_start_s"] for b in beats] + [beats[-1]["next_s1_s"]])

    span = (beats[0]["s1_start_s"], beats[-1]["next_s1_s"])

    def delays(label, ref):
        # delay of each event after the latest reference onset before it (full cycles only)
        out = []
        for a, _, lab in ev:
            if lab == label and span[0] <= a <= span[1]:
                out.append(a - ref[ref <= a].max())
        return np.array(out)

    found = {lab for _, _, lab in ev}
    assert {"S3", "S4", "click", "snap"} <= found
    tol = 1.0 / spec.fs + 1e-9
    # S3 120-180 ms after A2; click 60-100 ms after S1 onset; snap 40-120 ms after A2;
    # S4 onset 60-120 ms before S1 (physiology module; common practice, from memory)
    for label, ref, window in (("S3", a2, ph.S3_AFTER_A2_S),
                               ("click", s1, ph.EJECTION_CLICK_AFTER_S1_S),
                               ("snap", a2, ph.OPENING_SNAP_AFTER_A2_S)):
        d = delays(label, ref)
        assert d.size > 5
        assert np.all((d >= window[0] - tol) & (d <= window[1] + tol)), label
    lead = []
    for a, _, lab in ev:
        if lab == "S4" and span[0] <= a <= span[1]:
            nxt = s1[s1 > a]
            lead.append(nxt[0] - a)
    lead = np.array(lead)
    assert lead.size > 5
    assert np.all((lead >= ph.S4_BEFORE_S1_S[0] - tol) & (lead <= ph.S4_BEFORE_S1_S[1] + tol))
    # S1 components 20-30 ms apart; A2-P2 0-80 ms, wider on inspiration
    s1_split = np.array([b["s1_split_s"] for b in beats])
    assert np.all((s1_split >= 0.020 - tol) & (s1_split <= 0.030 + tol))
    split = np.array([b["s2_split_s"] for b in beats])
    vol = np.array([b["lung_volume"] for b in beats])
    assert np.all((split >= 0) & (split <= 0.080))
    assert split[vol > 0.6].mean() > split[vol < 0.3].mean() + 0.01


# --- murmurs -----------------------------------------------------------------------

def _fake_beats(n_beats=12, rr=0.8, sys=0.33):
    beats = []
    for i in range(n_beats):
        s1 = 0.2 + i * rr
        beats.append({"s1_start_s": s1, "ejection_s": s1 + 0.05, "a2_s": s1 + sys,
                      "next_s1_s": s1 + rr, "mitral_open_s": s1 + sys + 0.08,
                      "rr_prev_s": rr, "premature": False})
    return beats


def _render(m: MurmurSpec, fs=8000.0, seed=0):
    plan = murmurs.plan_murmur(m)
    beats = _fake_beats()
    n = int(10 * fs)
    x, _, _ = murmurs.render_murmur(plan, beats, n, fs, np.random.default_rng(seed),
                                    sinus=True, mean_rr_s=0.8)
    return plan, x


def _centroid(x, fs):
    f, p = signal.welch(x, fs=fs, nperseg=2048)
    return float(np.sum(f * p) / np.sum(p))


def test_murmur_centre_follows_strouhal_scaling():
    # Strouhal scaling f = St v / d (Lees & Dewey 1970 break frequency; St from
    # eddyphone.physics): doubling the jet velocity or halving the orifice doubles the
    # spectral centre. A plateau (systolic leak) murmur keeps the velocity steady.
    fs = 8000.0
    cases = [(2.5, 0.010), (5.0, 0.010), (2.5, 0.005)]
    centres = []
    for v, d in cases:
        plan, x = _render(MurmurSpec("systolic_leak", diameter_m=d, velocity_m_s=v), fs)
        assert plan.break_frequency_hz == pytest.approx(plan.strouhal_number * v / d)
        centres.append(_centroid(x, fs))
        expected = murmurs.spectrum_summary(plan.break_frequency_hz, fs)["centre_hz"]
        assert centres[-1] == pytest.approx(expected, rel=0.15)
    assert centres[1] / centres[0] == pytest.approx(2.0, rel=0.12)
    assert centres[2] / centres[0] == pytest.approx(2.0, rel=0.12)


def test_murmur_intensity_rises_with_reynolds_number():
    # faster jet (same orifice) and thinner blood (lower hematocrit, lower viscosity per
    # the Pries 1992 bulk fit): both raise Re = rho v d / mu, and both raise the level.
    levels, res = [], []
    for v in (2.0, 3.0, 4.0, 5.0):
        plan, x = _render(MurmurSpec("narrowed_outflow", diameter_m=0.009, velocity_m_s=v))
        levels.append(10 * np.log10(np.mean(x**2)))
        res.append(plan.reynolds)
    assert np.all(np.diff(res) > 0) and np.all(np.diff(levels) > 0)
    levels, res = [], []
    for hct in (0.45, 0.35, 0.25, 0.15):
        plan, x = _render(MurmurSpec("low_viscosity", diameter_m=0.015, velocity_m_s=1.2,
                                     hematocrit=hct))
        levels.append(10 * np.log10(np.mean(x**2)))
        res.append(plan.reynolds)
    assert np.all(np.diff(res) > 0) and np.all(np.diff(levels) > 0.1)
    # below the transition range there is no murmur at all
    plan = murmurs.plan_murmur(MurmurSpec("high_flow", diameter_m=0.004, velocity_m_s=0.8))
    assert plan.reynolds < plan.transition_re[0] and plan.relative_power == 0


def test_truth_physics_matches_reference_library():
    # Reynolds number and viscosity cross-checked with the fluids package (Reynolds),
    # Bernoulli with the clinical 4 v**2 rule (common practice).
    import fluids

    sim = generate(CaseSpec(murmur=MurmurSpec("narrowed_outflow", diameter_m=0.009,
                                              velocity_m_s=4.0), seed=2, **QUIET))
    p = sim.truth["murmur"]["physics"]
    re_ref = fluids.core.Reynolds(V=p["peak_velocity_m_s"], D=p["diameter_m"],
                                  rho=p["density_kg_m3"], mu=p["viscosity_pa_s"])
    assert p["reynolds"] == pytest.approx(re_ref, rel=1e-9)
    assert p["pressure_drop_mmhg"] == pytest.approx(4 * 4.0**2)
    assert p["regime"] == "turbulent"


@pytest.mark.parametrize("cause", [c for c in MURMUR_CAUSES if c != "none"])
def test_murmur_phase_and_shape_in_the_signal(cause):
    defaults = {
        "high_flow": dict(diameter_m=0.021, velocity_m_s=2.2),
        "low_viscosity": dict(diameter_m=0.022, velocity_m_s=1.8, hematocrit=0.2),
        "wall_irregularity": dict(diameter_m=0.022, velocity_m_s=1.8, transition_factor=0.4),
        "narrowed_outflow": dict(diameter_m=0.010, velocity_m_s=4.3),
        "systolic_leak": dict(diameter_m=0.005, velocity_m_s=5.0),
        "diastolic_leak": dict(diameter_m=0.005, velocity_m_s=4.2),
        "narrowed_inflow": dict(diameter_m=0.012, velocity_m_s=2.2),
        "continuous": dict(diameter_m=0.006, velocity_m_s=4.5),
    }
    spec = CaseSpec(heart_rate_bpm=62, murmur=MurmurSpec(cause, **defaults[cause]), seed=5,
                    **QUIET)
    sim = generate(spec)
    m = sim.truth["murmur"]
    assert m["present"]
    env = np.abs(sim.parts["murmur"])
    fs = sim.fs
    in_sys = np.zeros(len(env), bool)
    in_dia = np.zeros(len(env), bool)
    for a, b, lab in sim.segments:
        sl = slice(int(a * fs), int(b * fs))
        if lab == "systole":
            in_sys[sl] = True
        elif lab == "diastole":
            in_dia[sl] = True
    e_sys = np.mean(env[in_sys] ** 2)
    e_dia = np.mean(env[in_dia] ** 2)
    if m["phase"] == "systolic":
        assert e_sys > 30 * e_dia
    elif m["phase"] == "diastolic":
        assert e_dia > 30 * e_sys
    else:
        assert 0.2 < e_sys / e_dia < 5
    me = m["measured"]
    if cause == "narrowed_inflow":
        # the rumble runs to S1 with its presystolic accent: heard as long as diastole
        assert me["end_fraction"] > 0.9
    elif cause != "continuous":
        assert me["timing"] == m["timing"], me
        assert me["shape"] == m["shape"], me


def test_normal_case_is_silent_between_sounds():
    # no murmur: the energy in systole and diastole (away from the sound edges) is the
    # noise floor; with a murmur it is well above it.
    def ratio(spec):
        sim = generate(spec)
        fs = sim.fs
        x, noise = sim.x, sim.parts["noise"]
        mask = np.zeros(len(x), bool)
        for a, b, lab in sim.segments:
            if lab in ("systole", "diastole") and b - a > 0.1:
                mask[int((a + 0.03) * fs): int((b - 0.03) * fs)] = True
        sos = signal.butter(4, [25, 400], "band", fs=fs, output="sos")
        xb, nb = signal.sosfiltfilt(sos, x), signal.sosfiltfilt(sos, noise)
        return 10 * np.log10(np.mean(xb[mask] ** 2) / np.mean(nb[mask] ** 2))

    base = CaseSpec(heart_rate_bpm=70, snr_db=20, breathing=0.3, seed=8)
    assert abs(ratio(base)) < 0.5
    with_murmur = base.with_(murmur=MurmurSpec("systolic_leak", diameter_m=0.005,
                                               velocity_m_s=5.0))
    assert ratio(with_murmur) > 6.0


# --- recording chain ---------------------------------------------------------------

def _psd_db(x, fs, freqs):
    f, p = signal.welch(x, fs=fs, nperseg=4096)
    return np.array([10 * np.log10(np.mean(p[(f > 0.9 * q) & (f < 1.1 * q)])) for q in freqs])


def test_steep_tilt_device_response():
    # the spec for the strong low-frequency tilt of some stethoscopes: about
    # -35 dB from 20 to 200 Hz and about -70 dB by 400 Hz; measured on white noise
    # through the device with scipy's Welch estimate.
    fs = 4000.0
    w = np.random.default_rng(0).standard_normal(int(60 * fs))
    y = chain.apply_device(w, fs, "steep_tilt")
    lv = _psd_db(y, fs, [20, 200, 400]) - _psd_db(w, fs, [20, 200, 400])
    assert lv[1] - lv[0] == pytest.approx(-35, abs=3)
    assert lv[2] - lv[0] == pytest.approx(-70, abs=5)


def test_tilt_shows_in_generated_recording_noise():
    # the noise of a whole generated case (white-ish background) carries the same tilt
    spec = CaseSpec(device="steep_tilt", snr_db=0, breathing=0.0, seed=1, duration_s=30)
    sim = generate(spec)
    bg_slope = sim.truth["noise"]["background_slope"]
    lv = _psd_db(sim.parts["noise"], sim.fs, [20, 200])
    # remove the background's own f**-slope colouring (one decade: 10*slope dB)
    assert lv[1] - lv[0] + 10 * bg_slope == pytest.approx(-35, abs=4)


def test_diaphragm_and_bell_modes():
    # bell passes the low band and loses the high; the diaphragm the reverse (common
    # practice)
    f = np.array([30.0, 300.0])
    bell = chain.device_gain_db("bell", f)
    dia = chain.device_gain_db("diaphragm", f)
    assert bell[0] - bell[1] > 6
    assert dia[1] - dia[0] > 10


def test_snr_is_as_specified():
    for snr in (0.0, 10.0, 25.0):
        sim = generate(CaseSpec(snr_db=snr, breathing=0.5, speech=0.3, seed=3))
        assert sim.truth["noise"]["snr_db"] == pytest.approx(snr, abs=0.2)


def test_peak_normalisation_clipping_and_quantisation():
    sim = generate(CaseSpec(peak_dbfs=-6.0, seed=4, **QUIET))
    assert 20 * np.log10(np.abs(sim.x).max()) == pytest.approx(-6.0, abs=0.01)
    assert np.allclose(sim.x * 32768, np.round(sim.x * 32768))
    hot = generate(CaseSpec(peak_dbfs=-1.0, overdrive_db=6.0, seed=4, **QUIET))
    assert hot.truth["recording"]["clipped_fraction"] > 0
    assert np.abs(hot.x).max() <= 1.0


# --- files ---------------------------------------------------------------------------

def test_same_seed_same_bytes(tmp_path):
    spec = demo_specs()["05_systolic_leak"]
    for d in ("a", "b"):
        write(generate(spec), tmp_path / d, "case")
    for name in ("case.wav", "case.truth.csv", "case.truth.json"):
        assert (tmp_path / "a" / name).read_bytes() == (tmp_path / "b" / name).read_bytes()
    write(generate(spec, seed=spec.seed + 1), tmp_path / "c", "case")
    assert (tmp_path / "c" / "case.wav").read_bytes() != (tmp_path / "a" / "case.wav").read_bytes()


def test_written_files(tmp_path):
    sim = generate(demo_specs()["08_diastolic_rumble"])
    paths = write(sim, tmp_path, "rumble")
    x, fs = sf.read(paths["wav"], dtype="float64")
    info = sf.info(str(paths["wav"]))
    assert info.subtype == "PCM_16" and fs == 4000 and info.channels == 1
    assert np.array_equal(x, sim.x)
    with open(paths["csv"]) as fh:
        rows = list(csv.reader(fh))
    assert rows[0] == ["start_s", "end_s", "label"]
    labels = {r[2] for r in rows[1:]}
    assert {"S1", "systole", "S2", "diastole", "snap", "murmur"} <= labels
    truth = json.loads(paths["json"].read_text())
    assert truth["case_id"] == "rumble" and truth["synthetic"] is True
    assert truth["murmur"]["phase"] == "diastolic"
    assert truth["murmur"]["presystolic_accent"] is True
    with pytest.raises(InputError, match="overwrite"):
        write(sim, tmp_path, "rumble")
    write(sim, tmp_path, "rumble", overwrite=True)


def test_benchmark_set_is_graded():
    specs = benchmark_specs(60, seed=1)
    causes = [s.murmur.cause if s.murmur else "none" for s in specs]
    assert 0.28 < causes.count("none") / len(specs) < 0.4
    assert set(causes) == set(MURMUR_CAUSES)
    snr = np.array([s.snr_db for s in specs])
    hr = np.array([s.heart_rate_bpm for s in specs])
    assert snr.min() == 0 and snr.max() == 30 and hr.min() == 40 and hr.max() == 180
    assert len({s.fs for s in specs}) >= 3 and len({s.device for s in specs}) >= 4
    assert any(s.rhythm == "irregular" for s in specs)
    normal = [s for s in specs if s.murmur is None]
    assert any(s.breathing > 0.3 for s in normal) and any(s.friction_per_min > 0 for s in normal)
    assert benchmark_specs(5, seed=2) == benchmark_specs(5, seed=2)


def test_demo_set_shape():
    from eddyphone.simulate.cases import DEMO_PATIENT_PREFIX

    specs = demo_specs()
    assert 6 <= len(specs) <= 14
    for spec in specs.values():
        assert spec.duration_s <= 20 and spec.fs == 4000 and spec.bit_depth == 16
    # one patient examined at the four areas: the same case but for site and seed
    round_ = {k: v for k, v in specs.items() if k.startswith(DEMO_PATIENT_PREFIX)}
    assert sorted(v.site for v in round_.values()) == sorted(SITES)
    assert len({v.with_(site="mitral", seed=0, note="") for v in round_.values()}) == 1


def test_bad_specs_raise():
    with pytest.raises(ParameterError, match="heart_rate_bpm"):
        CaseSpec(heart_rate_bpm=500)
    with pytest.raises(ParameterError, match="device"):
        CaseSpec(device="nope")
    with pytest.raises(ParameterError, match="hematocrit"):
        MurmurSpec("high_flow", diameter_m=0.02, velocity_m_s=2.0, hematocrit=45)
    with pytest.raises(ParameterError, match="exactly one"):
        MurmurSpec("high_flow", diameter_m=0.02, velocity_m_s=None, flow_m3_s=None)


def test_sample_audio_is_the_demo_set(tmp_path):
    # the committed demo folder is what the generator makes now (regenerate with
    # `eddyphone simulate --out sample_audio --overwrite` after changing the simulator)
    from eddyphone.simulate import write_demo

    sample = Path(__file__).resolve().parents[1] / "sample_audio"
    write_demo(tmp_path, ["01_resting_adult", "08_diastolic_rumble"])
    for cid in ("01_resting_adult", "08_diastolic_rumble"):
        name = f"{cid}.truth.csv"
        assert (sample / name).read_text() == (tmp_path / name).read_text()
        a, _ = sf.read(sample / f"{cid}.wav", dtype="int16")
        b, _ = sf.read(tmp_path / f"{cid}.wav", dtype="int16")
        assert a.shape == b.shape
        # allow last-bit differences from another FFT library build
        assert np.max(np.abs(a.astype(int) - b.astype(int))) <= 2
    assert len(list(sample.glob("*.wav"))) == len(demo_specs())
    assert "synthetic" in (sample / "README.md").read_text().lower()
    bundled = (sample / "manifest.csv").read_text().splitlines()
    made = (tmp_path / "manifest.csv").read_text().splitlines()
    assert made[0] == bundled[0] and set(made[1:]) <= set(bundled[1:])
    assert len(bundled) == len(demo_specs()) + 1


def test_lung_sounds_follow_the_breath():
    # crackles belong to inspiration, wheezes to expiration (common practice)
    for kind, sign in (("crackles", 1), ("wheeze", -1)):
        sim = generate(CaseSpec(adventitious=kind, adventitious_db=-6, duration_s=20, seed=6,
                                **{**QUIET, "breathing": 0.3}))
        events = sim.truth["noise"]["adventitious_events"]
        assert events, kind
        assert sim.truth["noise"]["levels_db_re_cardiac"]["lung"] is not None
        beats = sim.truth["beats"]
        # is the lung filling (inspiration) or emptying around each event? Lung volume
        # is sampled once per beat in the truth; interpolate it
        t_beat = np.array([b["s1_start_s"] for b in beats])
        vol = np.array([b["lung_volume"] for b in beats])
        mid = np.array([(a + b) / 2 for a, b, _ in events])
        v_at = np.interp(mid, t_beat, vol)
        dv = np.interp(mid + 0.3, t_beat, vol) - np.interp(mid - 0.3, t_beat, vol)
        assert np.mean(np.sign(dv) == sign) > 0.6, kind
        assert np.all(v_at >= -0.01)


def test_device_ripple_and_gain_wander_are_bounded():
    rng = np.random.default_rng(3)
    ripple = chain.draw_ripple(3.0, rng)
    f = np.geomspace(20, 2000, 300)
    assert np.abs(chain.ripple_db(ripple, f)).max() == pytest.approx(3.0, abs=0.1)
    assert chain.draw_ripple(0.0, rng) == ()
    base = CaseSpec(seed=12, **QUIET)
    calm = generate(base)
    wavy = generate(base.with_(gain_wander_db=6.0))
    # same heart sounds in both (separate random streams): the per-beat S1 peak ratio
    # shows the slow gain change alone, within +/-6 dB
    env = [np.array([np.abs(s.parts["cardiac"][int(a * s.fs): int(b * s.fs)]).max()
                     for a, b, lab in s.segments if lab == "S1"]) for s in (calm, wavy)]
    swing = np.ptp(20 * np.log10(env[1] / env[0]))
    assert 1.0 < swing <= 12.0


def test_every_cycle_fits_even_when_short():
    # fast, irregular and premature cycles still give S1 < systole < S2 < diastole with
    # positive durations (the truth a segmenter is scored against must be well formed)
    specs = [CaseSpec(heart_rate_bpm=hr, rhythm=r, ectopic_rate=0.2, duration_s=8, seed=k)
             for k, (hr, r) in enumerate([(180, "sinus"), (200, "irregular"),
                                          (150, "irregular"), (45, "sinus")])]
    specs += benchmark_specs(12, seed=4)
    for spec in specs:
        sim = generate(spec)
        d = np.array([b - a for a, b, _ in sim.segments])
        assert d.size and d.min() > 0.009, (spec.heart_rate_bpm, spec.rhythm, d.min())


def test_classic_loudness_changes_of_s1_and_a2():
    # common practice: loud S1 with a narrowed inflow valve in sinus rhythm, soft S1
    # with a leaking inflow valve, soft A2 with a tight outflow valve
    base = CaseSpec(heart_rate_bpm=70, seed=21, **QUIET)

    def s1_level(spec):
        sim = generate(spec)
        return np.mean([b["s1_gain"] for b in sim.truth["beats"]]), sim

    normal, _ = s1_level(base)
    loud, _ = s1_level(base.with_(murmur=MurmurSpec("narrowed_inflow", diameter_m=0.011,
                                                    velocity_m_s=2.3)))
    soft, _ = s1_level(base.with_(murmur=MurmurSpec("systolic_leak", diameter_m=0.006,
                                                    velocity_m_s=5.0)))
    assert loud > 1.3 * normal and soft < 0.8 * normal
    tight = generate(base.with_(murmur=MurmurSpec("narrowed_outflow", diameter_m=0.008,
                                                  velocity_m_s=4.6)))
    assert tight.truth["murmur"]["a2_gain_from_cause"] < 0.6


def test_breath_held_and_rate_trend():
    # breath held: no respiratory splitting changes (split stays in its expiration-level
    # band, spread only by beat jitter); a steady trend moves the rate as asked
    held = generate(CaseSpec(breath_held=True, breathing=0.0, rsa_swing_bpm=0.0,
                             duration_s=20, seed=30, **{k: v for k, v in QUIET.items()
                                                        if k != "breathing"}))
    split = np.array([b["s2_split_s"] for b in held.truth["beats"]])
    assert np.ptp(split) < 0.015
    assert len({b["lung_volume"] for b in held.truth["beats"]}) == 1
    slowing = generate(CaseSpec(heart_rate_bpm=100, heart_rate_trend_bpm_per_min=-60,
                                rsa_swing_bpm=0.0, duration_s=20, seed=31, **QUIET))
    rr = np.array(slowing.truth["rhythm"]["rr_s"])
    first, last = 60 / rr[:5].mean(), 60 / rr[-5:].mean()
    assert first - last == pytest.approx(18.0, abs=5.0)  # ~20 bpm over 20 s, edges trimmed


def test_flow_given_instead_of_velocity():
    # continuity Q = v pi d^2 / 4 (common practice): 10 L/min through 1.0 cm -> 2.12 m/s
    q = 10e-3 / 60
    plan = murmurs.plan_murmur(MurmurSpec("high_flow", diameter_m=0.010, velocity_m_s=None,
                                          flow_m3_s=q))
    assert plan.peak_velocity_m_s == pytest.approx(q / (np.pi * 0.010**2 / 4))
    assert plan.peak_velocity_m_s == pytest.approx(2.122, abs=0.001)


def test_noise_level_wanders_but_mean_snr_holds():
    spec = CaseSpec(snr_db=12.0, noise_wander_db=6.0, duration_s=20, seed=40, breathing=0.0)
    sim = generate(spec)
    assert sim.truth["noise"]["snr_db"] == pytest.approx(12.0, abs=0.2)
    noise = sim.parts["noise"]
    fs = int(sim.fs)
    win = [10 * np.log10(np.mean(noise[i: i + fs] ** 2)) for i in range(0, len(noise) - fs, fs)]
    assert np.ptp(win) > 3.0
    assert generate(spec.with_(noise_wander_db=0.0)).truth["noise"]["snr_db"] == pytest.approx(
        12.0, abs=0.2)


def test_parts_add_up_and_recording_view():
    sim = generate(CaseSpec(murmur=MurmurSpec("systolic_leak", diameter_m=0.005,
                                              velocity_m_s=5.0), seed=50, **QUIET))
    p = sim.parts
    assert np.allclose(p["sounds"] + p["murmur"], p["cardiac"])
    # the file is the parts plus quantisation (half a 16-bit step at most)
    assert np.abs(sim.x - (p["cardiac"] + p["noise"])).max() <= 0.5 / 32768 + 1e-12
    rec = sim.recording()
    assert rec.fs == sim.fs and rec.site == "mitral" and rec.x is sim.x


def test_paradoxical_split_reverses_order_and_breathing():
    # paradoxical splitting: P2 before A2, wider on expiration (common practice)
    sim = generate(CaseSpec(s2_split="paradoxical", duration_s=20, seed=60, rsa_swing_bpm=0.0,
                            **QUIET))
    beats = sim.truth["beats"]
    split = np.array([b["s2_split_s"] for b in beats])  # P2 minus A2
    vol = np.array([b["lung_volume"] for b in beats])
    assert np.all(split < 0)
    assert (-split[vol < 0.3]).mean() > (-split[vol > 0.6]).mean() + 0.01
    for b in beats:  # S2 starts with P2, at the regression's S2 onset
        assert b["s2_start_s"] == pytest.approx(b["p2_s"])
        mean, sd = ph.systolic_interval_s(b["hr_for_systole_bpm"])
        assert abs(b["systolic_interval_s"] - mean) < 3 * sd


def test_musical_murmur_tone_follows_vortex_shedding():
    # von Karman shedding behind a thin cylinder, St ~ 0.2 (common practice):
    # f = 0.2 v / d; 5 m/s past a 5 mm chord -> 200 Hz, the PSD peak of the murmur
    m = MurmurSpec("systolic_leak", diameter_m=0.005, velocity_m_s=5.0, tone_diameter_m=0.005)
    plan, x = _render(m, fs=4000.0)
    assert plan.tone_hz == pytest.approx(200.0)
    assert plan.quality == "musical"
    f, p = signal.welch(x, fs=4000.0, nperseg=4096)
    assert f[np.argmax(p)] == pytest.approx(200.0, rel=0.05)
    plain, y = _render(MurmurSpec("systolic_leak", diameter_m=0.005, velocity_m_s=5.0))
    assert plain.quality == "blowing" and plain.tone_hz is None


def test_diastolic_leak_fades_with_the_pressure_half_time():
    # A leaking outflow valve: the aorta-to-ventricle gradient halves every pressure
    # half-time, over 500 ms in a mild leak (regurgitant orifice under 0.10 cm2) and
    # under 200 ms in a severe one (0.30 cm2 or more) (echocardiographic grading of
    # aortic regurgitation, from memory); the jet's velocity goes as the square root of
    # the gradient (simplified Bernoulli).
    def d_from_cm2(area_cm2):
        return float(np.sqrt(4.0 * area_cm2 * 1e-4 / np.pi))

    pht = murmurs.leak_pressure_half_time_s
    assert pht(d_from_cm2(0.10)) == pytest.approx(0.500, rel=1e-6)
    assert pht(d_from_cm2(0.30)) == pytest.approx(0.200, rel=1e-6)
    assert pht(d_from_cm2(0.07)) > 0.5 > pht(d_from_cm2(0.2)) > 0.2 > pht(d_from_cm2(0.35))

    plan = murmurs.plan_murmur(MurmurSpec("diastolic_leak", diameter_m=d_from_cm2(0.2),
                                          velocity_m_s=4.0))
    beat = {"s1_start_s": 0.0, "ejection_s": 0.05, "a2_s": 0.35, "next_s1_s": 1.2,
            "mitral_open_s": 0.43}
    h = pht(plan.diameter_m)
    t = np.array([0.35 + 0.05, 0.35 + 0.05 + h])
    v = murmurs.beat_velocity(plan, t, beat, sinus=True)
    assert (v[1] / v[0]) ** 2 == pytest.approx(0.5, rel=1e-3)

    # rendered: a mild leak still sounds in late diastole, a severe one has faded
    def late_level_db(area_cm2):
        spec = CaseSpec(heart_rate_bpm=62, seed=5, murmur=MurmurSpec(
            "diastolic_leak", diameter_m=d_from_cm2(area_cm2), velocity_m_s=4.2), **QUIET)
        return generate(spec).truth["murmur"]["measured"]["profile_db"][7]

    mild, severe = late_level_db(0.08), late_level_db(0.32)
    assert mild > -10.0 and severe < mild - 10.0, (mild, severe)
