"""Turn whatever flow quantities are known into explained numbers.

Public function: :func:`describe_flow`, shared by the explainer and ``eddyphone flow``.
"""

from __future__ import annotations

import math
from typing import Any

from eddyphone.errors import ParameterError
from eddyphone.physics._checks import in_range, non_negative, positive
from eddyphone.physics.blood import (
    BLOOD_DENSITY_KG_M3,
    HEMATOCRIT_MAX,
    HEMATOCRIT_MIN,
    NORMAL_HEMATOCRIT,
    PLASMA_VISCOSITY_PA_S,
)
from eddyphone.physics.flow import (
    TRANSITION_RE_HIGH,
    TRANSITION_RE_LOW,
    area_m2,
    flow_from_velocity_m3_s,
    flow_regime,
    poiseuille_pressure_drop_pa,
    poiseuille_resistance_pa_s_m3,
    reynolds_number,
    velocity_from_flow_m_s,
    womersley_number,
)
from eddyphone.physics.jet import (
    STROUHAL_NUMBER,
    bernoulli_pressure_drop_mmhg,
    strouhal_diameter_m,
    strouhal_frequency_hz,
    strouhal_velocity_m_s,
)
from eddyphone.physics.units import PA_PER_MMHG, l_min_from_m3_s
from eddyphone.physics.viscosity import (
    FAHRAEUS_LINDQVIST_DIAMETER_M,
    blood_viscosity_pa_s,
)

SCHEMA = "eddyphone.flow/1"

_UNITS = {
    "velocity_m_s": "m/s",
    "flow_m3_s": "m3/s",
    "diameter_m": "m",
    "viscosity_pa_s": "Pa s",
    "plasma_viscosity_pa_s": "Pa s",
    "density_kg_m3": "kg/m3",
    "jet_velocity_m_s": "m/s",
    "orifice_diameter_m": "m",
    "frequency_hz": "Hz",
    "heart_rate_hz": "Hz",
    "length_m": "m",
    "strouhal": "",
}

_STEIN_SABBAH = (
    "normal human ascending aortas reach peak Reynolds numbers of about 5,700-8,900 "
    "(Stein & Sabbah 1976), so a value like this alone does not mean disease"
)


def _fmt(value: float, unit: str = "") -> str:
    text = f"{value:,.0f}" if abs(value) >= 100 else f"{value:.3g}"
    return f"{text} {unit}".strip()


class _Builder:
    def __init__(self) -> None:
        self.values: dict[str, Any] = {}
        self.units: dict[str, str] = {}
        self.labels: dict[str, str] = {}
        self.meanings: dict[str, str] = {}

    def add(self, key: str, value: Any, unit: str, label: str, meaning: str) -> None:
        self.values[key] = value
        self.units[key] = unit
        self.labels[key] = label
        self.meanings[key] = meaning


def _regime_meaning(re: float, regime: str) -> str:
    if regime == "laminar":
        return (
            f"Below the steady-pipe transition range ({TRANSITION_RE_LOW:,.0f}-"
            f"{TRANSITION_RE_HIGH:,.0f}): viscosity damps disturbances, so this flow is "
            "expected to stay laminar and make no turbulent noise."
        )
    if regime == "transitional":
        return (
            "Inside the transition range: flow may alternate between laminar and turbulent "
            "patches, so a little more flow or a little narrowing could make it audible."
        )
    return (
        f"Above the transition range (Re is {re / TRANSITION_RE_HIGH:.1f} times "
        f"{TRANSITION_RE_HIGH:,.0f}): steady flow like this would be turbulent and "
        "turbulence is what makes flow audible, but pulsatile arterial flow tolerates more "
        f"before it breaks down; for comparison, {_STEIN_SABBAH}."
    )


