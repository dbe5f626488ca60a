"""Physical properties of blood used as defaults throughout eddyphone.

Every default is a typical adult value at body temperature (37 degC); pass your own
values where you know them.
"""

from __future__ import annotations

#: Whole-blood density, kg/m3. Commonly quoted adult value 1050-1060 kg/m3 (common
#: practice, from memory); 1060 kg/m3 is the usual textbook figure.
BLOOD_DENSITY_KG_M3 = 1060.0

#: Plasma viscosity at 37 degC, Pa s. Healthy adults lie around 1.10-1.30 mPa s at
#: 37 degC (Kesmarky et al. 2008, "Plasma viscosity: a forgotten variable", from memory);
#: 1.2 mPa s is the middle of that range.
PLASMA_VISCOSITY_PA_S = 1.2e-3

#: Typical adult hematocrit (volume fraction of red cells), common practice.
NORMAL_HEMATOCRIT = 0.45

#: Hematocrit range accepted by the viscosity functions (volume fraction).
HEMATOCRIT_MIN = 0.0
HEMATOCRIT_MAX = 0.8
