"""The numbers behind each mechanism, all computed through :mod:`eddyphone.physics`.

Public names: :class:`Basis`, :func:`resolve_basis`, :func:`levers`,
:func:`vessel_numbers`, :func:`viscosity_numbers`, :func:`jet_numbers`.

A :class:`Basis` is what is known or assumed about the flow: hematocrit, cardiac
output, heart rate, lumen and orifice, each tagged with where it came from
(``'context'``, ``'recording'`` or ``'default'``). Every number is returned as
``{"value", "unit", "meaning"}`` so the explanation can show it with its meaning.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from eddyphone.explain.config import (
    DEFAULT_ORIFICES_M,
    DRIVING_PRESSURE_MMHG,
    ExplainConfig,
    Lumen,
    lumen_for,
)
from eddyphone.physics import (
    NORMAL_HEMATOCRIT,
    SIMPLIFIED_BERNOULLI_MMHG_S2_M2,
    TRANSITION_RE_HIGH,
    TRANSITION_RE_LOW,
    bernoulli_pressure_drop_mmhg,
    blood_viscosity_pa_s,
    flow_from_velocity_m3_s,
    flow_regime,
    l_min_from_m3_s,
    reynolds_number,
    reynolds_number_from_flow,
    strouhal_frequency_hz,
    strouhal_velocity_m_s,
    velocity_from_flow_m_s,
    womersley_number,
)

#: Fixed vessel sites: a supplied diameter there is the vessel (or its narrowing).
VESSEL_SITES = ("carotid", "femoral", "renal", "fistula")


@dataclass(frozen=True)
class Basis:
    """What the physics is computed from, and where each value came from.

    Attributes
    ----------
    hematocrit : float
    hematocrit_source : str
    cardiac_output_l_min : float
    cardiac_output_source : str
    heart_rate_bpm : float or None
    heart_rate_source : str
    diameter_m : float or None
        Supplied valve or vessel diameter, or ``None``.
    site : str or None
    site_source : str
    age_years : float or None
    states : tuple of str
    """

    hematocrit: float
    hematocrit_source: str
    cardiac_output_l_min: float
    cardiac_output_source: str
    heart_rate_bpm: float | None
    heart_rate_source: str
    diameter_m: float | None
    site: str | None
    site_source: str
    age_years: float | None
    states: tuple[str, ...]

    @property
    def viscosity_pa_s(self) -> float:
        """Large-vessel blood viscosity at this hematocrit (Pries 1992 via physics)."""
        return float(blood_viscosity_pa_s(self.hematocrit))

    def to_dict(self) -> dict:
        """JSON-ready: each input with its value and source."""
        return {
            "hematocrit": {"value": self.hematocrit, "source": self.hematocrit_source},
            "cardiac_output_l_min": {"value": round(self.cardiac_output_l_min, 3),
                                     "source": self.cardiac_output_source},
            "heart_rate_bpm": {"value": None if self.heart_rate_bpm is None
                               else round(self.heart_rate_bpm, 1),
                               "source": self.heart_rate_source},
            "diameter_mm": {"value": None if self.diameter_m is None
                            else round(self.diameter_m * 1e3, 3),
                            "source": "context" if self.diameter_m is not None else "none"},
            "site": {"value": self.site, "source": self.site_source},
            "age_years": {"value": self.age_years,
                          "source": "context" if self.age_years is not None else "none"},
            "states": {"value": list(self.states),
                       "source": "context" if self.states else "none"},
        }


def resolve_basis(context: object | None, recording: object | None,
                  segmentation: object | None, config: ExplainConfig) -> Basis:
    """Merge patient context, the recording and the defaults into one :class:`Basis`.

    Cardiac output comes from the context, else stroke volume times heart rate (context
    heart rate, else the measured one), else the default. Heart rate comes from the
    context, else from the segmentation's rhythm.
    """
    ctx = context
    get = (lambda name: getattr(ctx, name, None)) if ctx is not None else (lambda name: None)
    measured_hr = None
    rhythm = getattr(segmentation, "rhythm", None)
    if rhythm is not None and getattr(rhythm, "heart_rate_bpm", None):
        hr = float(rhythm.heart_rate_bpm)
        measured_hr = hr if np.isfinite(hr) and hr > 0 else None
    if get("heart_rate_bpm") is not None:
        hr, hr_source = float(get("heart_rate_bpm")), "context"
    elif measured_hr is not None:
        hr, hr_source = measured_hr, "recording"
    else:
        hr, hr_source = None, "none"
    if get("cardiac_output_l_min") is not None:
        co, co_source = float(get("cardiac_output_l_min")), "context"
    elif get("stroke_volume_ml") is not None and hr is not None:
        co = float(get("stroke_volume_ml")) * 1e-3 * hr
        co_source = f"context (stroke volume x {hr_source} heart rate)"
    else:
        co, co_source = config.cardiac_output_l_min, "default"
    if get("hematocrit") is not None:
        h, h_source = float(get("hematocrit")), "context"
    else:
        h, h_source = config.hematocrit, "default"
    site, site_source = get("site"), "context"
    if site is None and recording is not None and getattr(recording, "site", None):
        site, site_source = recording.site, "recording"
    if site is None:
        site_source = "none"
    d_mm = get("diameter_mm")
    return Basis(
        hematocrit=h, hematocrit_source=h_source,
        cardiac_output_l_min=co, cardiac_output_source=co_source,
        heart_rate_bpm=hr, heart_rate_source=hr_source,
        diameter_m=None if d_mm is None else float(d_mm) * 1e-3,
        site=site, site_source=site_source,
        age_years=get("age_years"),
        states=tuple(get("states") or ()),
    )


def _n(value: float, unit: str, meaning: str) -> dict:
    return {"value": float(value), "unit": unit, "meaning": meaning}


def _fmt(value: float) -> str:
    return f"{value:,.0f}" if abs(value) >= 100 else f"{value:.3g}"


def lumen_of(basis: Basis, phase: str) -> tuple[Lumen, float]:
    """The reference lumen for ``phase`` and the diameter the flow passes.

    A supplied diameter (valve orifice or vessel) replaces the lumen's normal diameter:
    the whole flow is taken to pass through it.
    """
    lumen = lumen_for(basis.site, phase)
    if basis.diameter_m is not None:
        return lumen, basis.diameter_m
    return lumen, lumen.diameter_m


def peak_velocity_m_s(basis: Basis, lumen: Lumen, diameter_m: float,
                      config: ExplainConfig) -> float:
    """Peak velocity in the lumen: the normal one scaled by flow and by continuity."""
    flow_ratio = basis.cardiac_output_l_min / config.cardiac_output_l_min
    q_peak = flow_from_velocity_m3_s(lumen.peak_velocity_m_s * flow_ratio, lumen.diameter_m)
    return float(velocity_from_flow_m_s(q_peak, diameter_m))


@dataclass(frozen=True)
class Levers:
    """How far each physical lever moves the peak Reynolds number from normal.

    Re = 4 rho Q / (pi D mu), so Re / Re_normal = flow factor x viscosity factor x
    diameter factor. Each factor is 1 when that input is normal or unknown.
    """

    reynolds_peak: float
    reynolds_normal: float
    flow_factor: float
    viscosity_factor: float
    diameter_factor: float


def levers(basis: Basis, phase: str, config: ExplainConfig) -> Levers:
    """The Reynolds number at peak flow, its normal value and the three lever factors.

    Both Reynolds numbers are computed with :func:`eddyphone.physics.reynolds_number_from_flow`
    at the peak flow of the reference lumen.
    """
    lumen, d = lumen_of(basis, phase)
    flow_ratio = basis.cardiac_output_l_min / config.cardiac_output_l_min
    q_normal = float(flow_from_velocity_m3_s(lumen.peak_velocity_m_s, lumen.diameter_m))
    mu_normal = float(blood_viscosity_pa_s(NORMAL_HEMATOCRIT))
    mu = basis.viscosity_pa_s
    re_normal = float(reynolds_number_from_flow(flow_m3_s=q_normal, diameter_m=lumen.diameter_m,
                                                viscosity_pa_s=mu_normal))
    re = float(reynolds_number_from_flow(flow_m3_s=q_normal * flow_ratio, diameter_m=d,
                                         viscosity_pa_s=mu))
    return Levers(re, re_normal, flow_ratio, mu_normal / mu, lumen.diameter_m / d)


def vessel_numbers(basis: Basis, phase: str, config: ExplainConfig,
                   dominant_frequency_hz: float | None = None) -> dict[str, dict]:
    """Peak flow, velocity, Reynolds and Womersley numbers in the reference lumen."""
    lumen, d = lumen_of(basis, phase)
    lv = levers(basis, phase, config)
    v = peak_velocity_m_s(basis, lumen, d, config)
    mu = basis.viscosity_pa_s
    re_v = float(reynolds_number(velocity_m_s=v, diameter_m=d, viscosity_pa_s=mu))
    regime = flow_regime(re_v)
    q = float(flow_from_velocity_m3_s(v, d))
    out = {
        "lumen_diameter_mm": _n(d * 1e3, "mm", f"Diameter of the {lumen.name} used for the "
                                "flow (" + ("supplied" if d != lumen.diameter_m else
                                            "typical adult value") + ")."),
        "peak_flow_l_min": _n(l_min_from_m3_s(q), "L/min",
                              "Peak volume flow through that lumen (normal peak scaled by "
                              f"cardiac output {basis.cardiac_output_l_min:.3g} L/min against "
                              f"{config.cardiac_output_l_min:g})."),
        "peak_velocity_m_s": _n(v, "m/s", "Peak mean velocity there, by continuity (v = Q/A)."),
        "reynolds_number_peak": _n(re_v, "", f"rho v D / mu at peak flow: {regime} by the "
                                   f"steady-pipe range {TRANSITION_RE_LOW:,.0f}-"
                                   f"{TRANSITION_RE_HIGH:,.0f}; pulsatile arterial flow "
                                   "tolerates more before it breaks down."),
        "reynolds_number_normal": _n(lv.reynolds_normal, "", "The same at rest with normal "
                                     "blood and lumen; the murmur needs something that "
                                     "raises Re above this or makes flow break down sooner."),
        "reynolds_ratio": _n(lv.reynolds_peak / lv.reynolds_normal, "",
                             "Peak Re relative to normal = flow factor x viscosity factor x "
                             "diameter factor."),
    }
    if basis.heart_rate_bpm is not None:
        alpha = float(womersley_number(diameter_m=d, frequency_hz=basis.heart_rate_bpm / 60.0,
                                       viscosity_pa_s=mu))
        out["womersley_number"] = _n(alpha, "", "(D/2) sqrt(2 pi f rho / mu) at the heart rate: "
                                     "well above 1, so each beat is inertia-dominated and "
                                     "the steady-pipe threshold is only a guide."
                                     if alpha > 3 else "(D/2) sqrt(2 pi f rho / mu): "
                                     "near-quasi-steady flow.")
    f_flow = float(strouhal_frequency_hz(velocity_m_s=v, diameter_m=d,
                                         strouhal=config.strouhal))
    out["flow_noise_frequency_hz"] = _n(
        f_flow, "Hz", f"Where turbulent noise from this flow would fall off in pitch "
        f"(Strouhal, f = St v / D with St = {config.strouhal:g})"
        + ("" if dominant_frequency_hz is None else
           f"; the murmur's dominant frequency is {dominant_frequency_hz:.0f} Hz") + ".")
    return out


def flow_noise_ceiling_hz(basis: Basis, phase: str, config: ExplainConfig) -> float:
    """Highest noise frequency flow through a normal-sized lumen can plausibly make.

    The lumen keeps its normal diameter (a supplied diameter is ignored here); the peak
    velocity is raised by ``high_flow_velocity_factor`` (a high-output state) unless a
    cardiac output was supplied; Strouhal scaling then gives the frequency.
    """
    lumen = lumen_for(basis.site, phase)
    d = lumen.diameter_m
    v = peak_velocity_m_s(basis, lumen, d, config)
    if basis.cardiac_output_source == "default":
        v *= config.high_flow_velocity_factor
    return float(strouhal_frequency_hz(velocity_m_s=v, diameter_m=d, strouhal=config.strouhal))


def viscosity_numbers(basis: Basis, phase: str, config: ExplainConfig) -> dict[str, dict]:
    """Viscosity at the patient's hematocrit against normal, and its effect on Re."""
    lv = levers(basis, phase, config)
    mu = basis.viscosity_pa_s
    mu_n = float(blood_viscosity_pa_s(NORMAL_HEMATOCRIT))
    src = "supplied" if basis.hematocrit_source == "context" else "assumed"
    return {
        "hematocrit": _n(basis.hematocrit, "", f"Red-cell volume fraction ({src})."),
        "viscosity_mpa_s": _n(mu * 1e3, "mPa s", "Whole-blood viscosity in a large vessel at "
                              "this hematocrit (high-shear limit, Pries et al. 1992)."),
        "normal_viscosity_mpa_s": _n(mu_n * 1e3, "mPa s", f"The same at a normal hematocrit "
                                     f"of {NORMAL_HEMATOCRIT:g}."),
        "viscosity_factor": _n(lv.viscosity_factor, "", "How much thinner blood raises Re "
                               "(normal viscosity / this viscosity); above 1 means thinner "
                               "blood, less damping of disturbances."),
        "reynolds_number_peak": _n(lv.reynolds_peak, "", "Peak Re in the reference lumen "
                                   "with this viscosity, flow and lumen."),
        "reynolds_number_normal": _n(lv.reynolds_normal, "", "Peak Re at normal hematocrit, "
                                     "flow and lumen."),
    }


