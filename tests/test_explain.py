"""Tests of eddyphone.explain on findings built directly from the findings dataclasses.

Outside references: the ``fluids`` package (Reynolds number), the textbook relations
Re = rho v D / mu, Q = v A, f = St v / d (Lees & Dewey 1970, from memory) and the
simplified Bernoulli rule 4 v^2 (common practice in Doppler echocardiography), and
clinical patterns of auscultation marked "common practice".
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from fluids.core import Reynolds
from hypothesis import given, settings
from hypothesis import strategies as st

from eddyphone import physics
from eddyphone.context import PatientContext
from eddyphone.explain import MECHANISMS, ExplainConfig, explain, explain_patient, render_text
from eddyphone.findings.records import GRADE_NOTE, ExtraSound, Findings, Murmur


def murmur(**kw) -> Murmur:
    base = dict(id="m1", phase="systolic", presence="present", confidence=0.9, timing="mid",
                timing_confidence=0.8, shape="crescendo-decrescendo", shape_confidence=0.7,
                pitch="medium", dominant_frequency_hz=220.0, centroid_hz=240.0,
                quality_words=("harsh",), consistency=0.9, grade_range=(2, 3),
                grade_note=GRADE_NOTE, level_db_re_heart_sounds=-5.0, peak_fraction=0.5,
                beats_with_murmur=9, beats_used=10, profile=(0.2, 1.0, 0.3))
    base.update(kw)
    return Murmur(**base)


def flow_murmur(**kw) -> Murmur:
    """A soft early-peaking blowing ejection murmur of low pitch (a flow murmur)."""
    base = dict(timing="early", dominant_frequency_hz=70.0, centroid_hz=80.0, pitch="low",
                quality_words=("blowing",), grade_range=(1, 2), peak_fraction=0.3)
    base.update(kw)
    return murmur(**base)


def findings(*murmurs: Murmur, extras: tuple[ExtraSound, ...] = ()) -> Findings:
    return Findings(tuple(murmurs), extras, (), "present" if murmurs else "absent", "test")


def scores(expl, fid="m1") -> dict[str, float]:
    return {m.name: m.score for m in expl.for_finding(fid)}


def numbers(expl, name, fid="m1") -> dict:
    return next(m for m in expl.for_finding(fid) if m.name == name).numbers


# --- structure ---------------------------------------------------------------------

def test_every_candidate_ranked_scores_sum_to_one():
    e = explain(findings(murmur()))
    mechs = e.for_finding("m1")
    assert [m.name for m in mechs] != [] and {m.name for m in mechs} == set(MECHANISMS)
    assert [m.rank for m in mechs] == [1, 2, 3, 4, 5]
    s = [m.score for m in mechs]
    assert s == sorted(s, reverse=True)
    assert math.isclose(sum(s), 1.0, rel_tol=1e-9)
    assert e.top().name == mechs[0].name
    for m in mechs:
        # two or three sentences of physics, plain words, discriminators and evidence
        assert 2 <= m.physics.count(". ") + 1 <= 5, m.physics
        assert m.discriminators and m.evidence and m.label


def test_json_form_is_serialisable_and_complete():
    e = explain(findings(murmur()), context=PatientContext(hematocrit=0.3))
    items = json.loads(json.dumps(e.to_list()))
    overall = [x for x in items if x["scope"] == "overall"]
    per = [x for x in items if x["scope"] == "finding"]
    assert len(overall) == 5 and len(per) == 5
    for x in items:
        assert set(x) >= {"name", "label", "score", "rank", "finding_id", "evidence",
                          "physics", "numbers", "discriminators", "cautions", "assumptions"}
        for item in x["numbers"].values():
            assert set(item) == {"value", "unit", "meaning"} and item["meaning"]
    assert all(x["finding_id"] == "m1" for x in per)


def test_no_murmur_gives_no_flow_disturbance():
    e = explain(findings())
    assert e.top().name == "no_flow_disturbance" and e.top().score == 1.0
    assert "Re" in e.top().physics
    undecided = explain(Findings((), (), (), "uncertain", "too noisy"))
    assert undecided.top().name == "no_flow_disturbance" and undecided.top().score < 1.0
    assert any("could not be decided" in c for c in undecided.cautions)


# --- numbers agree with the physics library and with outside references ------------

def test_flow_numbers_match_physics_and_fluids():
    ctx = PatientContext(hematocrit=0.31, cardiac_output_l_min=7.5, site="aortic")
    n = numbers(explain(findings(flow_murmur()), context=ctx), "high_flow")
    mu = physics.blood_viscosity_pa_s(0.31)
    # normal aortic peak velocity 1.1 m/s in 25 mm (eddyphone.physics.sites) scaled by
    # output 7.5 / 5 L/min; continuity Q = v A checked by hand
    v = 1.1 * 7.5 / 5.0
    assert n["peak_velocity_m_s"]["value"] == pytest.approx(v, rel=1e-9)
    assert n["peak_flow_l_min"]["value"] == pytest.approx(v * math.pi * 0.025**2 / 4 * 60e3,
                                                          rel=1e-9)
    # Reynolds number: eddyphone.physics and the fluids package agree
    re = physics.reynolds_number(velocity_m_s=v, diameter_m=0.025, viscosity_pa_s=mu)
    assert n["reynolds_number_peak"]["value"] == pytest.approx(re, rel=1e-9)
    assert n["reynolds_number_peak"]["value"] == pytest.approx(
        Reynolds(V=v, D=0.025, rho=1060.0, mu=mu), rel=1e-9)
    re0 = Reynolds(V=1.1, D=0.025, rho=1060.0, mu=physics.blood_viscosity_pa_s(0.45))
    assert n["reynolds_number_normal"]["value"] == pytest.approx(re0, rel=1e-9)
    # Womersley number needs a heart rate; none given here
    assert "womersley_number" not in n
    # Strouhal noise frequency of the flow, f = St v / D with St = 1
    assert n["flow_noise_frequency_hz"]["value"] == pytest.approx(v / 0.025, rel=1e-9)


def test_viscosity_numbers_match_physics():
    n = numbers(explain(findings(flow_murmur()), context=PatientContext(hematocrit=0.24)),
                "low_viscosity")
    mu = physics.blood_viscosity_pa_s(0.24)
    mu_n = physics.blood_viscosity_pa_s(0.45)
    assert n["viscosity_mpa_s"]["value"] == pytest.approx(mu * 1e3, rel=1e-12)
    assert n["normal_viscosity_mpa_s"]["value"] == pytest.approx(mu_n * 1e3, rel=1e-12)
    assert n["viscosity_factor"]["value"] == pytest.approx(mu_n / mu, rel=1e-12)
    # handbook range: whole blood 3-4 mPa s at a normal hematocrit (common practice)
    assert 3.0 < n["normal_viscosity_mpa_s"]["value"] < 4.5
    re = Reynolds(V=1.1, D=0.025, rho=1060.0, mu=mu)
    assert n["reynolds_number_peak"]["value"] == pytest.approx(re, rel=1e-9)


def test_outflow_jet_numbers_match_continuity_strouhal_and_bernoulli():
    ctx = PatientContext(diameter_mm=9.0, site="aortic")
    n = numbers(explain(findings(murmur(dominant_frequency_hz=300.0)), context=ctx),
                "narrowed_orifice")
    mu = physics.blood_viscosity_pa_s(0.45)
    # continuity: the resting aortic peak flow (1.1 m/s in 25 mm) through the 9 mm orifice
    q = 1.1 * math.pi * 0.025**2 / 4
    v = q / (math.pi * 0.009**2 / 4)
    assert n["jet_velocity_m_s"]["value"] == pytest.approx(v, rel=1e-12)
    assert n["jet_velocity_m_s"]["value"] == pytest.approx(
        physics.velocity_from_flow_m_s(q, 0.009), rel=1e-12)
    # simplified Bernoulli 4 v^2 (common practice)
    assert n["pressure_drop_mmhg"]["value"] == pytest.approx(4.0 * v**2, rel=1e-12)
    assert n["jet_reynolds_number"]["value"] == pytest.approx(
        Reynolds(V=v, D=0.009, rho=1060.0, mu=mu), rel=1e-9)
    # Strouhal scaling f = St v / d with St = 1 (Lees & Dewey 1970, from memory)
    assert n["break_frequency_hz"]["value"] == pytest.approx(v / 0.009, rel=1e-12)
    assert n["pitch_velocity_m_s"]["value"] == pytest.approx(300.0 * 0.009, rel=1e-12)
    assert n["pitch_velocity_m_s"]["value"] == pytest.approx(
        physics.strouhal_velocity_m_s(frequency_hz=300.0, diameter_m=0.009), rel=1e-12)
    assert n["orifice_diameter_mm"]["value"] == pytest.approx(9.0)
    # the supplied diameter is the lumen: Re = 4 rho Q / (pi D mu) at the normal peak flow
    assert n["reynolds_number_peak"]["value"] == pytest.approx(
        4 * 1060.0 * q / (math.pi * 0.009 * mu), rel=1e-9)
    assert n["diameter_factor"]["value"] == pytest.approx(25.0 / 9.0, rel=1e-12)


def test_leak_jet_from_driving_pressure_round_trips_bernoulli():
    e = explain(findings(murmur(timing="holo", shape="plateau", dominant_frequency_hz=320.0)),
                context=PatientContext(site="mitral"))
    n = numbers(e, "narrowed_orifice")
    # ventricle-to-atrium systolic difference about 100 mmHg (common practice, from memory)
    assert n["driving_pressure_mmhg"]["value"] == pytest.approx(100.0)
    v = n["jet_velocity_m_s"]["value"]
    # MR jets run at about 5-6 m/s by Doppler (common practice, from memory)
    assert 4.5 <= v <= 6.0
    assert physics.bernoulli_pressure_drop_mmhg(v) == pytest.approx(100.0, rel=1e-12)
    assert n["break_frequency_hz"]["value"] == pytest.approx(
        physics.strouhal_frequency_hz(velocity_m_s=v, diameter_m=0.005), rel=1e-12)
    assert "mitral regurgitation" in e.top().label


def test_numbers_appear_in_the_physics_text():
    e = explain(findings(murmur(dominant_frequency_hz=300.0)),
                context=PatientContext(diameter_mm=9.0))
    m = next(x for x in e.for_finding("m1") if x.name == "narrowed_orifice")
    v = 1.1 * (25.0 / 9.0) ** 2
    assert f"{v:.3g} m/s" in m.physics and f"{4 * v * v:.3g} mmHg" in m.physics
    assert "9 mm" in m.physics and "300 Hz" in m.physics


def test_womersley_with_measured_heart_rate():
    ctx = PatientContext(heart_rate_bpm=72.0)
    n = numbers(explain(findings(flow_murmur()), context=ctx), "high_flow")
    mu = physics.blood_viscosity_pa_s(0.45)
    # alpha = (D/2) sqrt(omega rho / mu), by hand; about 15-20 in the adult aorta
    # (common practice, from memory)
    alpha = 0.0125 * math.sqrt(2 * math.pi * 1.2 * 1060.0 / mu)
    assert n["womersley_number"]["value"] == pytest.approx(alpha, rel=1e-12)
    assert 12 < alpha < 22


# --- monotonic properties from the physics (common practice) -------------------------

_patterns = st.sampled_from([
    dict(),
    dict(timing="early", dominant_frequency_hz=70.0, grade_range=(1, 2),
         quality_words=("blowing",), peak_fraction=0.3),
    dict(timing="holo", shape="plateau", dominant_frequency_hz=400.0),
    dict(phase="diastolic", timing="early", shape="decrescendo", dominant_frequency_hz=250.0),
    dict(phase="diastolic", timing="mid", shape="decrescendo", dominant_frequency_hz=60.0,
         quality_words=("rumbling",)),
    dict(phase="continuous", timing="holo", dominant_frequency_hz=300.0),
])
_sites = st.sampled_from([None, "aortic", "mitral", "pulmonic", "carotid"])


@settings(max_examples=40, deadline=None)
@given(pattern=_patterns, site=_sites, h1=st.floats(0.12, 0.6), h2=st.floats(0.12, 0.6))
def test_lower_hematocrit_raises_low_viscosity_score_and_reynolds(pattern, site, h1, h2):
    if abs(h1 - h2) < 0.01:
        h2 = h1 + 0.05 if h1 < 0.55 else h1 - 0.05
    lo, hi = sorted((h1, h2))
    f = findings(murmur(**pattern))
    e_lo = explain(f, context=PatientContext(hematocrit=lo, site=site))
    e_hi = explain(f, context=PatientContext(hematocrit=hi, site=site))
    assert scores(e_lo)["low_viscosity"] > scores(e_hi)["low_viscosity"]
    re = [numbers(e, "low_viscosity")["reynolds_number_peak"]["value"] for e in (e_lo, e_hi)]
    assert re[0] > re[1]


@settings(max_examples=40, deadline=None)
@given(pattern=_patterns, site=_sites, q1=st.floats(2.0, 20.0), q2=st.floats(2.0, 20.0))
def test_more_cardiac_output_raises_high_flow_score(pattern, site, q1, q2):
    if abs(q1 - q2) < 0.1:
        q2 = q1 + 1.0
    lo, hi = sorted((q1, q2))
    f = findings(murmur(**pattern))
    e_lo = explain(f, context=PatientContext(cardiac_output_l_min=lo, site=site))
    e_hi = explain(f, context=PatientContext(cardiac_output_l_min=hi, site=site))
    assert scores(e_hi)["high_flow"] > scores(e_lo)["high_flow"]
    re = [numbers(e, "high_flow")["reynolds_number_peak"]["value"] for e in (e_lo, e_hi)]
    assert re[1] > re[0]


@settings(max_examples=40, deadline=None)
@given(pattern=_patterns, site=_sites, d1=st.floats(2.0, 40.0), d2=st.floats(2.0, 40.0))
def test_narrower_diameter_raises_narrowed_orifice_score(pattern, site, d1, d2):
    if abs(d1 - d2) < 0.2:
        d2 = d1 + 1.0
    narrow, wide = sorted((d1, d2))
    f = findings(murmur(**pattern))
    e_n = explain(f, context=PatientContext(diameter_mm=narrow, site=site))
    e_w = explain(f, context=PatientContext(diameter_mm=wide, site=site))
    assert scores(e_n)["narrowed_orifice"] > scores(e_w)["narrowed_orifice"]
    # Re = 4 rho Q / (pi D mu) rises as the lumen narrows at the same flow
    re = [numbers(e, "narrowed_orifice")["reynolds_number_peak"]["value"] for e in (e_n, e_w)]
    assert re[0] == pytest.approx(re[1] * wide / narrow, rel=1e-9)


# --- the patterns of the trade (common practice) --------------------------------------

@pytest.mark.parametrize("pattern", [
    # holosystolic plateau: a regurgitant leak (common practice)
    dict(timing="holo", shape="plateau", dominant_frequency_hz=350.0,
         quality_words=("blowing",)),
    # early diastolic decrescendo: a leaking outflow valve (common practice)
    dict(phase="diastolic", timing="early", shape="decrescendo", dominant_frequency_hz=300.0),
    # mid-diastolic low-pitched rumble: a narrowed inflow valve (common practice)
    dict(phase="diastolic", timing="mid", shape="decrescendo", dominant_frequency_hz=60.0,
         pitch="low", quality_words=("rumbling",)),
    # loud harsh late-peaking ejection murmur: outflow narrowing (common practice)
    dict(peak_fraction=0.65, grade_range=(3, 3), dominant_frequency_hz=260.0),
])
def test_structural_patterns_rank_narrowed_orifice_first(pattern):
    assert explain(findings(murmur(**pattern))).top().name == "narrowed_orifice"


def test_soft_flow_murmur_depends_on_context():
    f = findings(flow_murmur())
    # without context a soft early ejection murmur is a flow murmur (common practice)
    assert explain(f).top().name == "high_flow"
    # known anemia (hematocrit 0.22): thin blood leads
    assert explain(f, context=PatientContext(hematocrit=0.22)).top().name == "low_viscosity"
    # an older patient with measured normal output and blood: sclerosis leads
    old = PatientContext(age_years=79, hematocrit=0.44, cardiac_output_l_min=5.0)
    assert explain(f, context=old).top().name == "wall_irregularity"
    # pregnancy with a raised output: high flow leads clearly
    preg = PatientContext(cardiac_output_l_min=7.5, states=("pregnancy",))
    assert scores(explain(f, context=preg))["high_flow"] > 0.8 * 0.9  # murmur confidence 0.9


def test_measured_tachycardia_supports_high_flow():
    from eddyphone.rhythm import Rhythm
    from eddyphone.segment import Segmentation

    f = findings(flow_murmur())

    def seg(hr):
        rr = 60.0 / hr
        rhythm = Rhythm(hr, 0.3, (rr,) * 5, rr, 0.01, False, 0.9, "beats")
        return Segmentation((), (), rhythm, (), 50.0, "test")

    slow = scores(explain(f, segmentation=seg(70.0)))["high_flow"]
    fast = scores(explain(f, segmentation=seg(125.0)))["high_flow"]
    assert fast > slow
    e = explain(f, segmentation=seg(125.0))
    assert any("125/min as measured" in a for a in e.assumptions)


def test_murmur_confidence_is_the_chance_of_a_flow_disturbance():
    # the findings' confidence c that the murmur is real: with 1 - c it is an artefact,
    # so "no flow disturbance" keeps at least 1 - c and the flow causes share at most c
    for c in (1.0, 0.9, 0.6, 0.3):
        s = scores(explain(findings(murmur(presence="uncertain" if c < 0.7 else "present",
                                           confidence=c))))
        assert s["no_flow_disturbance"] >= 1.0 - c - 1e-12
        assert sum(v for k, v in s.items() if k != "no_flow_disturbance") <= c + 1e-12
        assert sum(s.values()) == pytest.approx(1.0)
    vague = explain(findings(murmur(presence="uncertain", confidence=0.3)))
    assert vague.top().name == "no_flow_disturbance"
    nfd = next(m for m in vague.for_finding("m1") if m.name == "no_flow_disturbance")
    assert any("30% confidence" in e for e in nfd.evidence)


def test_opening_snap_strengthens_inflow_narrowing():
    m = murmur(phase="diastolic", timing="mid", shape="decrescendo", dominant_frequency_hz=60.0,
               quality_words=(), grade_range=(1, 2))
    snap = ExtraSound("x1", "opening_snap", 0.8, 80.0, "after S2 onset")
    plain = scores(explain(findings(m)))["narrowed_orifice"]
    with_snap = scores(explain(findings(m, extras=(snap,))))["narrowed_orifice"]
    assert with_snap > plain


def test_click_reported_only_as_possible_is_no_evidence():
    # Our own rule: the findings hedge an ejection click at fast rates (a caution in
    # its details); the explainer does not count it towards a narrowed orifice.
    m = murmur()
    click = ExtraSound("x1", "ejection_click", 0.9, 80.0, "after S1 onset")
    hedged = ExtraSound("x1", "ejection_click", 0.4, 80.0, "after S1 onset",
                        details={"caution": "possible: at 160 bpm ..."})
    plain = scores(explain(findings(m)))["narrowed_orifice"]
    assert scores(explain(findings(m, extras=(click,))))["narrowed_orifice"] > plain
    assert scores(explain(findings(m, extras=(hedged,))))["narrowed_orifice"] == plain


# --- assumptions and context -------------------------------------------------------

def test_defaults_are_stated_and_disappear_with_context():
    f = findings(flow_murmur())
    bare = explain(f)
    text = " ".join(bare.assumptions)
    for word in ("Hematocrit not supplied", "Cardiac output not supplied", "Site not known",
                 "No valve or vessel diameter", "Age not known"):
        assert word in text
    assert bare.inputs["hematocrit"] == {"value": 0.45, "source": "default"}
    ctx = PatientContext(hematocrit=0.3, cardiac_output_l_min=6.0, site="aortic",
                         diameter_mm=20.0, age_years=40)
    full = explain(f, context=ctx)
    text = " ".join(full.assumptions)
    assert "not supplied" not in text and "not known" not in text
    assert full.inputs["hematocrit"] == {"value": 0.3, "source": "context"}
    hf = numbers(bare, "high_flow")["reynolds_number_peak"]["value"]
    hf_ctx = numbers(full, "high_flow")["reynolds_number_peak"]["value"]
    assert hf_ctx != pytest.approx(hf)


def test_stroke_volume_times_heart_rate_gives_output():
    e = explain(findings(flow_murmur()),
                context=PatientContext(stroke_volume_ml=100.0, heart_rate_bpm=90.0))
    assert numbers(e, "high_flow")["cardiac_output_l_min"]["value"] == pytest.approx(9.0)
    assert any("stroke volume times" in a for a in e.assumptions)


def test_weights_are_configurable():
    f = findings(flow_murmur())
    heavy = ExplainConfig(weights={"prior_low_viscosity": 5.0})
    assert explain(f, config=heavy).top().name == "low_viscosity"


def test_render_text_reads_as_a_block():
    e = explain(findings(murmur(timing="holo", shape="plateau", dominant_frequency_hz=350.0)),
                context=PatientContext(hematocrit=0.41, site="mitral"))
    text = render_text(e)
    assert text.startswith("Likely physical mechanisms (decision support, not a diagnosis)")
    assert "Finding m1" in text and "Physics:" in text and "Numbers:" in text
    assert "jet velocity" in text and "narrowed_orifice" in text
    assert max(len(line) for line in text.splitlines()) <= 100


# --- patient view ------------------------------------------------------------------

def analysis(stem: str, site: str, f: Findings):
    """A real Analysis holding only what the patient view reads (recording, findings)."""
    from eddyphone.pipeline import Analysis
    from eddyphone.recording import Recording

    rec = Recording(x=np.zeros(8), fs=4000.0, source=f"{stem}.wav", site=site)
    return Analysis(rec, None, None, None, f, None, None, None)


def test_patient_view_weights_the_loudest_site():
    leak = murmur(timing="holo", shape="plateau", dominant_frequency_hz=350.0,
                  level_db_re_heart_sounds=2.0)
    soft = flow_murmur(level_db_re_heart_sounds=-18.0)
    e = explain_patient([analysis("apex", "mitral", findings(leak)),
                         analysis("base", "pulmonic", findings(soft)),
                         analysis("right", "tricuspid", findings())])
    assert set(e.per_finding) == {"apex:m1", "base:m1"}
    assert e.top().name == "narrowed_orifice"
    assert any("No murmur at right (tricuspid)" in c for c in e.cautions)
    assert "mitral" in e.subjects["apex:m1"]
    assert math.isclose(sum(m.score for m in e.overall), 1.0, rel_tol=1e-9)


def test_overall_combines_several_murmurs():
    sys_m = flow_murmur(id="m1", confidence=0.5)
    dia_m = murmur(id="m2", phase="diastolic", timing="early", shape="decrescendo",
                   dominant_frequency_hz=300.0, confidence=0.9)
    e = explain(findings(sys_m, dia_m))
    assert set(e.per_finding) == {"m1", "m2"}
    assert e.top().name == "narrowed_orifice"
    total = sum(m.score for m in e.overall)
    assert total == pytest.approx(1.0)
    # the overall score is the confidence-weighted mean of the per-finding scores
    s1, s2 = scores(e, "m1")["high_flow"], scores(e, "m2")["high_flow"]
    hf = next(m for m in e.overall if m.name == "high_flow").score
    assert hf == pytest.approx((0.5 * s1 + 0.9 * s2) / 1.4)
    assert np.isfinite(hf)


def test_diastolic_rumble_reads_as_inflow_and_blowing_decrescendo_as_leak():
    # Common practice: a narrowed inflow valve gives a low-pitched rumble (often with a
    # presystolic accent); a regurgitant leak a higher-pitched blowing early decrescendo.
    from eddyphone.explain.candidates import murmur_pattern

    rumble = murmur(phase="diastolic", timing="holo", shape="decrescendo", pitch="low",
                    quality_words=("rumbling",), dominant_frequency_hz=90.0)
    leak = murmur(phase="diastolic", timing="early", shape="decrescendo", pitch="medium",
                  quality_words=("blowing",), dominant_frequency_hz=190.0)
    assert murmur_pattern(rumble) == "inflow"
    assert murmur_pattern(leak) == "leak"
    # called low from its rise over the noise floor, but recorded at 188 Hz (medium on
    # the common-practice edges of 150 and 300 Hz, from memory): blowing and early
    # decrescendo make it a leak, not an inflow rumble
    low_by_floor = murmur(phase="diastolic", timing="early", shape="decrescendo",
                          pitch="low", quality_words=("blowing",), dominant_frequency_hz=188.0)
    assert murmur_pattern(low_by_floor) == "leak"
    low_recorded = murmur(phase="diastolic", timing="early", shape="decrescendo",
                          pitch="low", quality_words=("blowing",), dominant_frequency_hz=110.0)
    assert murmur_pattern(low_recorded) == "inflow"


def test_patient_view_halves_a_murmur_only_possible_for_the_patient():
    # A diastolic murmur called present at one site only, in 70 % of its beats, is only
    # possible for the patient (findings.patient.ONE_RECORDING_CONSISTENCY, our own rule
    # from bench/bench_patient.py); beside a systolic flow murmur present at two sites it
    # counts half, and a caution says why. Same murmurs, the diastolic one firm: full
    # weight (the combination is the weighted mean of the per-finding scores).
    from dataclasses import replace

    flow = flow_murmur(level_db_re_heart_sounds=-12.0)
    leak = murmur(id="m2", phase="diastolic", timing="early", shape="decrescendo",
                  dominant_frequency_hz=300.0, level_db_re_heart_sounds=-12.0,
                  consistency=0.7)
    group = [analysis("base", "pulmonic", findings(flow)),
             analysis("left", "tricuspid", findings(flow, leak))]
    shaky = explain_patient(group)
    assert any("diastolic murmur was called present in only one of the 2 recordings "
               "(tricuspid)" in c for c in shaky.cautions)
    firm_leak = replace(leak, consistency=0.9)
    firm = explain_patient([group[0], analysis("left", "tricuspid", findings(flow, firm_leak))])
    assert not any("only possible" in c for c in firm.cautions)
    orifice = {name: next(m.score for m in e.overall if m.name == "narrowed_orifice")
               for name, e in (("shaky", shaky), ("firm", firm))}
    assert orifice["shaky"] < orifice["firm"]
    # the weights behind it: 1, 1 and 0.5 times confidence and loudness (equal here)
    s = {key: scores(shaky, key)["narrowed_orifice"] for key in ("base:m1", "left:m1",
                                                                  "left:m2")}
    assert orifice["shaky"] == pytest.approx(
        (s["base:m1"] + s["left:m1"] + 0.5 * s["left:m2"]) / 2.5, rel=1e-6)
