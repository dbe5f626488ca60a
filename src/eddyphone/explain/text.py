"""Words of the explanation: labels, physics paragraphs, discriminators, text rendering.

Public names: :data:`LABELS`, :func:`label`, :func:`physics_text`,
:data:`DISCRIMINATORS`, :func:`render_text`.
"""

from __future__ import annotations

from collections.abc import Mapping

from eddyphone.explain.model import Explanation, Mechanism
from eddyphone.explain.numbers import fmt

LABELS = {
    "high_flow": "more flow than usual (high-output state)",
    "narrowed_orifice": "a fast jet through a narrowed or leaking orifice",
    "low_viscosity": "thin blood (low viscosity, as in anemia)",
    "wall_irregularity": "roughened or irregular walls or valve surfaces",
    "no_flow_disturbance": "no flow disturbance",
}

_ORIFICE_LABELS = {
    "outflow": "a fast jet through a narrowed outflow valve or vessel",
    "leak": "a leak: a fast jet back through an incompetent valve",
    "inflow": "inflow through a narrowed valve",
    "shunt": "a shunt: flow through an abnormal channel in both phases",
}


_LESIONS = {
    # (pattern, phase, site) -> the valve-level reading, in the trade's words
    ("outflow", "systolic", "aortic"): "at the aortic site: a narrowed aortic valve",
    ("outflow", "systolic", "pulmonic"): "at the pulmonic site: a narrowed pulmonary valve",
    ("leak", "systolic", "mitral"): "at the mitral site: mitral regurgitation",
    ("leak", "systolic", "tricuspid"): "at the tricuspid site: tricuspid regurgitation "
                                       "or a septal defect",
    ("leak", "diastolic", "aortic"): "aortic regurgitation",
    ("leak", "diastolic", "pulmonic"): "aortic or pulmonary regurgitation",
    ("leak", "diastolic", "tricuspid"): "aortic regurgitation heard at the left sternal edge",
    ("inflow", "diastolic", "mitral"): "at the mitral site: a narrowed mitral valve",
    ("inflow", "diastolic", "tricuspid"): "at the tricuspid site: a narrowed tricuspid valve",
    ("shunt", "continuous", None): "such as an open arterial duct or an arteriovenous "
                                   "connection",
}
_VESSEL_SITES = ("carotid", "femoral", "renal", "fistula")


def label(name: str, pattern: str | None = None, *, phase: str | None = None,
          site: str | None = None) -> str:
    """Plain-words label of a mechanism; the orifice label follows pattern and site."""
    if name != "narrowed_orifice" or pattern not in _ORIFICE_LABELS:
        return LABELS[name]
    if site in _VESSEL_SITES and pattern in ("outflow", "shunt"):
        return f"a fast jet through a narrowed {site} artery or access (a bruit)"
    text = _ORIFICE_LABELS[pattern]
    lesion = _LESIONS.get((pattern, phase, site)) or _LESIONS.get((pattern, phase, None))
    return f"{text} ({lesion})" if lesion else text


DISCRIMINATORS = {
    "high_flow": (
        "Cardiac output or stroke volume (Doppler echocardiography): raised in a "
        "high-output state.",
        "Response to the state: a flow murmur softens as exercise, fever or another "
        "high-output state settles.",
        "Doppler peak velocity across the valve: normal or mildly raised (below about "
        "2 m/s) with high flow, higher across a narrowing.",
    ),
    "low_viscosity": (
        "Hematocrit or hemoglobin from a blood count: low in anemia.",
        "Cardiac output: anemia usually raises it, so both levers may be acting.",
        "A flow murmur of anemia fades as the anemia is corrected.",
    ),
    "narrowed_orifice": (
        "Echocardiography with Doppler: peak jet velocity (above about 2.5-3 m/s across "
        "an outflow valve), valve area, colour flow of any leak.",
        "Where the murmur is loudest and where it radiates: record at the other sites.",
        "Supplying the valve or vessel diameter turns the assumed orifice into a measured one.",
    ),
    "wall_irregularity": (
        "Echocardiography: thickened or calcified leaflets with a peak velocity below about "
        "2.5 m/s point to sclerosis rather than a narrowing.",
        "Age and vascular risk factors; sclerosis is common from the seventh decade.",
        "Normal hematocrit and cardiac output leave roughness as the remaining lever.",
    ),
    "no_flow_disturbance": (
        "A repeat recording in a quiet room, with firm contact, at the other sites.",
        "A murmur heard on the repeat, or by a clinician, rules this candidate out.",
    ),
}