def default_orifice(basis: Basis, pattern: str, phase: str) -> tuple[float, str]:
    """The orifice diameter for the jet numbers, and where it came from."""
    if basis.diameter_m is not None:
        return basis.diameter_m, "supplied diameter"
    if basis.site in VESSEL_SITES:
        lumen = lumen_for(basis.site, phase)
        return 0.5 * lumen.diameter_m, f"assumed: 50 % narrowing of a {lumen.name}"
    names = {"outflow": "assumed: outflow valve area about 1.1 cm2",
             "leak": "assumed: leak orifice area about 0.2 cm2",
             "inflow": "assumed: inflow valve area about 1.5 cm2",
             "shunt": "assumed: shunt channel about 4 mm"}
    return DEFAULT_ORIFICES_M[pattern], names[pattern]


def _regime_words(re: float) -> str:
    regime = flow_regime(re)
    if regime == "turbulent":
        return (f"{re / TRANSITION_RE_HIGH:.1f} times the top of the steady-pipe transition "
                "range")
    if regime == "transitional":
        return "inside the steady-pipe transition range"
    return "below the steady-pipe transition range, so such a jet alone would hardly be heard"


def _jet(v: float, orifice_m: float, how: str, basis: Basis,
         config: ExplainConfig) -> dict[str, dict]:
    dp = float(bernoulli_pressure_drop_mmhg(v))
    re = float(reynolds_number(velocity_m_s=v, diameter_m=orifice_m,
                               viscosity_pa_s=basis.viscosity_pa_s))
    f_b = float(strouhal_frequency_hz(velocity_m_s=v, diameter_m=orifice_m,
                                      strouhal=config.strouhal))
    return {
        "jet_velocity_m_s": _n(v, "m/s", f"Peak jet velocity ({how})."),
        "pressure_drop_mmhg": _n(dp, "mmHg", "Pressure difference across the orifice by "
                                 "simplified Bernoulli (4 v^2): a peak instantaneous gradient."),
        "jet_reynolds_number": _n(re, "", f"rho v d / mu in the jet: {_regime_words(re)}."),
        "break_frequency_hz": _n(f_b, "Hz", "Where the jet's turbulent noise falls off in pitch "
                                 f"(Strouhal, St v / d with St = {config.strouhal:g}); chest "
                                 "wall and stethoscope pass little above a few hundred Hz, so "
                                 "the heard pitch is often lower."),
    }


