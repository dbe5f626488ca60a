"""Pipe-flow relations: continuity, Reynolds and Womersley numbers, Poiseuille's law.

Public functions: :func:`area_m2`, :func:`velocity_from_flow_m_s`,
:func:`flow_from_velocity_m3_s`, :func:`reynolds_number`,
:func:`reynolds_number_from_flow`, :func:`flow_regime`, :func:`womersley_number`,
:func:`poiseuille_resistance_pa_s_m3`, :func:`poiseuille_pressure_drop_pa`.

All inputs and outputs are SI. Velocities are cross-sectional mean velocities unless
stated otherwise.
"""

from __future__ import annotations

import numpy as np

from eddyphone.errors import ParameterError
from eddyphone.physics._checks import non_negative, out, positive
from eddyphone.physics.blood import BLOOD_DENSITY_KG_M3

#: Lower end of the laminar-turbulent transition range for steady flow in a straight,
#: smooth pipe. Below about 2000 disturbances decay (common practice); sustained
#: turbulence first appears near Re 2040 (Avila et al. 2011, Science 333:192, from memory).
TRANSITION_RE_LOW = 2000.0

#: Upper end of the transition range: the usual handbook critical Reynolds number 2300
#: (common practice). Above it steady pipe flow is expected to be turbulent given the
#: ordinary disturbances of real inlets.
TRANSITION_RE_HIGH = 2300.0


def area_m2(diameter_m: float | np.ndarray) -> float | np.ndarray:
    """Cross-sectional area of a circular lumen, pi d**2 / 4, in m2."""
    d = positive("diameter_m", diameter_m, "m")
    return out(np.pi * d**2 / 4.0)


def velocity_from_flow_m_s(
    flow_m3_s: float | np.ndarray, diameter_m: float | np.ndarray
) -> float | np.ndarray:
    """Mean velocity from volume flow by continuity, v = Q / A, in m/s."""
    q = non_negative("flow_m3_s", flow_m3_s, "m3/s")
    return out(q / area_m2(diameter_m))


def flow_from_velocity_m3_s(
    velocity_m_s: float | np.ndarray, diameter_m: float | np.ndarray
) -> float | np.ndarray:
    """Volume flow from mean velocity by continuity, Q = v A, in m3/s."""
    v = non_negative("velocity_m_s", velocity_m_s, "m/s")
    return out(v * area_m2(diameter_m))


def reynolds_number(
    *,
    velocity_m_s: float | np.ndarray,
    diameter_m: float | np.ndarray,
    viscosity_pa_s: float | np.ndarray,
    density_kg_m3: float | np.ndarray = BLOOD_DENSITY_KG_M3,
) -> float | np.ndarray:
    """Reynolds number of pipe flow, Re = rho v D / mu.

    Parameters
    ----------
    velocity_m_s : float or ndarray
        Mean velocity across the lumen, m/s (> 0).
    diameter_m : float or ndarray
        Lumen diameter, m (> 0).
    viscosity_pa_s : float or ndarray
        Dynamic viscosity, Pa s (> 0), e.g. from :func:`blood_viscosity_pa_s`.
    density_kg_m3 : float or ndarray
        Density, kg/m3 (default whole blood, 1060).

    Returns
    -------
    float or ndarray
        Re (dimensionless): the ratio of inertial to viscous forces.

    Examples
    --------
    >>> round(reynolds_number(velocity_m_s=1.2, diameter_m=0.025, viscosity_pa_s=3.5e-3))
    9086
    """
    v = positive("velocity_m_s", velocity_m_s, "m/s")
    d = positive("diameter_m", diameter_m, "m")
    mu = positive("viscosity_pa_s", viscosity_pa_s, "Pa s")
    rho = positive("density_kg_m3", density_kg_m3, "kg/m3")
    return out(rho * v * d / mu)


def reynolds_number_from_flow(
    *,
    flow_m3_s: float | np.ndarray,
    diameter_m: float | np.ndarray,
    viscosity_pa_s: float | np.ndarray,
    density_kg_m3: float | np.ndarray = BLOOD_DENSITY_KG_M3,
) -> float | np.ndarray:
    """Reynolds number from volume flow, Re = 4 rho Q / (pi D mu).

    At a fixed flow Re grows as the diameter narrows (Re is proportional to 1/D).

    Examples
    --------
    >>> round(reynolds_number_from_flow(flow_m3_s=5e-3 / 60, diameter_m=0.025,
    ...                                 viscosity_pa_s=3.5e-3))
    1285
    """
    q = positive("flow_m3_s", flow_m3_s, "m3/s")
    d = positive("diameter_m", diameter_m, "m")
    mu = positive("viscosity_pa_s", viscosity_pa_s, "Pa s")
    rho = positive("density_kg_m3", density_kg_m3, "kg/m3")
    return out(4.0 * rho * q / (np.pi * d * mu))


