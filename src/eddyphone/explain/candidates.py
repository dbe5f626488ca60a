"""Scoring of candidate mechanisms: evidence as log-odds increments, scores by softmax.

Public names: :data:`MECHANISMS`, :class:`Evidence`, :func:`murmur_pattern`,
:func:`score_murmur`, :func:`softmax`.

Each observation (phase, timing, shape, pitch, loudness, sound quality, consistency,
companion sounds, heart rate) and each fact of the patient context adds a weight from
:class:`~eddyphone.explain.config.ExplainConfig` to one or more mechanisms. The context
acts through the three levers of the Reynolds number, Re = 4 rho Q / (pi D mu): the
flow factor raises ``high_flow``, the viscosity factor ``low_viscosity``, the diameter
factor ``narrowed_orifice``, each by a weight times the natural log of the factor, so
every lever acts monotonically.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np

from eddyphone.explain.config import ExplainConfig
from eddyphone.explain.numbers import Basis, flow_noise_ceiling_hz, levers
from eddyphone.findings.config import pitch_word

#: Candidate mechanisms in their fixed order.
MECHANISMS = ("high_flow", "narrowed_orifice", "low_viscosity", "wall_irregularity",
              "no_flow_disturbance")
FLOW = ("high_flow", "low_viscosity")
FUNCTIONAL = ("high_flow", "low_viscosity", "wall_irregularity")

#: States of high cardiac output (common practice).
HIGH_OUTPUT_STATES = ("exercise", "pregnancy", "fever", "thyrotoxicosis", "sepsis",
                      "arteriovenous_fistula")

_PITCH_WORD = {"dominant_frequency": "dominant frequency", "centroid": "spectral centroid"}

_GRADES = {"I": 1, "II": 2, "III": 3, "IV": 4, "V": 5, "VI": 6}


@dataclass(frozen=True)
class Evidence:
    """One observation and the log-odds it adds to each mechanism."""

    text: str
    weights: tuple[tuple[str, float], ...]

    def for_(self, name: str) -> float:
        """The weight this observation gives ``name`` (0 when none)."""
        return sum(w for n, w in self.weights if n == name)


def softmax(logits: Iterable[float]) -> np.ndarray:
    """Normalised exponentials of log-odds (numerically stable)."""
    z = np.asarray(list(logits), dtype=float)
    e = np.exp(z - z.max())
    return e / e.sum()


def murmur_pattern(murmur: object) -> str:
    """The lesion pattern a murmur's phase, timing and shape suggest.

    Returns ``'outflow'`` (systolic ejection), ``'leak'`` (holosystolic or plateau
    systolic; early decrescendo diastolic), ``'inflow'`` (other diastolic, and any
    low-pitched rumbling diastolic murmur or one with a presystolic accent) or
    ``'shunt'`` (continuous). Common practice: a regurgitant diastolic leak is a
    high- or medium-pitched blowing decrescendo; a narrowed inflow valve gives a
    low-pitched rumble that swells again before S1. A murmur called low from its rise
    over the noise floor but whose recorded dominant frequency reads medium or high
    on the common-practice edges (:data:`~eddyphone.findings.config.PITCH_BOUNDARIES_HZ`)
    is no rumble on its pitch alone.
    """
    phase, timing, shape = murmur.phase, murmur.timing, murmur.shape
    if phase == "continuous":
        return "shunt"
    if phase == "systolic":
        return "leak" if timing == "holo" or shape == "plateau" else "outflow"
    dominant = getattr(murmur, "dominant_frequency_hz", float("nan"))
    low = getattr(murmur, "pitch", None) == "low" and (math.isnan(dominant)
                                                       or pitch_word(dominant) == "low")
    rumble = ("rumbling" in tuple(getattr(murmur, "quality_words", ()) or ())
              or bool(getattr(murmur, "presystolic_accent", False)) or low)
    if not rumble and shape == "decrescendo" and timing in ("early", "holo"):
        return "leak"
    return "inflow"


def _grade_high(grade_range: object) -> int | None:
    if not grade_range:
        return None
    hi = grade_range[-1]
    if isinstance(hi, (int, float)):
        return int(hi)
    return _GRADES.get(str(hi).strip().upper())


def _sureness(m: object, name: str) -> float:
    """How far to trust a descriptive word: its confidence, kept within 0.25-1."""
    value = getattr(m, name, None)
    if value is None or not np.isfinite(value):
        return 1.0
    return float(np.clip(value, 0.25, 1.0))


def _sure(text: str, sureness: float) -> str:
    return text if sureness >= 0.999 else f"{text} [word confidence {sureness:.2f}]"


def _ev(text: str, **weights: float) -> Evidence:
    return Evidence(text, tuple((k, float(v)) for k, v in weights.items() if v))


def _spread(names: Iterable[str], w: float) -> dict[str, float]:
    return {n: w for n in names}


def score_murmur(murmur: object, *, extra_kinds: Iterable[str], basis: Basis,
                 config: ExplainConfig) -> list[Evidence]:
    """All the evidence one murmur and the context give each mechanism.

    Parameters
    ----------
    murmur : eddyphone.findings.Murmur
        The murmur (phase, timing, shape, pitch, grade, quality words, consistency...).
    extra_kinds : iterable of str
        Kinds of the extra sounds found in the same recording.
    basis : Basis
        Context, measured heart rate and defaults.
    config : ExplainConfig

    Returns
    -------
    list of Evidence
        Priors first, then sound, then context. Sum the weights per mechanism for its
        log-odds.
    """
    w = config.w
    ev: list[Evidence] = [
        _ev("prior: how common each cause of a murmur is without other information",
            high_flow=w("prior_high_flow"), low_viscosity=w("prior_low_viscosity"),
            wall_irregularity=w("prior_wall_irregularity"),
            narrowed_orifice=w("prior_narrowed_orifice"),
            no_flow_disturbance=w("prior_no_flow_disturbance")),
    ]
    ev += _sound_evidence(murmur, set(extra_kinds), basis, config)
    ev += _context_evidence(murmur.phase, murmur_pattern(murmur), basis, config)
    return [e for e in ev if e.weights]


def _sound_evidence(m: object, extras: set[str], basis: Basis,
                    config: ExplainConfig) -> list[Evidence]:
    w = config.w
    ev: list[Evidence] = []
    phase, timing, shape = m.phase, m.timing, m.shape
    # phase
    if phase == "diastolic":
        ev.append(_ev("diastolic murmur: flow is normally slow and quiet in diastole, so "
                      "noise there usually means a leak or a narrowed inflow valve",
                      narrowed_orifice=w("diastolic_orifice"),
                      high_flow=w("diastolic_flow"), low_viscosity=w("diastolic_other"),
                      wall_irregularity=w("diastolic_other")))
    elif phase == "continuous":
        ev.append(_ev("continuous murmur through S2: a pressure difference that persists "
                      "through the whole cycle, as across a shunt or fistula",
                      narrowed_orifice=w("continuous_orifice"),
                      high_flow=w("continuous_flow"), low_viscosity=w("continuous_other"),
                      wall_irregularity=w("continuous_other")))
    # timing and shape, each weighed by how sure the findings stage was of the word
    tc, sc = 1.0, 1.0
    if config.use_word_confidence:
        tc, sc = _sureness(m, "timing_confidence"), _sureness(m, "shape_confidence")
    if phase == "systolic":
        if timing == "holo":
            ev.append(_ev(_sure("holosystolic: noise from S1 to S2 needs a pressure "
                                "difference across an orifice for the whole of systole, as in "
                                "a leak", tc),
                          narrowed_orifice=w("holo_orifice") * tc,
                          **_spread(FUNCTIONAL, w("holo_other") * tc)))
        elif timing == "late":
            ev.append(_ev(_sure("late systolic: noise that starts or peaks late points to an "
                                "orifice that opens or tightens as systole goes on", tc),
                          narrowed_orifice=w("late_orifice") * tc))
        elif timing == "early":
            ev.append(_ev(_sure("early systolic: flow murmurs follow the early peak of "
                                "ejection", tc), **_spread(FLOW, w("early_flow") * tc)))
        elif timing == "mid":
            ev.append(_ev(_sure("mid-systolic: the timing of ejection, shared by flow "
                                "murmurs, outflow narrowing and valve sclerosis", tc),
                          **_spread(MECHANISMS[:4], w("mid_ejection") * tc)))
        if shape == "plateau":
            ev.append(_ev(_sure("plateau shape: a steady pressure difference drives a steady "
                                "jet", sc), narrowed_orifice=w("plateau_orifice") * sc))
        elif shape == "crescendo-decrescendo":
            pf = getattr(m, "peak_fraction", None)
            if pf is not None and pf >= 0.55:
                ev.append(_ev(_sure(f"crescendo-decrescendo peaking late (at {pf:.0%} of "
                                    "systole): the later the peak, the tighter an outflow "
                                    "narrowing", sc),
                              narrowed_orifice=w("late_peak_orifice") * sc))
            elif pf is not None and pf <= 0.4:
                ev.append(_ev(_sure(f"crescendo-decrescendo peaking early (at {pf:.0%} of "
                                    "systole), as ejection flow does", sc),
                              **_spread(FLOW, w("early_peak_flow") * sc)))
    elif phase == "diastolic" and shape in ("decrescendo", "crescendo"):
        what = ("decrescendo from S2: a leak whose driving pressure falls through diastole"
                if shape == "decrescendo" else
                "crescendo into S1: inflow through a narrowed valve boosted by atrial "
                "contraction")
        ev.append(_ev(_sure(what, sc), narrowed_orifice=w("diastolic_shape_orifice") * sc))
    # pitch against Strouhal scaling of flow through a normal lumen
    f = getattr(m, config.pitch_measure + "_hz", None)
    if f is None or not np.isfinite(f) or f <= 0:
        f = getattr(m, "dominant_frequency_hz", None)
    if f is not None and np.isfinite(f) and f > 0:
        ceiling = flow_noise_ceiling_hz(basis, phase, config)
        octaves = float(np.clip(math.log2(f / ceiling), -1.5, 2.5))
        what = f"{_PITCH_WORD[config.pitch_measure]} {f:.0f} Hz"
        if octaves >= 1.0:
            text = (f"{what} is {octaves:.1f} octaves above the ~{ceiling:.0f} Hz that even "
                    "raised flow through a normal lumen makes (Strouhal scaling): a smaller, "
                    "faster jet is implied")
        elif octaves > 0.25:
            text = (f"{what} is a little ({octaves:.1f} octaves) above the ~{ceiling:.0f} Hz "
                    "that raised flow through a normal lumen makes (Strouhal scaling): a weak "
                    "hint of a smaller, faster jet")
        elif octaves > 0:
            text = (f"{what} is about the ~{ceiling:.0f} Hz that raised flow through a "
                    "normal lumen makes (Strouhal scaling)")
        else:
            text = (f"{what} is within the ~{ceiling:.0f} Hz that raised flow through a "
                    "normal lumen can make (Strouhal scaling)")
        ev.append(_ev(text, narrowed_orifice=w("pitch_orifice_per_octave") * octaves,
                      **_spread(FUNCTIONAL, w("pitch_flow_per_octave") * max(octaves, 0.0))))
    # loudness
    hi = _grade_high(getattr(m, "grade_range", None))
    if hi is not None:
        if hi >= 3:
            ev.append(_ev("grade up to III: loud murmurs are more often structural",
                          narrowed_orifice=w("loud_orifice")))
        else:
            ev.append(_ev("soft (grade II or less), as functional murmurs usually are",
                          **_spread(FUNCTIONAL, w("soft_functional"))))
    words = set(getattr(m, "quality_words", ()) or ())
    if "harsh" in words:
        ev.append(_ev("harsh quality: broadband noise of a fast jet or rough surface",
                      narrowed_orifice=w("harsh_orifice"),
                      wall_irregularity=w("harsh_wall")))
    if "blowing" in words and phase == "systolic" and timing != "holo":
        ev.append(_ev("blowing quality, as flow murmurs usually are",
                      **_spread(FLOW, w("blowing_flow"))))
    if "rumbling" in words:
        ev.append(_ev("rumbling quality: low-velocity flow through a narrowed inflow valve",
                      narrowed_orifice=w("rumbling_orifice")))
    if "musical" in words:
        ev.append(_ev("musical quality: a regular vibration of a valve or wall structure",
                      wall_irregularity=w("musical_wall"), high_flow=w("musical_flow")))
    # the murmur itself: if it is real, flow is disturbed somewhere (whether it is real
    # at all is weighed after the softmax, by the findings' confidence)
    ev.append(_ev("a real murmur means disturbed flow somewhere",
                  no_flow_disturbance=w("present_no_disturbance")))
    # companion sounds
    if "opening_snap" in extras and phase == "diastolic":
        ev.append(_ev("opening snap before the murmur: stiff leaflets of a narrowed inflow "
                      "valve halting as they open", narrowed_orifice=w("snap_orifice")))
    if "ejection_click" in extras and phase == "systolic":
        ev.append(_ev("ejection click: a stiff or domed outflow valve opening",
                      narrowed_orifice=w("click_orifice")))
    if "S3" in extras:
        ev.append(_ev("third heart sound: rapid early filling, as with high flow",
                      high_flow=w("s3_flow")))
    # measured or supplied heart rate
    if basis.heart_rate_bpm is not None and basis.heart_rate_bpm > 90:
        k = float(np.clip(math.log(basis.heart_rate_bpm / 90.0) / math.log(130.0 / 90.0),
                          0.0, 1.0))
        src = "measured" if basis.heart_rate_source == "recording" else "supplied"
        ev.append(_ev(f"heart rate {basis.heart_rate_bpm:.0f}/min ({src}): tachycardia goes "
                      "with high-output states", high_flow=w("tachycardia_flow") * k))
    return ev


def _context_evidence(phase: str, pattern: str, basis: Basis,
                      config: ExplainConfig) -> list[Evidence]:
    w = config.w
    ev: list[Evidence] = []
    lv = levers(basis, phase, config)
    known_normal = []
    if basis.cardiac_output_source != "default":
        ev.append(_ev(f"cardiac output {basis.cardiac_output_l_min:.3g} L/min: flow factor "
                      f"{lv.flow_factor:.2f} on Re (a measured output leaves high flow only "
                      "as much room as it is raised)",
                      high_flow=w("flow_ratio_flow") * math.log(lv.flow_factor)
                      + w("known_flow_offset")))
        if 0.8 <= lv.flow_factor <= 1.3:
            known_normal.append("cardiac output")
    if basis.hematocrit_source == "context":
        ev.append(_ev(f"hematocrit {basis.hematocrit:.2f}: viscosity factor "
                      f"{lv.viscosity_factor:.2f} on Re (thin blood needs a low hematocrit)",
                      low_viscosity=w("viscosity_ratio_low_viscosity")
                      * math.log(lv.viscosity_factor) + w("known_hematocrit_offset")))
    if basis.diameter_m is not None:
        ratio = lv.diameter_factor
        ref = ratio * basis.diameter_m
        offset = 0.0 if pattern == "leak" else w("known_diameter_offset")
        ev.append(_ev(f"supplied diameter {basis.diameter_m * 1e3:.3g} mm against a normal "
                      f"{ref * 1e3:.3g} mm: diameter factor {ratio:.2f} on Re",
                      narrowed_orifice=w("diameter_ratio_orifice") * math.log(ratio)
                      + offset))
        if ratio <= 1.15 and pattern != "leak":
            known_normal.append("diameter")
    states = set(basis.states)
    high = sorted(states & set(HIGH_OUTPUT_STATES))
    if high:
        ev.append(_ev(f"high-output state ({', '.join(high)})",
                      high_flow=w("high_output_state_flow")
                      + w("extra_state_flow") * (len(high) - 1)))
    if "anemia" in states:
        ev.append(_ev("known anemia: thinner blood, and often a raised output",
                      low_viscosity=w("anemia_low_viscosity"), high_flow=w("anemia_flow")))
    if basis.age_years is not None:
        if basis.age_years >= 60:
            k = float(np.clip((basis.age_years - 50.0) / 25.0, 0.0, 1.0))
            ev.append(_ev(f"age {basis.age_years:.0f}: valve and wall sclerosis are common",
                          wall_irregularity=w("older_wall") * k))
        elif basis.age_years < 30:
            ev.append(_ev(f"age {basis.age_years:.0f}: sclerosis is rare and flow murmurs "
                          "common", wall_irregularity=w("young_wall"),
                          high_flow=w("young_flow")))
    if known_normal:
        ev.append(_ev(f"{' and '.join(known_normal)} known to be normal: disturbed flow "
                      "without a raised Re points to walls that trip turbulence early",
                      wall_irregularity=w("normal_lever_wall") * len(known_normal)))
    return ev