def _v(numbers: Mapping[str, Mapping], key: str) -> str:
    return fmt(float(numbers[key]["value"])) if key in numbers else "?"


def physics_text(name: str, numbers: Mapping[str, Mapping], *, pattern: str | None,
                 lumen: str, facts: Mapping[str, object]) -> str:
    """Two or three sentences of flow physics for one mechanism, with its numbers.

    ``facts`` carries what the sentences need beyond the numbers: ``co_assumed``,
    ``h_assumed`` (bool), ``present`` (bool, a murmur was heard), ``f_hz``.
    """
    n = numbers
    if name == "high_flow":
        f_dom = facts.get("f_hz")
        heard = "" if f_dom is None else f" (the murmur: {fmt(float(f_dom))} Hz)"
        if facts.get("co_assumed") and "reynolds_number_raised" in n:
            return ("The Reynolds number Re = 4 rho Q / (pi D mu) grows in proportion to "
                    f"flow: no cardiac output was supplied, so at the resting "
                    f"{_v(n, 'cardiac_output_l_min')} L/min peak Re in the {lumen} is about "
                    f"{_v(n, 'reynolds_number_peak')}, and a "
                    f"{_v(n, 'raised_cardiac_output_l_min')} L/min output, as in exercise, "
                    f"would raise it to about {_v(n, 'reynolds_number_raised')}. More flow "
                    "through a normal valve drives ejection further past the point where "
                    "disturbances die out, so brief turbulence at peak ejection makes a soft, "
                    "early-peaking murmur of low pitch: Strouhal scaling puts its noise near "
                    f"{_v(n, 'flow_noise_frequency_hz')}-{_v(n, 'flow_noise_frequency_raised_hz')}"
                    f" Hz at rest and at the raised output{heard}.")
        return ("The Reynolds number Re = 4 rho Q / (pi D mu) grows in proportion to flow: "
                f"at a cardiac output of {_v(n, 'cardiac_output_l_min')} L/min peak Re in the "
                f"{lumen} is about {_v(n, 'reynolds_number_peak')}, against "
                f"{_v(n, 'reynolds_number_normal')} for a resting adult with normal blood and "
                "lumen. More flow through a normal valve drives ejection further past the "
                "point where disturbances die out, so brief turbulence at peak ejection makes "
                "a soft, early-peaking murmur of low pitch, near the "
                f"{_v(n, 'flow_noise_frequency_hz')} Hz Strouhal scaling gives for this "
                f"flow{heard}.")
    if name == "low_viscosity":
        text = (f"Viscosity damps disturbances: at hematocrit {_v(n, 'hematocrit')} blood "
                f"viscosity is about {_v(n, 'viscosity_mpa_s')} mPa s against "
                f"{_v(n, 'normal_viscosity_mpa_s')} at a normal hematocrit, which multiplies "
                f"the Reynolds number by {_v(n, 'viscosity_factor')} (peak Re about "
                f"{_v(n, 'reynolds_number_peak')} against {_v(n, 'reynolds_number_normal')} "
                "with normal blood). Thinner blood lets ordinary ejection flow "
                "become disturbed, and anemia usually raises cardiac output as well, so the "
                "two levers add.")
        if facts.get("h_assumed"):
            text += (" No hematocrit was supplied, so a normal one is assumed and this "
                     "candidate rests on the sound alone.")
        return text
    if name == "narrowed_orifice":
        drop = ("" if "driving_pressure_mmhg" in n else
                f", a pressure drop of {_v(n, 'pressure_drop_mmhg')} mmHg (Bernoulli)")
        how = " (Bernoulli)" if "driving_pressure_mmhg" in n else ""
        jet = (f"a jet of about {_v(n, 'jet_velocity_m_s')} m/s{how} through a "
               f"{_v(n, 'orifice_diameter_mm')} mm orifice{drop} and a jet Reynolds number "
               f"near {_v(n, 'jet_reynolds_number')}")
        pitch = ""
        if "pitch_velocity_m_s" in n:
            f_b = float(n["break_frequency_hz"]["value"])
            f_dom = float(n["dominant_frequency_hz"]["value"])
            fits = ("fits below that jet's noise band, which reaches "
                    f"{_v(n, 'break_frequency_hz')} Hz" if f_dom <= f_b else
                    f"needs at least {_v(n, 'pitch_velocity_m_s')} m/s, so the orifice is "
                    "probably smaller than assumed")
            pitch = f" The heard {_v(n, 'dominant_frequency_hz')} Hz {fits} (Strouhal scaling)."
        if pattern == "leak":
            return ("A leak through an incompetent valve is driven by the pressure difference "
                    "between two chambers for as long as that difference lasts, so the "
                    f"murmur fills its phase; the usual {_v(n, 'driving_pressure_mmhg')} mmHg "
                    f"gives {jet}." + pitch + " The small, fast jet turns turbulent where it "
                    "enters the chamber, which sounds high-pitched and blowing.")
        if pattern == "inflow":
            return ("Inflow through a narrowed valve is driven by a small pressure difference "
                    f"(about {_v(n, 'driving_pressure_mmhg')} mmHg), so the jet is slow and the "
                    f"murmur low-pitched: {jet}." + pitch + " The difference falls as the "
                    "upstream chamber empties, and atrial contraction can boost it again "
                    "just before S1.")
        if pattern == "shunt":
            return ("A shunt between a high- and a low-pressure vessel carries flow through "
                    "systole and diastole, so the murmur runs through S2; about "
                    f"{_v(n, 'driving_pressure_mmhg')} mmHg gives {jet}." + pitch)
        return ("A narrowing that the whole flow must pass speeds it up by continuity "
                f"(v = Q/A): at a peak flow of {_v(n, 'peak_flow_l_min')} L/min that is {jet}."
                + pitch + " The jet turns turbulent where it widens beyond the orifice, "
                "making a crescendo-decrescendo murmur that peaks later the tighter the "
                "narrowing.")
    if name == "wall_irregularity":
        return ("Roughened or irregular walls and valve surfaces (sclerosis, calcification, "
                "plaque) trip disturbances at Reynolds numbers at which smooth walls keep "
                f"flow orderly; here peak Re is about {_v(n, 'reynolds_number_peak')}, "
                f"{_v(n, 'reynolds_ratio')} times normal, so no extra flow, thin blood or "
                "narrowing is needed. Without a tight narrowing the velocity stays normal, so "
                "the murmur stays soft and mid-systolic, as over a sclerotic ageing valve.")
    # no flow disturbance
    text = (f"At the flow used here peak Re in the {lumen} is about "
            f"{_v(n, 'reynolds_number_peak')}; normal pulsatile flow at such Reynolds "
            "numbers is disturbed only briefly (normal ascending aortas reach about "
            "5,700-8,900, Stein & Sabbah 1976), so no audible turbulence is expected.")
    if facts.get("present"):
        text += (" This candidate holds only if the murmur is an artefact of noise, breath "
                 "or handling rather than flow.")
    else:
        text += " Nothing in the recording needs a flow disturbance to explain it."
    return text


