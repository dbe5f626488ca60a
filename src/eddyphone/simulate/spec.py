"""What a synthetic recording is made of: :class:`CaseSpec` and :class:`MurmurSpec`."""

from __future__ import annotations

from dataclasses import asdict, dataclass, replace

from eddyphone.errors import ParameterError

#: Murmur causes the generator knows; each maps to a haemodynamic phase and shape.
MURMUR_CAUSES = (
    "none",
    "high_flow",
    "narrowed_outflow",
    "systolic_leak",
    "diastolic_leak",
    "narrowed_inflow",
    "low_viscosity",
    "wall_irregularity",
    "continuous",
)

#: Auscultation sites (trade terms) the loudness tables know.
SITES = ("aortic", "pulmonic", "tricuspid", "mitral")

RHYTHMS = ("sinus", "irregular")

S2_SPLITS = ("physiological", "fixed", "single", "paradoxical")

ADVENTITIOUS = ("none", "crackles", "wheeze")


@dataclass(frozen=True)
class MurmurSpec:
    """A murmur given by its cause and flow parameters; the rest follows from physics.

    Parameters
    ----------
    cause : str
        One of :data:`MURMUR_CAUSES`.
    diameter_m : float
        Orifice (jet) or vessel diameter in metres.
    velocity_m_s : float or None
        Peak jet velocity in m/s. Give this or ``flow_m3_s``.
    flow_m3_s : float or None
        Peak volume flow in m^3/s through ``diameter_m``; converted by continuity.
    hematocrit : float
        Volume fraction of red cells (0.45 typical adult).
    transition_factor : float
        Multiplies the transition Reynolds numbers; below 1 models a rough or
        irregular wall that trips turbulence early (used by ``wall_irregularity``).
    tone_diameter_m : float or None
        Size of a thin structure in the stream (a chord or band) that sheds vortices
        and makes the murmur musical, in metres; None for no tone.
    """

    cause: str = "narrowed_outflow"
    diameter_m: float = 0.008
    velocity_m_s: float | None = 4.0
    flow_m3_s: float | None = None
    hematocrit: float = 0.45
    transition_factor: float = 1.0
    tone_diameter_m: float | None = None

    def __post_init__(self) -> None:
        if self.cause not in MURMUR_CAUSES:
            raise ParameterError(
                f"cause={self.cause!r} is not a known murmur cause; use one of {MURMUR_CAUSES}"
            )
        if not 1e-4 <= self.diameter_m <= 0.05:
            raise ParameterError(
                f"diameter_m={self.diameter_m!r} is outside 0.1 mm-5 cm; give metres, "
                "e.g. 0.008 for 8 mm"
            )
        if (self.velocity_m_s is None) == (self.flow_m3_s is None) and self.cause != "none":
            raise ParameterError(
                "give exactly one of velocity_m_s and flow_m3_s "
                f"(got velocity_m_s={self.velocity_m_s!r}, flow_m3_s={self.flow_m3_s!r})"
            )
        if self.velocity_m_s is not None and not 0.05 <= self.velocity_m_s <= 8.0:
            raise ParameterError(
                f"velocity_m_s={self.velocity_m_s!r} is outside 0.05-8 m/s; give m/s"
            )
        if not 0.05 <= self.hematocrit <= 0.75:
            raise ParameterError(
                f"hematocrit={self.hematocrit!r} is outside 0.05-0.75; give a fraction, "
                "e.g. 0.45 (not 45)"
            )
        if self.tone_diameter_m is not None and not 2e-4 <= self.tone_diameter_m <= 0.01:
            raise ParameterError(
                f"tone_diameter_m={self.tone_diameter_m!r} is outside 0.2-10 mm; give metres"
            )
        if not 0.2 <= self.transition_factor <= 2.0:
            raise ParameterError(
                f"transition_factor={self.transition_factor!r} is outside 0.2-2.0"
            )


