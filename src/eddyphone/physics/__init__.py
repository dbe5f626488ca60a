"""Flow physics (hemodynamics) behind murmurs: SI units inside, clinical units at the edges.

Blood properties (:mod:`.blood`, :mod:`.viscosity`), pipe flow (:mod:`.flow`), jets
(:mod:`.jet`), unit conversions (:mod:`.units`), reference sites (:mod:`.sites`) and a
result builder shared by the explainer and the ``eddyphone flow`` calculator
(:mod:`.describe`). Every function validates its inputs and raises
:class:`eddyphone.errors.ParameterError` naming the bad value and the valid range.
"""

from eddyphone.physics.blood import (
    BLOOD_DENSITY_KG_M3,
    HEMATOCRIT_MAX,
    HEMATOCRIT_MIN,
    NORMAL_HEMATOCRIT,
    PLASMA_VISCOSITY_PA_S,
)
from eddyphone.physics.describe import describe_flow
from eddyphone.physics.flow import (
    TRANSITION_RE_HIGH,
    TRANSITION_RE_LOW,
    area_m2,
    flow_from_velocity_m3_s,
    flow_regime,
    poiseuille_pressure_drop_pa,
    poiseuille_resistance_pa_s_m3,
    reynolds_number,
    reynolds_number_from_flow,
    velocity_from_flow_m_s,
    womersley_number,
)
from eddyphone.physics.jet import (
    SIMPLIFIED_BERNOULLI_MMHG_S2_M2,
    STROUHAL_NUMBER,
    bernoulli_pressure_drop_mmhg,
    strouhal_diameter_m,
    strouhal_frequency_hz,
    strouhal_velocity_m_s,
)
from eddyphone.physics.sites import NORMAL_ADULT_AORTA, FlowSite
from eddyphone.physics.units import (
    M3_S_PER_L_MIN,
    PA_PER_MMHG,
    l_min_from_m3_s,
    m3_s_from_l_min,
    mmhg_from_pa,
    pa_from_mmhg,
)
from eddyphone.physics.viscosity import (
    FAHRAEUS_LINDQVIST_DIAMETER_M,
    PRIES_MIN_DIAMETER_M,
    blood_viscosity_pa_s,
    relative_viscosity_pries,
)

__all__ = [
    "BLOOD_DENSITY_KG_M3",
    "FAHRAEUS_LINDQVIST_DIAMETER_M",
    "HEMATOCRIT_MAX",
    "HEMATOCRIT_MIN",
    "FlowSite",
    "M3_S_PER_L_MIN",
    "NORMAL_ADULT_AORTA",
    "NORMAL_HEMATOCRIT",
    "PA_PER_MMHG",
    "PLASMA_VISCOSITY_PA_S",
    "PRIES_MIN_DIAMETER_M",
    "SIMPLIFIED_BERNOULLI_MMHG_S2_M2",
    "STROUHAL_NUMBER",
    "TRANSITION_RE_HIGH",
    "TRANSITION_RE_LOW",
    "area_m2",
    "bernoulli_pressure_drop_mmhg",
    "blood_viscosity_pa_s",
    "describe_flow",
    "flow_from_velocity_m3_s",
    "flow_regime",
    "l_min_from_m3_s",
    "m3_s_from_l_min",
    "mmhg_from_pa",
    "pa_from_mmhg",
    "poiseuille_pressure_drop_pa",
    "poiseuille_resistance_pa_s_m3",
    "relative_viscosity_pries",
    "reynolds_number",
    "reynolds_number_from_flow",
    "strouhal_diameter_m",
    "strouhal_frequency_hz",
    "strouhal_velocity_m_s",
    "velocity_from_flow_m_s",
    "womersley_number",
]
