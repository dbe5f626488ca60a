"""The explainer against simulator recordings whose physical cause is known.

Reference: the simulator's truth (``eddyphone.simulate``), which builds every murmur
from a cause and flow parameters through :mod:`eddyphone.physics`. The cases are drawn
from :func:`eddyphone.simulate.benchmark_specs` with a seed the scoring weights were
not set on (the weights are hand-set from the physics and clinical patterns, see
``eddyphone.explain.config``).

Two levels:

* *described* murmurs: a :class:`~eddyphone.findings.Murmur` built from the truth's
  description (phase, timing, shape, measured peak position, source pitch, grade), so
  the explainer is tested alone;
* *end to end*: the demo recordings through conditioning, segmentation, findings and
  the explainer.
"""

from __future__ import annotations

from collections import Counter

import pytest

from eddyphone.context import PatientContext
from eddyphone.explain import explain
from eddyphone.findings.records import GRADE_NOTE, Findings, Murmur
from eddyphone.simulate import benchmark_specs, demo_specs, generate

#: The mechanism each simulator cause is built from.
EXPECTED = {
    "none": "no_flow_disturbance",
    "high_flow": "high_flow",
    "low_viscosity": "low_viscosity",
    "wall_irregularity": "wall_irregularity",
    "narrowed_outflow": "narrowed_orifice",
    "systolic_leak": "narrowed_orifice",
    "diastolic_leak": "narrowed_orifice",
    "narrowed_inflow": "narrowed_orifice",
    "continuous": "narrowed_orifice",
}


def described(truth: dict) -> Findings:
    """Findings holding the murmur exactly as the simulator's truth describes it."""
    t = truth["murmur"]
    if not t or not t.get("present"):
        return Findings((), (), (), "absent", "simulator truth: no murmur")
    measured = t.get("measured") or {}
    grade = min(int(t["grade"]), 3)
    m = Murmur(id="m1", phase=t["phase"], presence="present", confidence=1.0,
               timing="holo" if t["phase"] == "continuous" else t["timing"],
               timing_confidence=1.0, shape=t["shape"], shape_confidence=1.0,
               pitch=t["pitch"], dominant_frequency_hz=float(t["centre_hz"]),
               centroid_hz=float(t["centre_hz"]), quality_words=(), consistency=1.0,
               grade_range=(max(grade - 1, 1), grade), grade_note=GRADE_NOTE,
               level_db_re_heart_sounds=float(t["level_db_re_s1"]),
               peak_fraction=float(measured.get("peak_fraction", 0.5)),
               beats_with_murmur=10, beats_used=10, profile=())
    return Findings((m,), (), (), "present", "simulator truth")


@pytest.fixture(scope="module")
def cases():
    out = []
    for spec in benchmark_specs(54, seed=3):
        sim = generate(spec)
        cause = spec.murmur.cause if spec.murmur else "none"
        hematocrit = spec.murmur.hematocrit if spec.murmur else 0.45
        out.append((cause, spec, described(sim.truth), hematocrit))
    return out


def _tops(cases, make_context):
    hits, totals, confusions = Counter(), Counter(), Counter()
    for cause, spec, f, h in cases:
        top = explain(f, context=make_context(cause, spec, h)).top().name
        totals[cause] += 1
        hits[cause] += top == EXPECTED[cause]
        confusions[(cause, top)] += 1
    return hits, totals, confusions


def test_cause_ranks_first_with_the_context_of_each_scenario(cases):
    # Every case gets its blood count (hematocrit) and site; the runner-type high-flow
    # cases are known to be exercising, the wall-irregularity cases are older adults:
    # the facts a clinician of each scenario would hold.
    def context(cause, spec, h):
        extra = {"high_flow": {"states": ("exercise",)},
                 "wall_irregularity": {"age_years": 76.0}}.get(cause, {})
        return PatientContext(hematocrit=h, site=spec.site, **extra)

    hits, totals, confusions = _tops(cases, context)
    assert set(totals) == set(EXPECTED), "the seed must cover every cause"
    for cause in totals:
        assert hits[cause] / totals[cause] >= 0.75, (cause, confusions)
    assert sum(hits.values()) / sum(totals.values()) >= 0.9, confusions


def test_sound_and_blood_count_alone(cases):
    # Without age or output, high flow and wall irregularity sound alike: both must be
    # the top two for either cause; every other cause must rank first.
    hits, totals, confusions = _tops(
        cases, lambda cause, spec, h: PatientContext(hematocrit=h, site=spec.site))
    for cause in totals:
        if cause in ("high_flow", "wall_irregularity"):
            continue
        assert hits[cause] / totals[cause] >= 0.8, (cause, confusions)
    for cause, spec, f, h in cases:
        if cause in ("high_flow", "wall_irregularity"):
            e = explain(f, context=PatientContext(hematocrit=h, site=spec.site))
            names = [m.name for m in e.overall[:2]]
            assert EXPECTED[cause] in names, (names, spec.murmur)


def test_without_hematocrit_thin_blood_is_not_claimed(cases):
    # With no blood count the explainer must not put low viscosity first, and must
    # say what it assumed.
    for cause, spec, f, _ in cases:
        e = explain(f, context=PatientContext(site=spec.site))
        assert e.top().name != "low_viscosity"
        if cause == "low_viscosity":
            assert any("Hematocrit not supplied" in a for a in e.assumptions)
            assert e.top().name == "high_flow"


def test_demo_recordings_end_to_end():
    from eddyphone.condition import condition
    from eddyphone.config import Config
    from eddyphone.findings import describe
    from eddyphone.quality import assess
    from eddyphone.recording import Recording
    from eddyphone.segment import segment

    cfg = Config()
    checked = 0
    for case_id, spec in demo_specs().items():
        sim = generate(spec)
        rec = Recording(x=sim.x, fs=sim.fs, source=f"{case_id}.wav", site=spec.site)
        cond = condition(rec.x, rec.fs, cfg.condition)
        quality = assess(rec.x, rec.fs, cfg.quality)
        seg = segment(cond.x, cond.fs, quality=quality, config=cfg.segment)
        f = describe(cond.x, cond.fs, seg, quality=quality)
        cause = spec.murmur.cause if spec.murmur else "none"
        h = spec.murmur.hematocrit if spec.murmur else 0.45
        e = explain(f, context=PatientContext(hematocrit=h), recording=rec, segmentation=seg)
        assert e.top() is not None and e.overall[0].rank == 1
        main = f.main()
        true_phase = sim.truth["murmur"]["phase"] if spec.murmur else None
        if main is not None and main.phase == true_phase:
            # a murmur found in the right phase must be explained by its cause
            assert e.top().name == EXPECTED[cause], (case_id, main.describe(),
                                                     [(m.name, m.score) for m in e.overall])
            checked += 1
        elif main is None and f.presence == "absent":
            assert e.top().name == "no_flow_disturbance"
            checked += cause == "none"
    assert checked >= 5