def flow_regime(reynolds: float) -> str:
    """Classify a Reynolds number against the steady-pipe transition range.

    Returns ``'laminar'`` below :data:`TRANSITION_RE_LOW` (2000), ``'transitional'`` up
    to :data:`TRANSITION_RE_HIGH` (2300) and ``'turbulent'`` above.

    Notes
    -----
    The range holds for steady flow in a long straight pipe. Arterial flow is pulsatile:
    flow that accelerates (early systole) stays laminar to higher peak Reynolds numbers,
    while decelerating flow and flow past bends, branches or a stenosis becomes disturbed
    at lower ones. The critical peak Reynolds number of pulsatile flow rises with the
    Womersley number (Nerem & Seed 1972, from memory), and normal human ascending aortas
    reach peak Re of about 5,700-8,900 (Stein & Sabbah 1976) with, in healthy valves,
    only mildly disturbed flow (from memory). Treat 'turbulent' as "turbulence likely
    somewhere in the cycle", not as proof.
    """
    re = non_negative("reynolds", reynolds, "")
    if re.ndim:
        raise ParameterError("reynolds must be a single number; call flow_regime per value")
    value = float(re)
    if value < TRANSITION_RE_LOW:
        return "laminar"
    if value <= TRANSITION_RE_HIGH:
        return "transitional"
    return "turbulent"


def womersley_number(
    *,
    diameter_m: float | np.ndarray,
    frequency_hz: float | np.ndarray,
    viscosity_pa_s: float | np.ndarray,
    density_kg_m3: float | np.ndarray = BLOOD_DENSITY_KG_M3,
) -> float | np.ndarray:
    """Womersley number alpha = (D/2) sqrt(2 pi f rho / mu).

    Parameters
    ----------
    diameter_m : float or ndarray
        Lumen diameter, m.
    frequency_hz : float or ndarray
        Pulsation frequency, Hz (the heart rate: 72 beats/min = 1.2 Hz).
    viscosity_pa_s, density_kg_m3 : float or ndarray
        Blood viscosity (Pa s) and density (kg/m3).

    Returns
    -------
    float or ndarray
        alpha: below about 1 the velocity profile follows the pressure gradient
        (quasi-steady, parabolic); well above 1 inertia dominates and the profile is
        blunt and lags the pressure (common practice).
    """
    d = positive("diameter_m", diameter_m, "m")
    f = positive("frequency_hz", frequency_hz, "Hz")
    mu = positive("viscosity_pa_s", viscosity_pa_s, "Pa s")
    rho = positive("density_kg_m3", density_kg_m3, "kg/m3")
    return out(0.5 * d * np.sqrt(2.0 * np.pi * f * rho / mu))


def poiseuille_resistance_pa_s_m3(
    *,
    length_m: float | np.ndarray,
    diameter_m: float | np.ndarray,
    viscosity_pa_s: float | np.ndarray,
) -> float | np.ndarray:
    """Hydraulic resistance of steady laminar flow in a tube, R = 128 mu L / (pi D**4).

    Equivalent to 8 mu L / (pi r**4). Valid for laminar, fully developed flow of a
    Newtonian fluid; returns Pa s / m3.
    """
    length = positive("length_m", length_m, "m")
    d = positive("diameter_m", diameter_m, "m")
    mu = positive("viscosity_pa_s", viscosity_pa_s, "Pa s")
    return out(128.0 * mu * length / (np.pi * d**4))


def poiseuille_pressure_drop_pa(
    *,
    flow_m3_s: float | np.ndarray,
    length_m: float | np.ndarray,
    diameter_m: float | np.ndarray,
    viscosity_pa_s: float | np.ndarray,
) -> float | np.ndarray:
    """Pressure drop of steady laminar tube flow, dP = Q R (Poiseuille), in Pa."""
    q = non_negative("flow_m3_s", flow_m3_s, "m3/s")
    r = poiseuille_resistance_pa_s_m3(
        length_m=length_m, diameter_m=diameter_m, viscosity_pa_s=viscosity_pa_s
    )
    return out(q * np.asarray(r))