def describe_flow(
    *,
    velocity_m_s: float | None = None,
    flow_m3_s: float | None = None,
    diameter_m: float | None = None,
    viscosity_pa_s: float | None = None,
    hematocrit: float | None = None,
    plasma_viscosity_pa_s: float = PLASMA_VISCOSITY_PA_S,
    density_kg_m3: float | None = None,
    jet_velocity_m_s: float | None = None,
    proximal_velocity_m_s: float | None = None,
    orifice_diameter_m: float | None = None,
    frequency_hz: float | None = None,
    heart_rate_hz: float | None = None,
    length_m: float | None = None,
    strouhal: float = STROUHAL_NUMBER,
) -> dict[str, Any]:
    """Compute every quantity the given inputs allow, each with a one-sentence meaning.

    Any subset of the inputs may be given (SI units). Continuity fills in the third of
    velocity, flow and diameter; viscosity comes from ``viscosity_pa_s`` or from
    ``hematocrit`` (Pries 1992, diameter-dependent below 300 um) or, when needed and
    neither is given, from a normal hematocrit of 0.45 (stated in ``assumptions``).
    A jet (``jet_velocity_m_s``) gives the Bernoulli pressure drop; a noise
    ``frequency_hz`` with a velocity or a diameter gives the other by Strouhal scaling.

    Returns
    -------
    dict
        JSON-ready: ``schema``, ``inputs`` (as given, SI), every computed quantity as a
        top-level key whose name carries its unit (e.g. ``reynolds_number``,
        ``viscosity_mpa_s``, ``pressure_drop_mmhg``), ``units``, ``labels``,
        ``meanings`` (one sentence per quantity), ``assumptions`` and ``cautions``.

    Raises
    ------
    ParameterError
        On invalid values, on both ``viscosity_pa_s`` and ``hematocrit``, or on all
        three of velocity, flow and diameter.

    Examples
    --------
    >>> d = describe_flow(velocity_m_s=1.2, diameter_m=0.025, viscosity_pa_s=3.5e-3)
    >>> round(d["reynolds_number"]), d["flow_regime"]
    (9086, 'turbulent')
    """
    given = {
        "velocity_m_s": velocity_m_s,
        "flow_m3_s": flow_m3_s,
        "diameter_m": diameter_m,
        "viscosity_pa_s": viscosity_pa_s,
        "hematocrit": hematocrit,
        "plasma_viscosity_pa_s": plasma_viscosity_pa_s,
        "density_kg_m3": density_kg_m3,
        "jet_velocity_m_s": jet_velocity_m_s,
        "proximal_velocity_m_s": proximal_velocity_m_s,
        "orifice_diameter_m": orifice_diameter_m,
        "frequency_hz": frequency_hz,
        "heart_rate_hz": heart_rate_hz,
        "length_m": length_m,
        "strouhal": strouhal,
    }
    inputs = {k: v for k, v in given.items() if v is not None}
    for name, value in inputs.items():
        if name == "hematocrit":
            in_range(name, value, HEMATOCRIT_MIN, HEMATOCRIT_MAX)
        elif name == "proximal_velocity_m_s":
            non_negative(name, value, "m/s")
        else:
            positive(name, value, _UNITS[name])
    b = _Builder()
    assumptions: list[str] = []
    cautions: list[str] = []

    if viscosity_pa_s is not None and hematocrit is not None:
        raise ParameterError(
            "both viscosity_pa_s and hematocrit were given; give one of them "
            "(hematocrit is turned into a viscosity)"
        )
    if velocity_m_s is not None and flow_m3_s is not None and diameter_m is not None:
        raise ParameterError(
            "velocity, flow and diameter were all given; give two of them and the third "
            "follows from continuity (Q = v A)"
        )

    rho = BLOOD_DENSITY_KG_M3 if density_kg_m3 is None else density_kg_m3

    # Continuity: the third of velocity, flow and diameter.
    v, q, d = velocity_m_s, flow_m3_s, diameter_m
    if q is not None and d is not None:
        v = velocity_from_flow_m_s(q, d)
        b.add("velocity_m_s", v, "m/s", "mean velocity",
              "Flow divided by lumen area (continuity, v = Q/A): the cross-sectional mean "
              "velocity that sets the Reynolds number.")
    elif v is not None and q is None and d is not None:
        q = flow_from_velocity_m3_s(v, d)
        b.add("flow_l_min", l_min_from_m3_s(q), "L/min", "volume flow",
              "Velocity times lumen area (continuity, Q = v A).")
    elif v is not None and q is not None and d is None:
        d = math.sqrt(4.0 * q / (math.pi * v))
        b.add("diameter_mm", d * 1e3, "mm", "lumen diameter",
              "The diameter that carries this flow at this mean velocity (continuity).")
    if d is not None:
        b.add("area_cm2", area_m2(d) * 1e4, "cm2", "lumen area", "Cross-sectional area, pi d^2/4.")

    # Viscosity: from the input, from hematocrit, or (only when needed) a normal hematocrit.
    mu_cache: list[float] = []

    def viscosity() -> float:
        if mu_cache:
            return mu_cache[0]
        mu = viscosity_pa_s
        if mu is None:
            h = NORMAL_HEMATOCRIT if hematocrit is None else hematocrit
            if hematocrit is None:
                assumptions.append(
                    f"No viscosity or hematocrit given: assumed a normal hematocrit of {h:g} "
                    "(whole-blood viscosity from Pries et al. 1992)."
                )
            mu = blood_viscosity_pa_s(
                h, diameter_m=d, plasma_viscosity_pa_s=plasma_viscosity_pa_s
            )
            bulk = blood_viscosity_pa_s(h, plasma_viscosity_pa_s=plasma_viscosity_pa_s)
            rel = mu / plasma_viscosity_pa_s
            if d is None or d >= 2e-3:
                size = "" if d is None else f" ({d * 1e3:g} mm)"
                where = f"in a large vessel{size} (Pries et al. 1992, large-tube limit)."
            else:
                where = f"in a {d * 1e6:,.0f} um tube (Pries, Neuhaus & Gaehtgens 1992 fit)."
            b.add("relative_viscosity", rel, "", "viscosity relative to plasma",
                  f"Blood at hematocrit {h:g} is {rel:.2f} times as viscous as its plasma "
                  + where)
            if d is not None and d < FAHRAEUS_LINDQVIST_DIAMETER_M:
                drop = 100.0 * (1.0 - mu / bulk)
                b.add("bulk_viscosity_mpa_s", bulk * 1e3, "mPa s",
                      "viscosity in a large vessel",
                      f"The same blood in a large vessel; in this narrow tube it is "
                      f"{drop:.0f} % less viscous because red cells crowd the axis and leave "
                      "a plasma layer at the wall (Fahraeus-Lindqvist effect).")
        b.add("viscosity_mpa_s", mu * 1e3, "mPa s", "blood viscosity",
              "Dynamic viscosity (high-shear limit): the higher it is, the more strongly "
              "viscous friction damps disturbances, keeping flow laminar.")
        mu_cache.append(mu)
        return mu

    if hematocrit is not None or viscosity_pa_s is not None:
        viscosity()

    # Reynolds number and regime in the vessel.
    if v is not None and d is not None:
        mu = viscosity()
        re = reynolds_number(velocity_m_s=v, diameter_m=d, viscosity_pa_s=mu, density_kg_m3=rho)
        regime = flow_regime(re)
        b.add("reynolds_number", re, "", "Reynolds number",
              "rho v D / mu, inertial over viscous forces; steady pipe flow turns turbulent "
              f"somewhere between {TRANSITION_RE_LOW:,.0f} and {TRANSITION_RE_HIGH:,.0f}.")
        b.add("flow_regime", regime, "", "flow regime (steady-pipe criterion)",
              _regime_meaning(re, regime))
        v_crit = TRANSITION_RE_LOW * mu / (rho * d)
        q_crit = flow_from_velocity_m3_s(v_crit, d)
        b.add("transition_velocity_m_s", v_crit, "m/s", "velocity at Re 2,000",
              f"Mean velocity at which this lumen reaches Re {TRANSITION_RE_LOW:,.0f} "
              f"({_fmt(l_min_from_m3_s(q_crit), 'L/min')}); faster flow, a narrower lumen "
              "or thinner blood moves it towards turbulence.")
        cautions.append(
            "The regime uses the steady-pipe transition range; arterial flow is pulsatile, "
            "so read it as a tendency, not a certainty."
        )
        if velocity_m_s is None and flow_m3_s is not None:
            cautions.append(
                "A time-averaged flow (such as cardiac output) gives a mean Reynolds number; "
                "peak systolic flow in the aorta is several times higher."
            )
    else:
        regime = None

    # Pulsatility.
    if heart_rate_hz is not None and d is not None:
        alpha = womersley_number(
            diameter_m=d, frequency_hz=heart_rate_hz, viscosity_pa_s=viscosity(), density_kg_m3=rho
        )
        b.add("womersley_number", alpha, "", "Womersley number",
              "(D/2) sqrt(2 pi f rho / mu): "
              + ("well above 1, so inertia dominates each beat, the velocity profile is "
                 "blunt and the steady-pipe threshold is only a rough guide."
                 if alpha > 3 else
                 "near or below a few, so each beat is close to a quasi-steady "
                 "(Poiseuille-like) flow."))

    # Poiseuille.
    if length_m is not None and d is not None:
        mu = viscosity()
        r = poiseuille_resistance_pa_s_m3(length_m=length_m, diameter_m=d, viscosity_pa_s=mu)
        b.add("poiseuille_resistance_mmhg_min_l", r / PA_PER_MMHG * 1e-3 / 60.0,
              "mmHg min/L", "Poiseuille resistance",
              "128 mu L / (pi D^4): the pressure needed per unit flow in laminar flow; it "
              "rises with the fourth power of narrowing.")
        if q is not None:
            dp = poiseuille_pressure_drop_pa(
                flow_m3_s=q, length_m=length_m, diameter_m=d, viscosity_pa_s=mu
            )
            b.add("poiseuille_pressure_drop_mmhg", dp / PA_PER_MMHG, "mmHg",
                  "viscous pressure drop", "Pressure lost to viscous friction along this "
                  "length if the flow is laminar (Poiseuille).")
        if regime in ("transitional", "turbulent"):
            cautions.append(
                "Poiseuille's law assumes laminar flow; with this Reynolds number the real "
                "pressure loss is larger."
            )

    # Jet: Bernoulli.
    if jet_velocity_m_s is not None:
        v1 = 0.0 if proximal_velocity_m_s is None else proximal_velocity_m_s
        dp4 = bernoulli_pressure_drop_mmhg(jet_velocity_m_s, proximal_velocity_m_s=v1)
        dpf = bernoulli_pressure_drop_mmhg(
            jet_velocity_m_s, proximal_velocity_m_s=v1, density_kg_m3=rho
        )
        rule = "4 (v2^2 - v1^2)" if v1 else "4 v^2"
        b.add("pressure_drop_mmhg", dp4, "mmHg", "pressure drop across the jet",
              f"Simplified Bernoulli, {rule} with v in m/s: the pressure difference that "
              "drives blood to this jet velocity (a peak instantaneous gradient).")
        b.add("pressure_drop_full_mmhg", dpf, "mmHg", "pressure drop, full Bernoulli",
              f"1/2 rho (v2^2 - v1^2) with rho = {rho:g} kg/m3; the 4 v^2 rule rounds its "
              "coefficient 3.98 up to 4.")
        if proximal_velocity_m_s is None:
            assumptions.append("Velocity upstream of the jet neglected (v1 = 0).")

    # Strouhal scaling between noise frequency, jet velocity and orifice size.
    v_s = jet_velocity_m_s if jet_velocity_m_s is not None else v
    # With a jet velocity the vessel diameter is not the orifice; only an orifice counts.
    if orifice_diameter_m is not None:
        d_s = orifice_diameter_m
    elif jet_velocity_m_s is None:
        d_s = d
    else:
        d_s = None
    st_note = (
        f"Strouhal scaling f = St v / d with St = {strouhal:g} (break frequency of "
        "turbulent bruits, Lees & Dewey 1970)"
    )
    jet_pair: tuple[float, float] | None = None
    if frequency_hz is not None:
        if v_s is not None and d_s is None:
            d_est = strouhal_diameter_m(frequency_hz=frequency_hz, velocity_m_s=v_s,
                                        strouhal=strouhal)
            b.add("orifice_diameter_mm", d_est * 1e3, "mm", "orifice diameter (estimate)",
                  f"Size of the jet that would make turbulent noise near {frequency_hz:g} Hz "
                  f"at {v_s:g} m/s; a smaller orifice at the same speed sounds higher.")
            b.add("orifice_area_cm2", area_m2(d_est) * 1e4, "cm2", "orifice area (estimate)",
                  "Area of a circular orifice of that diameter.")
            assumptions.append(
                f"{st_note}; the frequency is taken as the murmur's dominant turbulent-noise "
                "frequency, the velocity as the jet velocity, and the orifice as circular."
            )
            jet_pair = (v_s, d_est)
        elif d_s is not None and v_s is None:
            v_est = strouhal_velocity_m_s(frequency_hz=frequency_hz, diameter_m=d_s,
                                          strouhal=strouhal)
            b.add("jet_velocity_m_s", v_est, "m/s", "jet velocity (estimate)",
                  f"Jet speed through a {d_s * 1e3:g} mm orifice that would make turbulent "
                  f"noise near {frequency_hz:g} Hz.")
            b.add("pressure_drop_mmhg", bernoulli_pressure_drop_mmhg(v_est), "mmHg",
                  "pressure drop (estimate)",
                  "Simplified Bernoulli (4 v^2) applied to the estimated jet velocity.")
            assumptions.append(
                f"{st_note}; the frequency is taken as the murmur's dominant turbulent-noise "
                "frequency and the diameter as the orifice (jet) diameter."
            )
            jet_pair = (v_est, d_s)
        elif d_s is not None and v_s is not None:
            st = frequency_hz * d_s / v_s
            b.add("strouhal_number", st, "", "implied Strouhal number",
                  f"f d / v for these values; near {strouhal:g} means the frequency fits "
                  "turbulent noise from a jet of this speed and size.")
            jet_pair = (v_s, d_s)
        else:
            raise ParameterError(
                "frequency_hz needs a velocity or a diameter to scale against; add "
                "--velocity-m-s (jet velocity) or --diameter-mm (orifice size)"
            )
    elif v_s is not None and d_s is not None and (
        jet_velocity_m_s is not None or regime in ("transitional", "turbulent")
    ):
        f_est = strouhal_frequency_hz(velocity_m_s=v_s, diameter_m=d_s, strouhal=strouhal)
        b.add("noise_frequency_hz", f_est, "Hz", "turbulent-noise frequency",
              "Where turbulent noise from this flow would fall off in pitch (St v / d): a "
              "faster jet or a smaller orifice sounds higher.")
        assumptions.append(f"{st_note}.")
        jet_pair = (v_s, d_s)
    if (
        jet_pair is not None
        and (jet_velocity_m_s is not None or frequency_hz is not None)
        and jet_pair != (v, d)
    ):
        re_j = reynolds_number(velocity_m_s=jet_pair[0], diameter_m=jet_pair[1],
                               viscosity_pa_s=viscosity(), density_kg_m3=rho)
        b.add("jet_reynolds_number", re_j, "", "jet Reynolds number",
              f"rho v d / mu at the orifice: {flow_regime(re_j)} by the steady-pipe "
              "criterion; a jet must be well above the transition range to make noise.")

    uses_rho = {"reynolds_number", "jet_reynolds_number", "womersley_number",
                "pressure_drop_full_mmhg"}
    if density_kg_m3 is None and uses_rho & b.values.keys():
        assumptions.append(f"Blood density {BLOOD_DENSITY_KG_M3:g} kg/m3 (typical adult).")

    return {
        "schema": SCHEMA,
        "inputs": inputs,
        **b.values,
        "units": b.units,
        "labels": b.labels,
        "meanings": b.meanings,
        "assumptions": assumptions,
        "cautions": cautions,
    }
