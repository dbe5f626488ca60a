"""Whole-blood viscosity as a function of hematocrit and tube diameter.

Public functions: :func:`relative_viscosity_pries`, :func:`blood_viscosity_pa_s`.

The model is the in-vitro fit of Pries, Neuhaus and Gaehtgens (1992), "Blood viscosity
in tube flow: dependence on diameter and hematocrit", Am J Physiol 263:H1770-H1778.
It gives the viscosity of blood relative to its plasma at high shear rates, as a
function of tube diameter D (in micrometres in the published formula) and discharge
hematocrit H:

    eta_0.45(D) = 220 exp(-1.3 D) + 3.2 - 2.44 exp(-0.06 D**0.645)
    C(D)        = (0.8 + exp(-0.075 D)) (-1 + 1 / (1 + 1e-11 D**12)) + 1 / (1 + 1e-11 D**12)
    eta_rel     = 1 + (eta_0.45 - 1) ((1 - H)**C - 1) / ((1 - 0.45)**C - 1)

For large tubes eta_0.45 tends to 3.2 and C to -0.8, which is the bulk (large-vessel)
viscosity used when no diameter is given. Below about 300 um the relative viscosity
falls with diameter (the Fahraeus-Lindqvist effect) to a minimum near 7 um and rises
again in the narrowest tubes.
"""

from __future__ import annotations

import numpy as np

from eddyphone.errors import ParameterError
from eddyphone.physics._checks import in_range, out, positive
from eddyphone.physics.blood import HEMATOCRIT_MAX, HEMATOCRIT_MIN, PLASMA_VISCOSITY_PA_S

#: Smallest tube diameter accepted by the Pries fit, m. The in-vitro data behind the fit
#: span tube diameters of about 3.3-1978 um (from memory); red cells cannot pass tubes
#: much narrower than about 3 um, so the fit is refused below this.
PRIES_MIN_DIAMETER_M = 3e-6

#: Largest tube diameter in the data behind the fit, m (about 2 mm, from memory). Above
#: it the formula is already within 0.5 % of its large-tube limit and is used as is.
PRIES_MAX_FITTED_DIAMETER_M = 1.978e-3

#: Tube diameter below which the Fahraeus-Lindqvist effect matters, m (common practice).
FAHRAEUS_LINDQVIST_DIAMETER_M = 300e-6

_REFERENCE_HEMATOCRIT = 0.45


def _hematocrit_shape(d_um: np.ndarray, hematocrit: np.ndarray) -> np.ndarray:
    """Pries' hematocrit factor ((1-H)**C - 1) / ((1-0.45)**C - 1)."""
    s = 1.0 / (1.0 + 1e-11 * d_um**12)
    c = (0.8 + np.exp(-0.075 * d_um)) * (-1.0 + s) + s
    a = np.log1p(-hematocrit)
    b = np.log1p(-_REFERENCE_HEMATOCRIT)
    small = np.abs(c) < 1e-9
    c_safe = np.where(small, 1.0, c)
    ratio = np.expm1(c_safe * a) / np.expm1(c_safe * b)
    # As C -> 0 the ratio tends to ln(1-H) / ln(1-0.45).
    return np.where(small, a / b, ratio)


def _relative(d_um: np.ndarray, hematocrit: np.ndarray) -> np.ndarray:
    eta_045 = 220.0 * np.exp(-1.3 * d_um) + 3.2 - 2.44 * np.exp(-0.06 * d_um**0.645)
    return 1.0 + (eta_045 - 1.0) * _hematocrit_shape(d_um, hematocrit)


def relative_viscosity_pries(
    diameter_m: float | np.ndarray, hematocrit: float | np.ndarray
) -> float | np.ndarray:
    """Viscosity of blood relative to plasma in a tube (Pries, Neuhaus & Gaehtgens 1992).

    Parameters
    ----------
    diameter_m : float or ndarray
        Tube (vessel) inner diameter in metres, at least 3 um. The fit was made to
        in-vitro data for tubes of about 3.3-1978 um; larger tubes get the large-tube
        limit (3.2 at hematocrit 0.45).
    hematocrit : float or ndarray
        Discharge hematocrit as a volume fraction, 0-0.8.

    Returns
    -------
    float or ndarray
        Relative apparent viscosity (dimensionless, 1 for plasma), high-shear limit.

    Examples
    --------
    >>> round(relative_viscosity_pries(100e-6, 0.45), 3)
    2.443
    """
    h = in_range("hematocrit", hematocrit, HEMATOCRIT_MIN, HEMATOCRIT_MAX)
    d = positive("diameter_m", diameter_m, "m")
    if np.any(d < PRIES_MIN_DIAMETER_M):
        bad = float(np.min(d))
        raise ParameterError(
            f"diameter_m={bad:g} m ({bad * 1e6:.3g} um) is below the "
            f"{PRIES_MIN_DIAMETER_M * 1e6:g} um lower limit of the Pries 1992 fit; "
            "give a diameter of at least 3 um"
        )
    return out(_relative(d * 1e6, h))


def blood_viscosity_pa_s(
    hematocrit: float | np.ndarray,
    *,
    diameter_m: float | np.ndarray | None = None,
    plasma_viscosity_pa_s: float = PLASMA_VISCOSITY_PA_S,
) -> float | np.ndarray:
    """Apparent whole-blood viscosity at high shear rate, Pa s.

    Parameters
    ----------
    hematocrit : float or ndarray
        Hematocrit as a volume fraction, 0-0.8.
    diameter_m : float or ndarray, optional
        Vessel diameter in metres. ``None`` gives the bulk value for large vessels (the
        large-tube limit of the Pries 1992 fit: 3.2 x plasma at hematocrit 0.45). With a
        diameter the full Pries fit is used, so the viscosity falls below about 300 um
        (Fahraeus-Lindqvist effect); above about 1 mm it is within 0.5 % of the bulk.
    plasma_viscosity_pa_s : float
        Plasma viscosity in Pa s (default 1.2 mPa s, 37 degC).

    Returns
    -------
    float or ndarray
        Viscosity in Pa s.

    Notes
    -----
    Blood is shear-thinning; this is the high-shear (Newtonian) limit that applies to
    arterial flow. At low shear rates the true viscosity is higher.

    Examples
    --------
    >>> round(blood_viscosity_pa_s(0.45) * 1e3, 2)  # mPa s
    3.84
    """
    h = in_range("hematocrit", hematocrit, HEMATOCRIT_MIN, HEMATOCRIT_MAX)
    mu_p = positive("plasma_viscosity_pa_s", plasma_viscosity_pa_s, "Pa s")
    if diameter_m is None:
        eta = 1.0 + (3.2 - 1.0) * np.expm1(-0.8 * np.log1p(-h)) / np.expm1(
            -0.8 * np.log1p(-_REFERENCE_HEMATOCRIT)
        )
    else:
        eta = np.asarray(relative_viscosity_pries(diameter_m, h))
    return out(mu_p * eta)