_UNIT_SUFFIXES = ("_l_min", "_m_s", "_mpa_s", "_mmhg", "_mm", "_hz")


def _name(key: str) -> str:
    for suffix in _UNIT_SUFFIXES:
        if key.endswith(suffix):
            key = key[: -len(suffix)]
            break
    return key.replace("_", " ").replace("reynolds", "Reynolds")


def _num_line(numbers: Mapping[str, Mapping], keys: tuple[str, ...]) -> str:
    parts = []
    for k in keys:
        if k in numbers:
            item = numbers[k]
            unit = f" {item['unit']}" if item.get("unit") else ""
            parts.append(f"{_name(k)} {fmt(float(item['value']))}{unit}")
    return "; ".join(parts)


_KEY_NUMBERS = {
    "high_flow": ("cardiac_output_l_min", "peak_velocity_m_s", "reynolds_number_peak",
                  "reynolds_number_normal", "reynolds_number_raised", "womersley_number",
                  "flow_noise_frequency_hz"),
    "low_viscosity": ("hematocrit", "viscosity_mpa_s", "viscosity_factor",
                      "reynolds_number_peak", "reynolds_number_normal"),
    "narrowed_orifice": ("orifice_diameter_mm", "jet_velocity_m_s", "pressure_drop_mmhg",
                         "jet_reynolds_number", "break_frequency_hz", "pitch_velocity_m_s"),
    "wall_irregularity": ("reynolds_number_peak", "reynolds_ratio"),
    "no_flow_disturbance": ("reynolds_number_peak",),
}


