"""Unit conversions between SI (used inside eddyphone) and clinical units.

Public functions: :func:`mmhg_from_pa`, :func:`pa_from_mmhg`, :func:`m3_s_from_l_min`,
:func:`l_min_from_m3_s`.
"""

from __future__ import annotations

import numpy as np

from eddyphone.physics._checks import finite, out

#: One conventional millimetre of mercury in pascals: 13.5951 g/cm3 x 9.80665 m/s2
#: (NIST SP 811 conversion table, from memory). Agrees with 101325/760 Pa to 1e-7.
PA_PER_MMHG = 133.322387415

#: Cubic metres per second in one litre per minute (1e-3 m3 / 60 s, by definition).
M3_S_PER_L_MIN = 1e-3 / 60.0


def mmhg_from_pa(pressure_pa: float | np.ndarray) -> float | np.ndarray:
    """Convert a pressure from Pa to mmHg."""
    return out(finite("pressure_pa", pressure_pa, "Pa") / PA_PER_MMHG)


def pa_from_mmhg(pressure_mmhg: float | np.ndarray) -> float | np.ndarray:
    """Convert a pressure from mmHg to Pa."""
    return out(finite("pressure_mmhg", pressure_mmhg, "mmHg") * PA_PER_MMHG)


def m3_s_from_l_min(flow_l_min: float | np.ndarray) -> float | np.ndarray:
    """Convert a volume flow from L/min to m3/s."""
    return out(finite("flow_l_min", flow_l_min, "L/min") * M3_S_PER_L_MIN)


def l_min_from_m3_s(flow_m3_s: float | np.ndarray) -> float | np.ndarray:
    """Convert a volume flow from m3/s to L/min."""
    return out(finite("flow_m3_s", flow_m3_s, "m3/s") / M3_S_PER_L_MIN)
