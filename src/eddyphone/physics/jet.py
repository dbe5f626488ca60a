"""Jets through narrowed orifices: Bernoulli pressure drop and Strouhal noise scaling.

Public functions: :func:`bernoulli_pressure_drop_mmhg`, :func:`strouhal_frequency_hz`,
:func:`strouhal_diameter_m`, :func:`strouhal_velocity_m_s`.
"""

from __future__ import annotations

import numpy as np

from eddyphone.errors import ParameterError
from eddyphone.physics._checks import non_negative, out, positive
from eddyphone.physics.units import PA_PER_MMHG

#: Coefficient of the simplified Bernoulli rule, mmHg per (m/s)**2 (common practice in
#: Doppler echocardiography). It rounds 1/2 rho / 133.32 = 3.975 at rho = 1060 kg/m3.
SIMPLIFIED_BERNOULLI_MMHG_S2_M2 = 4.0

#: Strouhal number linking the turbulent-noise frequency of a jet to its velocity and
#: orifice size, f = St v / d. The value 1.0 is the "break frequency" relation of
#: phonoangiography (Lees & Dewey 1970, PNAS 67:935; from memory): the spectrum of a
#: bruit downstream of a narrowing falls off above f_b ~ v / d. The better-known
#: St ~ 0.2 (von Karman vortex shedding behind a cylinder, common practice) describes a
#: discrete shedding tone, not the broadband murmur, and gives frequencies about five
#: times lower. Pass ``strouhal=`` to use another value.
STROUHAL_NUMBER = 1.0


def bernoulli_pressure_drop_mmhg(
    jet_velocity_m_s: float | np.ndarray,
    *,
    proximal_velocity_m_s: float | np.ndarray = 0.0,
    density_kg_m3: float | np.ndarray | None = None,
) -> float | np.ndarray:
    """Pressure drop across a narrowing from the jet velocity (Bernoulli), in mmHg.

    Parameters
    ----------
    jet_velocity_m_s : float or ndarray
        Peak velocity in the jet (vena contracta), m/s (> 0).
    proximal_velocity_m_s : float or ndarray
        Velocity upstream of the narrowing, m/s (default 0, i.e. neglected).
    density_kg_m3 : float or ndarray, optional
        ``None`` (default) uses the simplified clinical rule 4 (v2**2 - v1**2). With a
        density the full form 1/2 rho (v2**2 - v1**2), converted from Pa, is used.

    Returns
    -------
    float or ndarray
        Pressure drop in mmHg. Viscous losses and flow acceleration are neglected.

    Examples
    --------
    >>> bernoulli_pressure_drop_mmhg(4.0)
    64.0
    >>> round(bernoulli_pressure_drop_mmhg(4.0, density_kg_m3=1060.0), 1)
    63.6
    """
    v2 = positive("jet_velocity_m_s", jet_velocity_m_s, "m/s")
    v1 = non_negative("proximal_velocity_m_s", proximal_velocity_m_s, "m/s")
    if np.any(v1 > v2):
        raise ParameterError(
            f"proximal_velocity_m_s={float(np.max(v1)):g} m/s exceeds the jet velocity; "
            "the jet (downstream) velocity must be the larger one"
        )
    dv2 = v2**2 - v1**2
    if density_kg_m3 is None:
        return out(SIMPLIFIED_BERNOULLI_MMHG_S2_M2 * dv2)
    rho = positive("density_kg_m3", density_kg_m3, "kg/m3")
    return out(0.5 * rho * dv2 / PA_PER_MMHG)


def strouhal_frequency_hz(
    *,
    velocity_m_s: float | np.ndarray,
    diameter_m: float | np.ndarray,
    strouhal: float = STROUHAL_NUMBER,
) -> float | np.ndarray:
    """Characteristic turbulent-noise frequency of a jet, f = St v / d, in Hz.

    A faster jet or a smaller orifice gives a higher-pitched murmur.

    Examples
    --------
    >>> strouhal_frequency_hz(velocity_m_s=3.0, diameter_m=0.015)
    200.0
    """
    v = positive("velocity_m_s", velocity_m_s, "m/s")
    d = positive("diameter_m", diameter_m, "m")
    st = positive("strouhal", strouhal, "")
    return out(st * v / d)


def strouhal_diameter_m(
    *,
    frequency_hz: float | np.ndarray,
    velocity_m_s: float | np.ndarray,
    strouhal: float = STROUHAL_NUMBER,
) -> float | np.ndarray:
    """Orifice (jet) diameter implied by a noise frequency and jet velocity, d = St v / f."""
    f = positive("frequency_hz", frequency_hz, "Hz")
    v = positive("velocity_m_s", velocity_m_s, "m/s")
    st = positive("strouhal", strouhal, "")
    return out(st * v / f)


def strouhal_velocity_m_s(
    *,
    frequency_hz: float | np.ndarray,
    diameter_m: float | np.ndarray,
    strouhal: float = STROUHAL_NUMBER,
) -> float | np.ndarray:
    """Jet velocity implied by a noise frequency and orifice diameter, v = f d / St."""
    f = positive("frequency_hz", frequency_hz, "Hz")
    d = positive("diameter_m", diameter_m, "m")
    st = positive("strouhal", strouhal, "")
    return out(f * d / st)