@dataclass(frozen=True)
class CaseSpec:
    """Everything that defines one synthetic recording.

    Parameters
    ----------
    heart_rate_bpm : float
        Mean heart rate, 40-200 bpm.
    rhythm : {'sinus', 'irregular'}
        Sinus rhythm with respiratory modulation, or an atrial-fibrillation-like
        irregular RR series (no atrial sounds, no presystolic accent).
    ectopic_rate : float
        Fraction of beats that come early (premature beats with a pause after).
    respiration_per_min : float
        Breathing rate; drives sinus arrhythmia, S2 splitting and breath noise.
    breath_held : bool
        The subject holds the breath: lung volume stays put, no airflow, so no breath
        sounds, no respiratory changes of rate, splitting or loudness.
    rsa_swing_bpm : float
        Peak-to-peak heart-rate swing over a breath (sinus rhythm only).
    heart_rate_trend_bpm_per_min : float
        Steady drift of a sinus rate through the recording (negative: slowing down, as
        after exercise), centred on ``heart_rate_bpm``.
    duration_s, fs, bit_depth : float, float, int
        Length, sample rate (Hz) and PCM bit depth of the recording.
    sex : {'male', 'female'}
        Which systolic-interval regression line to use.
    murmur : MurmurSpec or None
        The murmur, if any.
    s3, s4, ejection_click, opening_snap : bool
        Extra sounds.
    s2_split : {'physiological', 'fixed', 'single', 'paradoxical'}
        How A2 and P2 separate: widening on inspiration, fixed wide, never, or reversed
        (P2 first, widening on expiration). The S2 onset keeps the systolic-interval
        regression in every case.
    snr_db : float
        Cardiac-to-noise power ratio after the device, in the 25-400 Hz band.
    device : str
        Stethoscope response name (see ``eddyphone.simulate.chain.DEVICES``).
    chest_wall_cutoff_hz : float
        Corner of the chest-wall low-pass (thicker wall, lower corner).
    breathing, speech : float
        Relative weights (0-1) of breath sounds and room speech in the noise.
    friction_per_min : float
        Rate of friction and handling bursts.
    timbre_drift : float
        Slow drift (fraction) of the pitch and loudness of the heart sounds as the
        chest-piece pressure changes during the recording.
    precordial_motion : float
        Amplitude of the slow chest-wall movement with each beat (apical impulse,
        mostly below 20 Hz) relative to the S1 peak; strong through low-frequency
        devices.
    respiratory_loudness : float
        Fraction by which heart sounds soften at full inspiration (more lung between
        heart and chest piece).
    adventitious : {'none', 'crackles', 'wheeze'}
        Lung sounds added to the breath noise.
    adventitious_db : float
        Their peak level relative to the peak of the heart sounds, dB.
    device_ripple_db : float
        Peak deviation of this chest piece from its model's response, dB.
    noise_wander_db : float
        Peak slow change of the background-noise level over seconds, dB (the mean
        level, and so ``snr_db``, is kept).
    gain_wander_db : float
        Peak slow change of gain (chest-piece pressure, automatic gain), dB.
    dc_offset : float
        Constant offset added before quantisation, full-scale units.
    hum_hz : float or None
        Mains frequency (50 or 60) or None.
    hum_db : float
        Hum level relative to the cardiac power, dB.
    peak_dbfs : float
        Peak level after normalisation, dB re full scale.
    overdrive_db : float
        Extra gain after normalisation; above 0 the loudest parts clip.
    site : str
        Auscultation site, one of :data:`SITES`.
    seed : int
        Seed of every random choice; same seed, same bytes.
    note : str
        Free text shown in indexes and READMEs.
    """

    heart_rate_bpm: float = 70.0
    rhythm: str = "sinus"
    ectopic_rate: float = 0.0
    respiration_per_min: float = 14.0
    breath_held: bool = False
    rsa_swing_bpm: float = 4.0
    heart_rate_trend_bpm_per_min: float = 0.0
    duration_s: float = 15.0
    fs: float = 4000.0
    bit_depth: int = 16
    sex: str = "male"
    murmur: MurmurSpec | None = None
    s3: bool = False
    s4: bool = False
    ejection_click: bool = False
    opening_snap: bool = False
    s2_split: str = "physiological"
    snr_db: float = 25.0
    device: str = "diaphragm"
    chest_wall_cutoff_hz: float = 350.0
    breathing: float = 0.3
    speech: float = 0.0
    friction_per_min: float = 0.0
    timbre_drift: float = 0.05
    precordial_motion: float = 0.3
    respiratory_loudness: float = 0.15
    adventitious: str = "none"
    adventitious_db: float = -12.0
    device_ripple_db: float = 0.0
    noise_wander_db: float = 0.0
    gain_wander_db: float = 0.0
    dc_offset: float = 0.0
    hum_hz: float | None = None
    hum_db: float = -30.0
    peak_dbfs: float = -1.0
    overdrive_db: float = 0.0
    site: str = "mitral"
    seed: int = 0
    note: str = ""

    def __post_init__(self) -> None:
        checks = [
            (30.0 <= self.heart_rate_bpm <= 220.0, "heart_rate_bpm", "30-220 bpm"),
            (self.rhythm in RHYTHMS, "rhythm", f"one of {RHYTHMS}"),
            (0.0 <= self.ectopic_rate <= 0.3, "ectopic_rate", "0-0.3"),
            (4.0 <= self.respiration_per_min <= 40.0, "respiration_per_min", "4-40"),
            (0.0 <= self.rsa_swing_bpm <= 20.0, "rsa_swing_bpm", "0-20 bpm"),
            (-120.0 <= self.heart_rate_trend_bpm_per_min <= 120.0,
             "heart_rate_trend_bpm_per_min", "-120-120 bpm/min"),
            (2.0 <= self.duration_s <= 600.0, "duration_s", "2-600 s"),
            (1000.0 <= self.fs <= 48000.0, "fs", "1000-48000 Hz"),
            (self.bit_depth in (8, 16, 24, 32), "bit_depth", "8, 16, 24 or 32"),
            (self.sex in ("male", "female"), "sex", "'male' or 'female'"),
            (self.s2_split in S2_SPLITS, "s2_split", f"one of {S2_SPLITS}"),
            (-20.0 <= self.snr_db <= 80.0, "snr_db", "-20-80 dB"),
            (40.0 <= self.chest_wall_cutoff_hz <= 2000.0, "chest_wall_cutoff_hz",
             "40-2000 Hz"),
            (0.0 <= self.breathing <= 1.0, "breathing", "0-1"),
            (0.0 <= self.speech <= 1.0, "speech", "0-1"),
            (0.0 <= self.friction_per_min <= 120.0, "friction_per_min", "0-120"),
            (0.0 <= self.precordial_motion <= 5.0, "precordial_motion", "0-5"),
            (0.0 <= self.timbre_drift <= 0.3, "timbre_drift", "0-0.3"),
            (0.0 <= self.respiratory_loudness <= 0.6, "respiratory_loudness", "0-0.6"),
            (self.adventitious in ADVENTITIOUS, "adventitious", f"one of {ADVENTITIOUS}"),
            (-40.0 <= self.adventitious_db <= 10.0, "adventitious_db", "-40-10 dB"),
            (0.0 <= self.device_ripple_db <= 10.0, "device_ripple_db", "0-10 dB"),
            (0.0 <= self.gain_wander_db <= 12.0, "gain_wander_db", "0-12 dB"),
            (0.0 <= self.noise_wander_db <= 12.0, "noise_wander_db", "0-12 dB"),
            (-0.2 <= self.dc_offset <= 0.2, "dc_offset", "-0.2-0.2"),
            (self.hum_hz is None or 40.0 <= self.hum_hz <= 70.0, "hum_hz",
             "None, 50 or 60 Hz"),
            (-60.0 <= self.peak_dbfs <= 0.0, "peak_dbfs", "-60-0 dBFS"),
            (0.0 <= self.overdrive_db <= 20.0, "overdrive_db", "0-20 dB"),
            (self.site in SITES, "site", f"one of {SITES}"),
        ]
        for ok, name, allowed in checks:
            if not ok:
                raise ParameterError(
                    f"{name}={getattr(self, name)!r} is not allowed; use {allowed}"
                )
        from eddyphone.simulate.chain import DEVICES

        if self.device not in DEVICES:
            raise ParameterError(
                f"device={self.device!r} is not a known response; use one of {sorted(DEVICES)}"
            )

    def with_(self, **changes) -> CaseSpec:
        """Return a copy with some fields changed."""
        return replace(self, **changes)

    def to_dict(self) -> dict:
        """JSON-ready dictionary of every field."""
        return asdict(self)
