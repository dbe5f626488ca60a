"""Assemble explanations: per finding, per recording and per patient.

Public functions: :func:`explain`, :func:`explain_patient`.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import replace

import numpy as np

from eddyphone.explain.candidates import MECHANISMS, murmur_pattern, score_murmur, softmax
from eddyphone.explain.config import ExplainConfig, lumen_for
from eddyphone.explain.model import Explanation, Mechanism
from eddyphone.explain.numbers import (
    Basis,
    continuity_jet_numbers,
    default_orifice,
    driving_numbers,
    flow_noise_ceiling_hz,
    fmt,
    levers,
    pitch_numbers,
    resolve_basis,
    vessel_numbers,
    viscosity_numbers,
)
from eddyphone.explain.text import DISCRIMINATORS, label, physics_text
from eddyphone.physics import BLOOD_DENSITY_KG_M3, TRANSITION_RE_HIGH, TRANSITION_RE_LOW

_SCORE_NOTE = (
    "Scores are relative support among five idealised mechanisms, from documented "
    "hand-set weights; they are not probabilities of disease, and real murmurs often have "
    "more than one cause (anemia, for one, lowers viscosity and raises output at once)."
)


def explain(findings: object, *, context: object | None = None, recording: object | None = None,
            segmentation: object | None = None,
            config: ExplainConfig | None = None) -> Explanation:
    """Rank the physical mechanisms behind each finding and behind the recording.

    Parameters
    ----------
    findings : eddyphone.findings.Findings
        Murmurs and extra sounds of one recording.
    context : eddyphone.context.PatientContext, optional
        Hematocrit, cardiac output or stroke volume, heart rate, diameter, age, site,
        high-output states. Missing values are replaced by stated defaults.
    recording : eddyphone.recording.Recording, optional
        Supplies the site when the context does not.
    segmentation : eddyphone.segment.Segmentation, optional
        Supplies the measured heart rate.
    config : ExplainConfig, optional

    Returns
    -------
    Explanation
        ``per_finding`` for every murmur, ``overall`` for the recording; ``top()`` is
        the best-supported mechanism.

    Examples
    --------
    >>> from eddyphone.findings import Findings
    >>> e = explain(Findings((), (), (), "absent", "no murmur"))
    >>> e.top().name
    'no_flow_disturbance'
    """
    config = config or ExplainConfig()
    basis = resolve_basis(context, recording, segmentation, config)
    murmurs = tuple(getattr(findings, "murmurs", ()) or ())
    # a sound the findings report only as possible (with a caution) is no evidence
    extra_kinds = [e.kind for e in getattr(findings, "extra_sounds", ()) or ()
                   if not getattr(e, "possible", False)]
    per_finding: dict[str, tuple[Mechanism, ...]] = {}
    subjects: dict[str, str] = {}
    for m in murmurs:
        per_finding[m.id] = _explain_murmur(m, extra_kinds, basis, config)
        subjects[m.id] = m.describe() if hasattr(m, "describe") else f"{m.phase} murmur"
    cautions = [_SCORE_NOTE]
    if murmurs:
        weights = {m.id: float(m.confidence) * (1.0 if m.presence == "present" else 0.5)
                   for m in murmurs}
        overall = _combine(per_finding, weights)
    else:
        presence = getattr(findings, "presence", "absent")
        overall = (_no_murmur(basis, config, presence),)
        if presence != "absent":
            cautions.append("Whether a murmur is present could not be decided from this "
                            "recording, so no mechanism can be ranked; record again.")
    if "opening_snap" in extra_kinds and not any(m.phase == "diastolic" for m in murmurs):
        cautions.append("An opening snap was found without a diastolic murmur: a narrowed "
                        "inflow valve can have a soft rumble that the recording missed.")
    if "ejection_click" in extra_kinds:
        cautions.append("An ejection click was found: a stiff or malformed outflow valve "
                        "can click before it narrows enough to make a loud murmur.")
    return Explanation(per_finding=per_finding, overall=overall,
                       assumptions=tuple(_assumptions(basis, config)),
                       cautions=tuple(cautions), inputs=basis.to_dict(), subjects=subjects)


def _explain_murmur(m: object, extra_kinds: Iterable[str], basis: Basis,
                    config: ExplainConfig) -> tuple[Mechanism, ...]:
    evidence = score_murmur(m, extra_kinds=extra_kinds, basis=basis, config=config)
    logits = np.array([sum(e.for_(name) for e in evidence) for name in MECHANISMS])
    # mixture: with the findings' confidence c the murmur is real and the softmax ranks
    # its causes; with 1 - c it is an artefact and there is no flow disturbance
    c = float(np.clip(getattr(m, "confidence", 1.0), 0.0, 1.0))
    scores = c * softmax(logits)
    nfd = MECHANISMS.index("no_flow_disturbance")
    scores[nfd] += 1.0 - c
    pattern = murmur_pattern(m)
    lumen = lumen_for(basis.site, m.phase)
    f_hz = _frequency(m, config)
    present = getattr(m, "presence", "present") == "present"
    out = []
    for i, name in enumerate(MECHANISMS):
        numbers = _numbers(name, m.phase, pattern, f_hz, basis, config)
        facts = {"co_assumed": basis.cardiac_output_source == "default",
                 "h_assumed": basis.hematocrit_source == "default", "present": present,
                 "f_hz": f_hz}
        ev = tuple(f"{e.text} ({e.for_(name):+.1f})" for e in evidence
                   if abs(e.for_(name)) >= 0.05)
        if name == "no_flow_disturbance" and c < 1.0:
            ev += (f"the findings give the murmur {c:.0%} confidence of being real; the other "
                   f"{1 - c:.0%} is the chance that it is noise, breath or handling",)
        out.append(Mechanism(
            name=name, label=label(name, pattern, phase=m.phase, site=basis.site),
            score=float(scores[i]), rank=0,
            finding_id=m.id, evidence=ev,
            physics=physics_text(name, numbers, pattern=pattern, lumen=lumen.name,
                                 facts=facts),
            numbers=numbers, discriminators=DISCRIMINATORS[name],
            cautions=tuple(_mechanism_cautions(name, numbers, basis)),
            assumptions=tuple(_mechanism_assumptions(name, basis, pattern)),
            logit=float(logits[i]),
        ))
    return _ranked(out)


def _ranked(mechs: Iterable[Mechanism]) -> tuple[Mechanism, ...]:
    order = sorted(mechs, key=lambda x: (-x.score, MECHANISMS.index(x.name)))
    return tuple(replace(x, rank=i + 1) for i, x in enumerate(order))


def _frequency(m: object, config: ExplainConfig | None = None) -> float | None:
    keys = ("dominant_frequency_hz", "centroid_hz")
    if config is not None and config.pitch_measure == "centroid":
        keys = keys[::-1]
    for key in keys:
        f = getattr(m, key, None)
        if f is not None and np.isfinite(f) and f > 0:
            return float(f)
    return None


def _num(value: float, unit: str, meaning: str) -> dict:
    return {"value": float(value), "unit": unit, "meaning": meaning}


def _numbers(name: str, phase: str, pattern: str, f_hz: float | None, basis: Basis,
             config: ExplainConfig) -> dict[str, dict]:
    vessel = vessel_numbers(basis, phase, config, f_hz)
    lv = levers(basis, phase, config)
    if name == "high_flow":
        out = {
            "cardiac_output_l_min": _num(basis.cardiac_output_l_min, "L/min",
                                         f"Cardiac output ({basis.cardiac_output_source})."),
            "flow_factor": _num(lv.flow_factor, "", "How much the flow raises Re against a "
                                "resting output."),
            **vessel,
        }
        if basis.cardiac_output_source == "default":
            k = config.high_flow_velocity_factor
            raised = replace(basis, cardiac_output_l_min=basis.cardiac_output_l_min * k,
                             cardiac_output_source="assumed raised")
            hi = vessel_numbers(raised, phase, config)
            out["raised_cardiac_output_l_min"] = _num(
                raised.cardiac_output_l_min, "L/min", f"A {k:g}-fold output, as in exercise "
                "or another high-output state (what this mechanism needs).")
            out["reynolds_number_raised"] = dict(hi["reynolds_number_peak"], meaning=(
                "Peak Re at that raised output."))
            out["flow_noise_frequency_raised_hz"] = dict(hi["flow_noise_frequency_hz"], meaning=(
                "Strouhal noise frequency of the flow at that raised output."))
        return out
    if name == "low_viscosity":
        return viscosity_numbers(basis, phase, config)
    if name == "narrowed_orifice":
        d, note = default_orifice(basis, pattern, phase)
        kind = _driving_kind(pattern, phase)
        if kind is None:
            out = continuity_jet_numbers(d, note, basis, phase, config)
        else:
            out = driving_numbers(kind, d, note, basis, config)
        if f_hz is not None:
            out.update(pitch_numbers(f_hz, d, config))
        out["flow_noise_ceiling_hz"] = _num(
            flow_noise_ceiling_hz(basis, phase, config), "Hz",
            "Highest pitch that flow through a normal-sized lumen plausibly makes (Strouhal "
            "scaling at a raised flow); a clearly higher pitch implies a smaller orifice.")
        if basis.diameter_m is not None:
            out["diameter_factor"] = _num(lv.diameter_factor, "", "How much the supplied "
                                          "diameter raises Re against the normal lumen "
                                          "(normal diameter / supplied diameter).")
            out["reynolds_number_peak"] = vessel["reynolds_number_peak"]
        return out
    if name == "wall_irregularity":
        return {
            "reynolds_number_peak": vessel["reynolds_number_peak"],
            "reynolds_number_normal": vessel["reynolds_number_normal"],
            "reynolds_ratio": vessel["reynolds_ratio"],
            "transition_range_low": _num(TRANSITION_RE_LOW, "", "Lower end of the steady "
                                         "smooth-pipe transition range."),
            "transition_range_high": _num(TRANSITION_RE_HIGH, "", "Upper end of the steady "
                                          "smooth-pipe transition range; rough walls lower "
                                          "the Re at which disturbances grow."),
        }
    return {"reynolds_number_peak": vessel["reynolds_number_peak"],
            "reynolds_number_normal": vessel["reynolds_number_normal"]}


def _driving_kind(pattern: str, phase: str) -> str | None:
    if pattern == "leak":
        return "leak_systolic" if phase == "systolic" else "leak_diastolic"
    return pattern if pattern in ("inflow", "shunt") else None


def _mechanism_cautions(name: str, numbers: Mapping[str, Mapping], basis: Basis) -> list[str]:
    out = []
    if name == "narrowed_orifice":
        if basis.diameter_m is None:
            out.append("The orifice size is assumed: with the flow fixed the jet velocity "
                       "scales with 1/d^2, and the pressure drop with 1/d^4, so read them as "
                       "orders of magnitude." if "driving_pressure_mmhg" not in numbers else
                       "The orifice size and driving pressure are assumed typical values, so "
                       "read the jet numbers as orders of magnitude.")
        dp = float(numbers["pressure_drop_mmhg"]["value"])
        if dp > 150.0:
            out.append(f"A pressure drop of {fmt(dp)} mmHg is more than the heart can make: "
                       "the orifice is larger than assumed, or the flow is lower.")
        if "pitch_velocity_m_s" in numbers and float(numbers["pitch_velocity_m_s"]["value"]) \
                > 1.2 * float(numbers["jet_velocity_m_s"]["value"]):
            out.append("The heard pitch needs a faster jet than the estimate: the orifice is "
                       "probably smaller than assumed.")
        out.append("Chest wall and stethoscope damp high frequencies, so the heard pitch "
                   "understates the jet's noise band.")
    if name == "low_viscosity" and basis.hematocrit_source == "default":
        out.append("Hematocrit not supplied: thin blood can neither be confirmed nor "
                   "excluded from the sound.")
    if name == "wall_irregularity":
        out.append("Sound cannot measure wall roughness; this candidate rests on the murmur "
                   "pattern and on the absence of the other levers.")
    return out


def _mechanism_assumptions(name: str, basis: Basis, pattern: str) -> list[str]:
    out = []
    if name in ("high_flow", "wall_irregularity", "no_flow_disturbance") and \
            basis.cardiac_output_source == "default":
        out.append("resting cardiac output")
    if name in ("low_viscosity", "high_flow", "narrowed_orifice") and \
            basis.hematocrit_source == "default":
        out.append("normal hematocrit")
    if name == "narrowed_orifice" and basis.diameter_m is None:
        out.append(f"orifice size typical of the {pattern} pattern")
    if basis.site is None:
        out.append("typical adult lumen, site unknown")
    return out


def _combine(per_finding: Mapping[str, tuple[Mechanism, ...]],
             weights: Mapping[str, float]) -> tuple[Mechanism, ...]:
    total = sum(weights.values()) or 1.0
    out = []
    for name in MECHANISMS:
        score = 0.0
        best: tuple[float, str, Mechanism] | None = None
        for fid, mechs in per_finding.items():
            mech = next(x for x in mechs if x.name == name)
            share = weights[fid] / total * mech.score
            score += share
            if best is None or share > best[0]:
                best = (share, fid, mech)
        assert best is not None
        _, fid, mech = best
        evidence = mech.evidence
        if len(per_finding) > 1:
            evidence = (f"strongest support from finding {fid}",) + evidence
        out.append(replace(mech, score=score, finding_id=None, evidence=evidence))
    return _ranked(out)


def _no_murmur(basis: Basis, config: ExplainConfig, presence: str) -> Mechanism:
    numbers = _numbers("no_flow_disturbance", "systolic", "outflow", None, basis, config)
    lumen = lumen_for(basis.site, "systolic")
    decided = presence == "absent"
    return Mechanism(
        name="no_flow_disturbance", label=label("no_flow_disturbance"),
        score=1.0 if decided else 0.5, rank=1, finding_id=None,
        evidence=("no murmur found in the usable beats" if decided else
                  "murmur presence undecided: the recording was too poor to tell",),
        physics=physics_text("no_flow_disturbance", numbers, pattern=None, lumen=lumen.name,
                             facts={"present": False}),
        numbers=numbers, discriminators=DISCRIMINATORS["no_flow_disturbance"],
        cautions=() if decided else ("No murmur was found, but the recording could not "
                                     "rule one out.",),
        assumptions=tuple(_mechanism_assumptions("no_flow_disturbance", basis, "outflow")),
    )


def _assumptions(basis: Basis, config: ExplainConfig) -> list[str]:
    out = []
    if basis.hematocrit_source == "default":
        out.append(f"Hematocrit not supplied: assumed {basis.hematocrit:g} (normal adult). High "
                   "flow and low viscosity sound alike, so without a blood count the two "
                   "cannot be told apart.")
    if basis.cardiac_output_source == "default":
        out.append(f"Cardiac output not supplied: assumed {basis.cardiac_output_l_min:g} L/min "
                   "(resting adult), so the Reynolds numbers are those of a resting heart and "
                   "high flow is weighed from the sound and heart rate only.")
    elif "heart rate" in basis.cardiac_output_source:
        out.append(f"Cardiac output {basis.cardiac_output_l_min:.3g} L/min taken as stroke "
                   f"volume times the {basis.heart_rate_source} heart rate.")
    if basis.heart_rate_source == "recording":
        out.append(f"Heart rate {basis.heart_rate_bpm:.0f}/min as measured from the recording.")
    if basis.site is None:
        out.append("Site not known: systolic flow is referred to the left-ventricular outflow "
                   "and ascending aorta, diastolic flow to the mitral inflow.")
    if basis.diameter_m is None:
        out.append("No valve or vessel diameter supplied: typical adult lumen sizes are used "
                   "and the orifice of a narrowing is assumed from the murmur pattern, so jet "
                   "velocities and pressure drops are order-of-magnitude estimates.")
    if basis.age_years is None:
        out.append("Age not known: wall irregularity (sclerosis, common with age) is weighed "
                   "from the sound only.")
    out.append(f"Blood density {BLOOD_DENSITY_KG_M3:g} kg/m3; viscosity from hematocrit by "
               f"the Pries et al. 1992 fit; Strouhal number {config.strouhal:g} (break "
               "frequency of turbulent bruits, Lees & Dewey 1970); steady straight-tube "
               "relations throughout.")
    return out


def explain_patient(analyses: Sequence[object], *, context: object | None = None,
                    config: ExplainConfig | None = None) -> Explanation:
    """Combine the explanations of several recordings of one patient (several sites).

    Each recording is explained again with the shared ``context`` (its own site kept);
    the overall ranking weights every murmur by its confidence and by its loudness
    (a murmur is loudest nearest its source), so the loudest site counts most. A murmur
    not called present, or only possible for the patient (called present in one of
    several recordings only, :func:`eddyphone.findings.summarise_patient`), counts half.

    Parameters
    ----------
    analyses : sequence of eddyphone.pipeline.Analysis
        Recordings of the same patient (``findings``, ``recording``, ``segmentation``).
    context : PatientContext, optional
        Shared patient context; its ``site`` is ignored in favour of each recording's.
    config : ExplainConfig, optional

    Returns
    -------
    Explanation
        ``per_finding`` keys are ``'<recording stem>:<finding id>'``.
    """
    from eddyphone.findings import summarise_patient
    from eddyphone.findings.patient import ONE_RECORDING_CONSISTENCY

    config = config or ExplainConfig()
    possible = ({m.phase: m for m in summarise_patient(analyses).murmurs if m.possible}
                if analyses else {})
    per_finding: dict[str, tuple[Mechanism, ...]] = {}
    subjects: dict[str, str] = {}
    weights: dict[str, float] = {}
    assumptions: list[str] = []
    cautions: list[str] = [_SCORE_NOTE]
    inputs: dict[str, object] = {}
    absent = []
    for k, a in enumerate(analyses):
        rec = getattr(a, "recording", None)
        stem = getattr(rec, "stem", f"recording{k + 1}")
        site = getattr(rec, "site", None)
        ctx = context
        if ctx is not None and getattr(ctx, "site", None) is not None:
            ctx = replace(ctx, site=None)
        e = explain(a.findings, context=ctx, recording=rec,
                    segmentation=getattr(a, "segmentation", None), config=config)
        inputs[stem] = e.inputs
        assumptions += [x for x in e.assumptions if x not in assumptions]
        if not e.per_finding:
            absent.append(f"{stem}{f' ({site})' if site else ''}")
        for m in a.findings.murmurs:
            key = f"{stem}:{m.id}"
            per_finding[key] = tuple(replace(x, finding_id=key) for x in e.per_finding[m.id])
            where = f" at the {site} site" if site else ""
            subjects[key] = e.subjects[m.id] + where
            loud = 10 ** (float(getattr(m, "level_db_re_heart_sounds", 0.0) or 0.0) / 20.0)
            firm = m.presence == "present" and m.phase not in possible
            weights[key] = float(m.confidence) * (1.0 if firm else 0.5) * min(loud, 10.0)
    if per_finding:
        overall = _combine(per_finding, weights)
        for phase, m in possible.items():
            cautions.append(f"The {phase} murmur was called present in only one of the "
                            f"{len(analyses)} recordings ({', '.join(m.present_at)}), in "
                            f"under {ONE_RECORDING_CONSISTENCY:.0%} of its beats there, so it "
                            "is only possible for the patient and its mechanisms count half.")
        if absent:
            cautions.append("No murmur at " + ", ".join(absent) + ": a murmur confined to "
                            "some sites points to a local source rather than a general flow "
                            "state.")
    else:
        basis = resolve_basis(context, None, None, config)
        overall = (_no_murmur(basis, config, "absent"),)
    return Explanation(per_finding=per_finding, overall=overall,
                       assumptions=tuple(assumptions), cautions=tuple(cautions),
                       inputs=inputs, subjects=subjects)