def _wrap(text: str, indent: str, width: int = 92) -> list[str]:
    import textwrap

    return textwrap.wrap(text, width=width, initial_indent=indent,
                         subsequent_indent=indent + "  ") or [indent]


def _mechanism_lines(m: Mechanism, *, full: bool) -> list[str]:
    lines = _wrap(f"{m.rank}. {m.label} [{m.name}]  score {m.score:.2f}", "    ")
    if not full:
        return lines
    strong = [e for e in m.evidence if not e.startswith("prior")][:6]
    if strong:
        lines += _wrap("Evidence (log-odds, + for, - against): " + "; ".join(strong),
                       "       ")
    lines += _wrap("Physics: " + m.physics, "       ")
    nums = _num_line(m.numbers, _KEY_NUMBERS.get(m.name, ()))
    if nums:
        lines += _wrap("Numbers: " + nums, "       ")
    if m.discriminators:
        lines += _wrap("To tell apart: " + " ".join(m.discriminators[:2]), "       ")
    for c in m.cautions:
        lines += _wrap("Caution: " + c, "       ")
    return lines


def render_text(explanation: Explanation, *, detail: int = 2) -> str:
    """A readable block for the terminal: the ranked mechanisms with physics and numbers.

    Parameters
    ----------
    explanation : Explanation
    detail : int
        How many top candidates per finding get their physics and numbers (the rest
        are listed with their scores).

    Returns
    -------
    str
        Lines of at most about 95 characters, no trailing newline.
    """
    out = ["Likely physical mechanisms (decision support, not a diagnosis)"]
    top = explanation.top()
    if top is not None:
        out += _wrap(f"Overall: {top.label} [{top.name}], score {top.score:.2f}", "  ")
    if not explanation.per_finding:
        for m in explanation.overall:
            out += _mechanism_lines(m, full=True)
    for fid, mechs in explanation.per_finding.items():
        subject = explanation.subjects.get(fid, "")
        out += _wrap(f"Finding {fid}: {subject}".rstrip(": "), "  ")
        for i, m in enumerate(mechs):
            out += _mechanism_lines(m, full=i < detail)
    if explanation.assumptions:
        out.append("  Assumed:")
        for a in explanation.assumptions:
            out += _wrap("- " + a, "    ")
    if explanation.cautions:
        out.append("  Cautions:")
        for c in explanation.cautions:
            out += _wrap("- " + c, "    ")
    return "\n".join(out)
