"""Settings of the explainer: reference flow geometry, defaults and evidence weights.

Public names: :class:`Lumen`, :class:`ExplainConfig`, :func:`lumen_for`.

Every weight is a log-evidence increment (natural-log odds) added to a candidate
mechanism; the scores are the softmax of the sums, so a weight of 1 multiplies the
odds of that mechanism by e (about 2.7). The weights are our own judgement of how
strongly each observation points at each mechanism, set from the physics and the
clinical patterns named beside them, not fitted to data.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, field

from eddyphone.physics import NORMAL_HEMATOCRIT, STROUHAL_NUMBER
from eddyphone.physics.sites import NORMAL_ADULT_AORTA

#: Resting adult cardiac output, L/min (common practice: 4-8 L/min, 5 typical).
NORMAL_CARDIAC_OUTPUT_L_MIN = 5.0


@dataclass(frozen=True)
class Lumen:
    """A reference lumen: where the flow that makes the sound is assumed to pass.

    Attributes
    ----------
    name : str
        Plain-words name used in the explanation.
    diameter_m : float
        Normal lumen diameter, m.
    peak_velocity_m_s : float
        Normal peak velocity at rest with a normal cardiac output, m/s.
    source : str
        Where the values come from.
    """

    name: str
    diameter_m: float
    peak_velocity_m_s: float
    source: str


_OUTFLOW = Lumen(
    "left-ventricular outflow and ascending aorta",
    NORMAL_ADULT_AORTA.diameter_m,
    NORMAL_ADULT_AORTA.peak_velocity_m_s,
    "eddyphone.physics.sites.NORMAL_ADULT_AORTA (typical adult values, common practice)",
)
_RIGHT_OUTFLOW = Lumen(
    "right-ventricular outflow and pulmonary trunk", 0.025, 0.9,
    "pulmonary trunk about 25 mm, peak velocity 0.6-0.9 m/s (common practice, from memory)",
)
_MITRAL_INFLOW = Lumen(
    "mitral inflow", 0.025, 0.9,
    "mitral valve area 4-6 cm2 (about 25 mm across), early filling velocity 0.6-1.3 m/s "
    "(common practice, from memory)",
)
_TRICUSPID_INFLOW = Lumen(
    "tricuspid inflow", 0.030, 0.6,
    "tricuspid valve area 7-9 cm2 (about 30 mm across), early filling velocity 0.3-0.7 m/s "
    "(common practice, from memory)",
)
_VESSELS = {
    "carotid": Lumen("common carotid artery", 0.0065, 0.9,
                     "common carotid about 6-7 mm, peak systolic velocity 0.7-1.0 m/s "
                     "(common practice, from memory)"),
    "femoral": Lumen("common femoral artery", 0.008, 1.0,
                     "common femoral about 8-10 mm, peak systolic velocity 0.8-1.2 m/s "
                     "(common practice, from memory)"),
    "renal": Lumen("renal artery", 0.0055, 1.0,
                   "renal artery about 5-6 mm, peak systolic velocity below 1.8 m/s "
                   "(common practice, from memory)"),
    "fistula": Lumen("arteriovenous access", 0.006, 1.5,
                     "arteriovenous access 5-7 mm with high flow (common practice, "
                     "from memory)"),
}


def lumen_for(site: str | None, phase: str) -> Lumen:
    """The reference lumen for a murmur of ``phase`` heard at ``site``.

    Systolic (and continuous) murmurs over the heart are referred to the ventricular
    outflow, diastolic ones to the inflow valve; vessel sites use the vessel itself.
    """
    if site in _VESSELS:
        return _VESSELS[site]
    if phase == "diastolic":
        return _TRICUSPID_INFLOW if site == "tricuspid" else _MITRAL_INFLOW
    return _RIGHT_OUTFLOW if site == "pulmonic" else _OUTFLOW


#: Orifice diameters (m) assumed for a narrowed orifice when none is supplied, by
#: murmur pattern. Equivalent circular diameters of typical lesion areas (common
#: practice, from memory): outflow narrowing with valve area about 1.1 cm2 (12 mm, a
#: moderate narrowing: with the resting peak flow it gives a jet near 4.8 m/s);
#: leak with effective regurgitant orifice about 0.2 cm2 (5 mm); inflow narrowing with
#: valve area about 1.5 cm2 (14 mm); continuous shunt through a channel about 4 mm.
#: Vessels: a 50 % diameter narrowing of the reference vessel.
DEFAULT_ORIFICES_M = {
    "outflow": 0.012,
    "leak": 0.005,
    "inflow": 0.014,
    "shunt": 0.004,
}


#: Pressure difference that typically drives each kind of jet, mmHg (common practice,
#: from memory): ventricle to atrium in systole about 100 (systolic pressure ~120 less
#: atrial ~10-20); aorta to ventricle early in diastole about 60; atrium to ventricle
#: across a narrowed inflow valve about 10 (peak; mean gradients of 5-10 mark a tight
#: narrowing); aorta to pulmonary artery through a shunt about 70. An outflow narrowing
#: has no typical value: its gradient is what measures its severity.
DRIVING_PRESSURE_MMHG = {"leak_systolic": 100.0, "leak_diastolic": 60.0, "inflow": 10.0,
                         "shunt": 70.0}


@dataclass(frozen=True)
class ExplainConfig:
    """Explainer settings, echoed into the output.

    Attributes
    ----------
    hematocrit : float
        Hematocrit assumed when none is supplied (normal adult).
    cardiac_output_l_min : float
        Cardiac output assumed when none is supplied (resting adult).
    strouhal : float
        Strouhal number linking noise frequency, jet velocity and orifice size.
    high_flow_velocity_factor : float
        How far above its resting value the peak velocity may rise in a high-output
        state (exercise roughly doubles cardiac output, common practice); sets the
        highest pitch flow through a normal lumen can explain.
    pitch_measure : {'dominant_frequency', 'centroid'}
        Which of the murmur's frequencies stands for its pitch in the Strouhal
        arguments.
    use_word_confidence : bool
        Scale the timing and shape evidence by the findings' ``timing_confidence`` and
        ``shape_confidence`` (kept within 0.25-1).
    weights : dict
        Log-evidence weights by name (see ``DEFAULT_WEIGHTS``).
    """

    hematocrit: float = NORMAL_HEMATOCRIT
    cardiac_output_l_min: float = NORMAL_CARDIAC_OUTPUT_L_MIN
    strouhal: float = STROUHAL_NUMBER
    high_flow_velocity_factor: float = 2.0
    pitch_measure: str = "dominant_frequency"
    use_word_confidence: bool = False
    weights: dict = field(default_factory=lambda: dict(DEFAULT_WEIGHTS))

    def __post_init__(self) -> None:
        from eddyphone.errors import ParameterError

        if self.pitch_measure not in ("dominant_frequency", "centroid"):
            raise ParameterError(f"pitch_measure {self.pitch_measure!r} is not "
                                 "'dominant_frequency' or 'centroid'")
        unknown = set(self.weights) - set(DEFAULT_WEIGHTS)
        if unknown:
            raise ParameterError(f"unknown explainer weights {sorted(unknown)}; known: "
                                 f"{', '.join(sorted(DEFAULT_WEIGHTS))}")
        for name, value in (("hematocrit", self.hematocrit),
                            ("cardiac_output_l_min", self.cardiac_output_l_min),
                            ("strouhal", self.strouhal),
                            ("high_flow_velocity_factor", self.high_flow_velocity_factor)):
            if not value > 0:
                raise ParameterError(f"{name} = {value!r} must be positive")

    def w(self, name: str) -> float:
        """One weight by name."""
        return float(self.weights.get(name, DEFAULT_WEIGHTS[name]))

    def to_dict(self) -> dict:
        """JSON-ready form."""
        return asdict(self)


#: Log-evidence weights. Sources of the patterns: clinical teaching on auscultation
#: (common practice); the physics levers follow from Re = 4 rho Q / (pi D mu).
DEFAULT_WEIGHTS: dict[str, float] = {
    # priors: flow murmurs are the commonest soft murmurs; anaemia is rarer; wall
    # irregularity (sclerosis) is common only with age
    "prior_high_flow": 0.0,
    "prior_low_viscosity": -0.7,
    "prior_wall_irregularity": -0.3,
    "prior_narrowed_orifice": 0.0,
    "prior_no_flow_disturbance": 0.0,
    # phase: diastolic murmurs are almost never innocent (common practice)
    "diastolic_orifice": 2.5,
    "diastolic_flow": -0.5,
    "diastolic_other": -1.5,
    "continuous_orifice": 1.0,
    "continuous_flow": 0.5,
    "continuous_other": -1.0,
    # systolic timing and shape: holosystolic plateau = leak across the whole of
    # systole; early-peaking ejection murmur = flow murmur; late peak = tighter narrowing
    "holo_orifice": 2.0,
    "holo_other": -0.5,
    "late_orifice": 1.0,
    "early_flow": 0.5,
    "mid_ejection": 0.3,
    "plateau_orifice": 1.0,
    "late_peak_orifice": 1.0,
    "early_peak_flow": 0.3,
    "diastolic_shape_orifice": 0.5,
    # pitch against what flow through a normal lumen can make (per octave above it)
    "pitch_orifice_per_octave": 1.0,
    "pitch_flow_per_octave": -0.3,
    # loudness: grade III or louder is more often structural (common practice)
    "loud_orifice": 1.0,
    "soft_functional": 0.3,
    # sound quality words
    "harsh_orifice": 0.5,
    "harsh_wall": 0.3,
    "blowing_flow": 0.2,
    "rumbling_orifice": 0.5,
    "musical_wall": 0.5,
    "musical_flow": 0.2,
    # a real murmur means disturbed flow (the chance that it is not real comes from the
    # findings' confidence, mixed in after the softmax)
    "present_no_disturbance": -3.0,
    # companion sounds
    "snap_orifice": 1.5,
    "click_orifice": 1.0,
    "s3_flow": 0.3,
    # measured heart rate: tachycardia goes with high-output states
    "tachycardia_flow": 1.5,
    # patient context: physics levers of Re (per natural-log unit of the ratio)
    # a measured value also removes the benefit of the doubt an unknown one leaves, so
    # a normal measured value counts against its mechanism (the offsets)
    "flow_ratio_flow": 4.0,
    "known_flow_offset": -1.0,
    "viscosity_ratio_low_viscosity": 6.0,
    "known_hematocrit_offset": -1.5,
    "diameter_ratio_orifice": 3.0,
    "known_diameter_offset": -1.0,
    "high_output_state_flow": 1.5,
    "extra_state_flow": 0.5,
    "anemia_low_viscosity": 2.0,
    "anemia_flow": 0.5,
    "older_wall": 1.5,
    "young_wall": -1.0,
    "young_flow": 0.5,
    "normal_lever_wall": 0.7,
}