def continuity_jet_numbers(orifice_m: float, orifice_note: str, basis: Basis, phase: str,
                           config: ExplainConfig) -> dict[str, dict]:
    """A narrowing the whole flow must pass: jet velocity by continuity, then Bernoulli."""
    lumen = lumen_for(basis.site, phase)
    q = float(flow_from_velocity_m3_s(peak_velocity_m_s(basis, lumen, lumen.diameter_m, config),
                                      lumen.diameter_m))
    v = float(velocity_from_flow_m_s(q, orifice_m))
    return {
        "orifice_diameter_mm": _n(orifice_m * 1e3, "mm", f"Orifice ({orifice_note})."),
        "peak_flow_l_min": _n(l_min_from_m3_s(q), "L/min", f"Peak flow of the {lumen.name}, "
                              "all of which passes the narrowing."),
        **_jet(v, orifice_m, "continuity: the peak flow through the orifice area, v = Q/A",
               basis, config),
    }


def driving_numbers(kind: str, orifice_m: float, orifice_note: str, basis: Basis,
                    config: ExplainConfig) -> dict[str, dict]:
    """A jet driven by a typical pressure difference: velocity by Bernoulli, then Re, pitch.

    ``kind`` is a key of :data:`~eddyphone.explain.config.DRIVING_PRESSURE_MMHG`. The
    velocity inverts the simplified Bernoulli rule (dP = 4 v^2, its constant from
    :mod:`eddyphone.physics`).
    """
    dp = DRIVING_PRESSURE_MMHG[kind]
    v = math.sqrt(dp / SIMPLIFIED_BERNOULLI_MMHG_S2_M2)
    where = {"leak_systolic": "ventricle to atrium in systole",
             "leak_diastolic": "aorta to ventricle in early diastole",
             "inflow": "atrium to ventricle across a narrowed valve",
             "shunt": "aorta to pulmonary artery"}[kind]
    return {
        "orifice_diameter_mm": _n(orifice_m * 1e3, "mm", f"Orifice ({orifice_note})."),
        "driving_pressure_mmhg": _n(dp, "mmHg", f"Typical pressure difference from {where} "
                                    "(common practice)."),
        **_jet(v, orifice_m, "simplified Bernoulli inverted: v = sqrt(dP / 4)", basis, config),
    }


def pitch_numbers(dominant_frequency_hz: float, orifice_m: float,
                  config: ExplainConfig) -> dict[str, dict]:
    """The least jet velocity the heard pitch needs through the orifice (Strouhal)."""
    v = float(strouhal_velocity_m_s(frequency_hz=dominant_frequency_hz, diameter_m=orifice_m,
                                    strouhal=config.strouhal))
    return {
        "dominant_frequency_hz": _n(dominant_frequency_hz, "Hz", "Dominant frequency of the "
                                    "murmur."),
        "pitch_velocity_m_s": _n(v, "m/s", f"Least jet velocity whose noise reaches "
                                 f"{dominant_frequency_hz:.0f} Hz through the orifice (v = f d "
                                 f"/ St); the dominant frequency lies at or below the break "
                                 "frequency, so the jet is at least this fast."),
        "pitch_pressure_drop_mmhg": _n(float(bernoulli_pressure_drop_mmhg(v)), "mmHg",
                                       "The pressure difference that least velocity needs "
                                       "(simplified Bernoulli)."),
    }


def fmt(value: float) -> str:
    """Format a number for prose: thousands separated, three significant digits below 100."""
    return _fmt(value)
