"""Murmurs from flow physics: cause and flow parameters in, sound and truth out.

The chain for one murmur:

1. Peak flow state through :mod:`eddyphone.physics`: viscosity from hematocrit,
   Reynolds number, regime, Bernoulli pressure drop, Strouhal break frequency.
2. A velocity-against-time profile per beat from the haemodynamic phase of the
   cause (ejection, regurgitant leak, inflow through a narrowed valve, a shunt
   open all through the cycle).
3. Instantaneous source strength (our own model, documented in
   :func:`source_strength`): grows with how far the Reynolds number exceeds the
   transition range, with the dynamic pressure of the jet, with the jet's size and
   with how abruptly it expands.
4. Band noise whose upper corner follows the Strouhal relation ``f_b = St v / d``
   at every instant (Lees & Dewey break frequency, St from ``eddyphone.physics``).

Public names
------------
MurmurPlan
    Everything derived for a murmur before rendering (peak physics, labels).
plan_murmur
    Derive the plan from a :class:`~eddyphone.simulate.spec.MurmurSpec`.
source_strength
    Relative acoustic source power at a velocity.
source_spectrum
    Relative power spectrum of the murmur source at a break frequency.
render_murmur
    Samples of the murmur over a recording, with per-beat intervals.
grade_from_level
    Grade I-VI from the level relative to S1 (our own convention).
"""

from __future__ import annotations

from dataclasses import asdict, dataclass

import numpy as np
from scipy import signal

from eddyphone import physics
from eddyphone.simulate.spec import MurmurSpec

#: Phase of each cause in the cardiac cycle.
PHASE = {
    "high_flow": "systolic",
    "narrowed_outflow": "systolic",
    "low_viscosity": "systolic",
    "wall_irregularity": "systolic",
    "systolic_leak": "systolic",
    "diastolic_leak": "diastolic",
    "narrowed_inflow": "diastolic",
    "continuous": "continuous",
}

#: Designed clinical description (timing, shape) of each cause, in the trade's words.
DESIGNED = {
    "high_flow": ("early", "crescendo-decrescendo"),
    "low_viscosity": ("early", "crescendo-decrescendo"),
    "wall_irregularity": ("mid", "crescendo-decrescendo"),
    "narrowed_outflow": ("mid", "crescendo-decrescendo"),
    "systolic_leak": ("holo", "plateau"),
    "diastolic_leak": ("holo", "decrescendo"),
    "narrowed_inflow": ("mid", "decrescendo"),
    "continuous": ("continuous", "crescendo-decrescendo"),
}

#: Diameter of the chamber or vessel the jet expands into, by cause (m): aortic or
#: pulmonary root about 30 mm, atria about 40 mm, left ventricle about 45 mm,
#: pulmonary artery about 25 mm (typical adult sizes, common practice).
DOWNSTREAM_DIAMETER_M = {
    "high_flow": 0.030,
    "low_viscosity": 0.030,
    "wall_irregularity": 0.030,
    "narrowed_outflow": 0.030,
    "systolic_leak": 0.040,
    "diastolic_leak": 0.045,
    "narrowed_inflow": 0.045,
    "continuous": 0.025,
}

#: Reference murmur of the loudness scale: a jet of 4 m/s through an 8 mm orifice
#: into a 30 mm root at hematocrit 0.45 (a typical moderately narrowed outflow valve)
#: is given a peak level of REFERENCE_LEVEL_DB relative to the RMS of S1.
REFERENCE_VELOCITY_M_S = 4.0
REFERENCE_DIAMETER_M = 0.008
REFERENCE_DOWNSTREAM_M = 0.030
REFERENCE_LEVEL_DB = -8.0

#: Turbulence is taken as fully developed at this multiple of TRANSITION_RE_LOW
#: (our own modelling choice: post-stenotic turbulence intensity keeps growing over
#: roughly a decade of Reynolds number above transition).
FULL_TURBULENCE_FACTOR = 10.0

#: Grade boundaries (dB of murmur peak RMS relative to S1 RMS) for grades I..VI:
#: our own convention, not a published scale. Grades IV and above need a palpable
#: thrill clinically; here they only mean "as loud as or louder than S1".
GRADE_EDGES_DB = (-20.0, -13.0, -6.0, 0.0, 6.0)

#: Pitch words from the spectral centroid, Hz (our own cut points). The truth's
#: ``pitch`` takes the centroid as the murmur reaches the chest surface (after the
#: chest wall, before the device); ``pitch_source`` that of the source.
PITCH_EDGES_HZ = (180.0, 400.0)

#: Strouhal number of vortex shedding behind a thin cylinder, about 0.2 over Re
#: 300-200,000 (the von Karman street; common practice). A thin structure in the jet
#: sheds vortices at f = 0.2 v / d and makes the murmur musical.
SHEDDING_STROUHAL = 0.2

#: Share of the murmur's power carried by the tone when a shedding structure is there
#: (our own choice).
TONE_FRACTION = 0.6

#: Quality words by cause (the trade's descriptions).
QUALITY = {
    "high_flow": "soft ejection",
    "low_viscosity": "soft ejection",
    "wall_irregularity": "harsh",
    "narrowed_outflow": "harsh",
    "systolic_leak": "blowing",
    "diastolic_leak": "blowing",
    "narrowed_inflow": "rumbling",
    "continuous": "machinery",
}

#: Pressure half-time of a narrowed mitral valve: 220 ms divided by the valve area
#: in cm2 (Hatle, Angelsen & Tromsdal 1979, from memory).
PRESSURE_HALF_TIME_CONSTANT_S_CM2 = 0.220

#: Pressure half-time of the aorta-to-ventricle gradient behind a leaking aortic
#: valve, by regurgitant orifice area (cm2, s): over 500 ms in a mild leak (orifice
#: under 0.10 cm2), under 200 ms in a severe one (0.30 cm2 or more), the grading
#: used in echocardiography (from memory). Log-linear between the two anchors,
#: clipped to :data:`LEAK_HALF_TIME_RANGE_S` (our own bounds).
LEAK_HALF_TIME_ANCHORS = ((0.10, 0.500), (0.30, 0.200))
LEAK_HALF_TIME_RANGE_S = (0.12, 0.80)


def turbulence_development(reynolds: np.ndarray | float, transition_factor: float = 1.0
                           ) -> np.ndarray:
    """How developed turbulence is, 0 (laminar) to 1, from the Reynolds number.

    Zero below ``TRANSITION_RE_LOW * transition_factor``; rises with the logarithm of
    Re to 1 at ``FULL_TURBULENCE_FACTOR`` times that (our own model).
    """
    re_low = physics.TRANSITION_RE_LOW * transition_factor
    re = np.maximum(np.asarray(reynolds, dtype=float), 1e-9)
    return np.clip(np.log(re / re_low) / np.log(FULL_TURBULENCE_FACTOR), 0.0, 1.0)


def source_strength(velocity_m_s: np.ndarray | float, *, diameter_m: float,
                    viscosity_pa_s: float, downstream_diameter_m: float,
                    transition_factor: float = 1.0) -> np.ndarray:
    """Relative acoustic source power of a jet (1 for the reference murmur).

    ``P = D(Re)**2 * (v / v_ref)**4 * (d / d_ref)**2 * E / E_ref`` where ``D(Re)`` is
    :func:`turbulence_development`, ``v**4`` the square of the jet's dynamic pressure
    (wall-pressure fluctuations under turbulence scale with 1/2 rho v**2), ``d**2`` the
    size of the turbulent region and ``E = (1 - (d / d_down)**2)**2`` the Borda-Carnot
    expansion factor (how abruptly the jet widens). An our-own combination of
    textbook scalings, not a published murmur model.
    """
    v = np.maximum(np.asarray(velocity_m_s, dtype=float), 0.0)
    re = physics.BLOOD_DENSITY_KG_M3 * v * diameter_m / viscosity_pa_s
    dev = turbulence_development(re, transition_factor)
    expansion = (1.0 - min(diameter_m / downstream_diameter_m, 1.0) ** 2) ** 2
    mu_ref = physics.blood_viscosity_pa_s(physics.NORMAL_HEMATOCRIT)
    re_ref = physics.reynolds_number(velocity_m_s=REFERENCE_VELOCITY_M_S,
                                     diameter_m=REFERENCE_DIAMETER_M, viscosity_pa_s=mu_ref)
    dev_ref = float(turbulence_development(re_ref))
    e_ref = (1.0 - (REFERENCE_DIAMETER_M / REFERENCE_DOWNSTREAM_M) ** 2) ** 2
    return ((dev / dev_ref) ** 2 * (v / REFERENCE_VELOCITY_M_S) ** 4
            * (diameter_m / REFERENCE_DIAMETER_M) ** 2 * expansion / e_ref)


def source_spectrum(f_hz: np.ndarray, break_hz: float | np.ndarray) -> np.ndarray:
    """Relative power spectrum of the murmur source with upper corner ``break_hz``.

    Flat-topped band: a 2nd-order rise with corner at ``break_hz / 8`` and a 4th-order
    fall above ``break_hz`` (the spectrum of a bruit falls off above the break
    frequency, Lees & Dewey 1970, from memory; the lower corner is our own choice).
    """
    f = np.asarray(f_hz, dtype=float)
    fb = np.asarray(break_hz, dtype=float)
    r = f / (fb / 8.0)
    return r**2 / (1 + r**2) / (1 + (f / fb) ** 4)


def chest_wall_gain(f_hz: np.ndarray, cutoff_hz: float, fs: float) -> np.ndarray:
    """Power gain at ``f_hz`` of the chest wall as rendered
    (:func:`eddyphone.simulate.chain.chest_wall`: a digital 2nd-order Butterworth
    low-pass with its corner at ``cutoff_hz``, at most 0.45 ``fs``)."""
    sos = signal.butter(2, min(cutoff_hz, 0.45 * fs), "low", fs=fs, output="sos")
    _, h = signal.sosfreqz(sos, worN=np.asarray(f_hz, dtype=float), fs=fs)
    return np.abs(h) ** 2


def spectrum_summary(break_hz: float, fs: float, *, chest_wall_cutoff_hz: float | None = None,
                     tone_hz: float | None = None) -> dict:
    """Centroid and half-power band (Hz) of the murmur's spectrum up to ``fs/2``.

    By default the source alone (:func:`source_spectrum`). With
    ``chest_wall_cutoff_hz`` the spectrum as it reaches the chest surface (times
    :func:`chest_wall_gain`); with ``tone_hz`` the shed tone and its two harmonics
    (amplitudes 1, 0.35, 0.12) carry ``TONE_FRACTION`` of the power, as rendered.
    """
    f = np.linspace(0.5, fs / 2, 4000)
    p = source_spectrum(f, break_hz)
    p = p / p.sum()
    if tone_hz:
        tone = np.zeros_like(f)
        amps = np.array([1.0, 0.35, 0.12]) ** 2
        for k, a in enumerate(amps, start=1):
            if k * tone_hz < fs / 2:
                tone[int(np.argmin(np.abs(f - k * tone_hz)))] += a / amps.sum()
        p = (1.0 - TONE_FRACTION) * p + TONE_FRACTION * tone
    wall = 1.0 if chest_wall_cutoff_hz is None else chest_wall_gain(f, chest_wall_cutoff_hz, fs)
    p = p * wall
    centre = float(np.sum(f * p) / np.sum(p))
    if tone_hz:
        # half-power band of the noise part (a line has no band)
        p = source_spectrum(f, break_hz) * wall
    above = f[p >= 0.5 * p.max()]
    return {"centre_hz": centre, "band_hz": [float(above[0]), float(above[-1])]}


def grade_from_level(level_db: float) -> int:
    """Grade 1-6 from the murmur level relative to S1 (``GRADE_EDGES_DB``)."""
    return 1 + int(np.searchsorted(GRADE_EDGES_DB, level_db, side="right"))


def pitch_word(centre_hz: float) -> str:
    """'low', 'medium' or 'high' from a spectral centroid (``PITCH_EDGES_HZ``)."""
    return ("low", "medium", "high")[int(np.searchsorted(PITCH_EDGES_HZ, centre_hz))]


@dataclass(frozen=True)
class MurmurPlan:
    """Peak physics and labels of a murmur (every number in SI units)."""

    cause: str
    phase: str
    timing: str
    shape: str
    diameter_m: float
    downstream_diameter_m: float
    peak_velocity_m_s: float
    peak_flow_m3_s: float
    hematocrit: float
    viscosity_pa_s: float
    density_kg_m3: float
    reynolds: float
    regime: str
    transition_re: tuple[float, float]
    transition_factor: float
    turbulence_development: float
    pressure_drop_mmhg: float
    strouhal_number: float
    break_frequency_hz: float
    relative_power: float
    level_db_re_s1: float
    grade: int
    audible: bool
    quality: str = ""
    tone_diameter_m: float | None = None
    tone_hz: float | None = None

    def to_dict(self) -> dict:
        """JSON-ready dictionary."""
        d = asdict(self)
        d["transition_re"] = list(self.transition_re)
        return d


def plan_murmur(m: MurmurSpec) -> MurmurPlan:
    """Derive the peak flow physics and the designed labels of a murmur."""
    d = m.diameter_m
    if m.velocity_m_s is not None:
        v = float(m.velocity_m_s)
        q = float(physics.flow_from_velocity_m3_s(v, d))
    else:
        q = float(m.flow_m3_s)
        v = float(physics.velocity_from_flow_m_s(q, d))
    mu = float(physics.blood_viscosity_pa_s(m.hematocrit))
    re = float(physics.reynolds_number(velocity_m_s=v, diameter_m=d, viscosity_pa_s=mu))
    d_down = DOWNSTREAM_DIAMETER_M[m.cause]
    power = float(source_strength(v, diameter_m=d, viscosity_pa_s=mu,
                                  downstream_diameter_m=d_down,
                                  transition_factor=m.transition_factor))
    level = 10 * np.log10(power) + REFERENCE_LEVEL_DB if power > 0 else -np.inf
    timing, shape = DESIGNED[m.cause]
    return MurmurPlan(
        cause=m.cause,
        phase=PHASE[m.cause],
        timing=timing,
        shape=shape,
        diameter_m=d,
        downstream_diameter_m=d_down,
        peak_velocity_m_s=v,
        peak_flow_m3_s=q,
        hematocrit=m.hematocrit,
        viscosity_pa_s=mu,
        density_kg_m3=physics.BLOOD_DENSITY_KG_M3,
        reynolds=re,
        regime=physics.flow_regime(re),
        transition_re=(physics.TRANSITION_RE_LOW * m.transition_factor,
                       physics.TRANSITION_RE_HIGH * m.transition_factor),
        transition_factor=m.transition_factor,
        turbulence_development=float(turbulence_development(re, m.transition_factor)),
        pressure_drop_mmhg=float(physics.bernoulli_pressure_drop_mmhg(v)),
        strouhal_number=physics.STROUHAL_NUMBER,
        break_frequency_hz=float(physics.strouhal_frequency_hz(velocity_m_s=v, diameter_m=d)),
        relative_power=power,
        level_db_re_s1=float(level),
        grade=grade_from_level(level) if np.isfinite(level) else 0,
        audible=bool(np.isfinite(level) and level > GRADE_EDGES_DB[0] - 10.0),
        quality="musical" if m.tone_diameter_m else QUALITY[m.cause],
        tone_diameter_m=m.tone_diameter_m,
        tone_hz=float(physics.strouhal_frequency_hz(velocity_m_s=v, diameter_m=m.tone_diameter_m,
                                                    strouhal=SHEDDING_STROUHAL))
        if m.tone_diameter_m else None,
    )


# --- velocity profiles --------------------------------------------------------------

def _beta_peak(tau: np.ndarray, peak: float, sharp: float = 4.0) -> np.ndarray:
    a, b = sharp * peak, sharp * (1 - peak)
    tau = np.clip(tau, 0.0, 1.0)
    ref = peak**a * (1 - peak) ** b
    return tau**a * (1 - tau) ** b / ref


def _ramp(t: np.ndarray, rise_s: float) -> np.ndarray:
    return 0.5 * (1 - np.cos(np.pi * np.clip(t / rise_s, 0.0, 1.0)))


def leak_pressure_half_time_s(diameter_m: float) -> float:
    """Pressure half-time (s) of the diastolic gradient behind a leaking outflow valve
    whose regurgitant orifice has ``diameter_m`` (:data:`LEAK_HALF_TIME_ANCHORS`):
    the larger the orifice, the faster aorta and ventricle equalise."""
    area_cm2 = float(physics.area_m2(diameter_m)) * 1e4
    (a0, t0), (a1, t1) = LEAK_HALF_TIME_ANCHORS
    pht = t0 * (t1 / t0) ** ((area_cm2 - a0) / (a1 - a0))
    return float(np.clip(pht, *LEAK_HALF_TIME_RANGE_S))


def ejection_peak_fraction(cause: str, velocity_m_s: float) -> float:
    """Where in ejection the flow peaks: early for flow murmurs, later as an outflow
    valve narrows (the jet takes longer to reach its peak)."""
    if cause == "narrowed_outflow":
        return 0.5 + 0.22 * float(np.clip((velocity_m_s - 2.5) / 2.5, 0.0, 1.0))
    if cause == "wall_irregularity":
        return 0.45
    return 0.40


def beat_velocity(plan: MurmurPlan, t: np.ndarray, beat: dict, *, sinus: bool
                  ) -> np.ndarray:
    """Relative velocity (0-1, 1 = nominal peak) at times ``t`` for one beat.

    ``beat`` holds ``s1_start_s, ejection_s, a2_s, next_s1_s, mitral_open_s``.
    """
    cause = plan.cause
    v = np.zeros_like(t)
    s1, ej, a2, nxt = beat["s1_start_s"], beat["ejection_s"], beat["a2_s"], beat["next_s1_s"]
    if PHASE[cause] == "systolic" and cause != "systolic_leak":
        sel = (t >= ej) & (t < a2)
        tau = (t[sel] - ej) / (a2 - ej)
        # flow-state murmurs (no narrowing) are brief: flow falls off quickly after its
        # early peak; a narrowed valve keeps the jet fast for longer
        sharp = 6.0 if cause in ("high_flow", "low_viscosity") else 4.0
        v[sel] = _beta_peak(tau, ejection_peak_fraction(cause, plan.peak_velocity_m_s), sharp)
    elif cause == "systolic_leak":
        end = a2 + 0.02
        sel = (t >= s1) & (t < end)
        tt = t[sel] - s1
        v[sel] = (_ramp(tt, 0.04) * _ramp(end - t[sel], 0.03)
                  * (0.95 + 0.05 * np.sin(np.pi * tt / (end - s1))))
    elif cause == "diastolic_leak":
        # the jet is driven by the aorta-to-ventricle gradient, which halves every
        # pressure half-time (Bernoulli: velocity as its square root)
        sel = (t >= a2) & (t < nxt)
        tt = t[sel] - a2
        pht = leak_pressure_half_time_s(plan.diameter_m)
        v[sel] = _ramp(tt, 0.012) * 2.0 ** (-0.5 * tt / pht) * _ramp(nxt - t[sel], 0.01)
    elif cause == "narrowed_inflow":
        mo = beat["mitral_open_s"]
        sel = (t >= mo) & (t < nxt)
        tt = t[sel] - mo
        area_cm2 = float(physics.area_m2(plan.diameter_m)) * 1e4
        pht = PRESSURE_HALF_TIME_CONSTANT_S_CM2 / area_cm2
        # inflow builds up within a few tens of ms of opening, then the gradient decays
        # with the pressure half-time
        dp = (1 - np.exp(-tt / 0.02)) * 2.0 ** (-tt / pht)
        if dp.size:
            dp = dp / max(dp.max(), 1e-9)
        if sinus:
            # atrial contraction raises the gradient again just before S1
            kick_t = nxt - 0.07
            dp = dp + 0.3 * np.exp(-0.5 * ((t[sel] - kick_t) / 0.03) ** 2)
        v[sel] = np.sqrt(np.clip(dp, 0, None)) * _ramp(nxt - t[sel], 0.01)
    elif cause == "continuous":
        # aorta-to-pulmonary-artery gradient: aortic pressure peaks late in ejection and
        # decays through diastole, so the murmur swells towards S2 and runs through it
        sel = (t >= s1) & (t < nxt)
        tt = t[sel]
        p_ao = np.full(tt.shape, 80.0)
        p_pa = np.full(tt.shape, 10.0)
        sys = (tt >= ej) & (tt < a2)
        tau = (tt[sys] - ej) / (a2 - ej)
        p_ao[sys] = 80.0 + 40.0 * np.sin(np.pi * tau / 1.3) / np.sin(np.pi * 0.65 / 1.3)
        p_pa[sys] = 10.0 + 14.0 * np.sin(np.pi * tau)
        p_end = 40.0 * np.sin(np.pi / 1.3) / np.sin(np.pi * 0.65 / 1.3)
        dia = tt >= a2
        p_ao[dia] = 80.0 + p_end * np.exp(-(tt[dia] - a2) / (0.45 * (nxt - a2)))
        dp = np.clip(p_ao - p_pa, 0, None)
        v[sel] = np.sqrt(dp / 100.0) * _ramp(tt - s1, 0.02)
    return v


def render_murmur(plan: MurmurPlan, beats: list[dict], n: int, fs: float,
                  rng: np.random.Generator, *, sinus: bool, mean_rr_s: float
                  ) -> tuple[np.ndarray, list[tuple[float, float]], list[dict]]:
    """Murmur samples over ``n`` samples, scaled so the reference murmur peaks at 1.

    Parameters
    ----------
    plan : MurmurPlan
        From :func:`plan_murmur`.
    beats : list of dict
        Per-beat timing (see :func:`beat_velocity`), plus ``rr_prev_s`` and
        ``premature``.
    n, fs : int, float
        Length and rate of the output.
    rng : numpy.random.Generator
        Noise source.
    sinus : bool
        Whether atrial contraction exists (presystolic accent of inflow murmurs).
    mean_rr_s : float
        Mean cycle length (beat-to-beat loudness follows the preceding cycle in
        ejection murmurs).

    Returns
    -------
    x : ndarray
        Murmur samples: RMS envelope equals ``sqrt(source power)`` (1 = reference).
    intervals : list of (start_s, end_s)
        Per beat, where the envelope is within 20 dB of that beat's peak.
    profiles : list of dict
        Per beat: velocity scale, peak level (dB re reference), peak time.
    """
    t = np.arange(n) / fs
    v_rel = np.zeros(n)
    scales = []
    for b in beats:
        lo = int(max(0, np.floor((b["s1_start_s"] - 0.01) * fs)))
        hi = int(min(n, np.ceil((b["next_s1_s"] + 0.01) * fs)))
        if hi <= lo:
            scales.append(1.0)
            continue
        scale = 1.0 + rng.normal(0.0, 0.03)
        if PHASE[plan.cause] == "systolic" and plan.cause != "systolic_leak":
            scale *= float(np.clip((b["rr_prev_s"] / mean_rr_s) ** 0.25, 0.85, 1.15))
            if b["premature"]:
                scale *= 0.8
        scales.append(scale)
        seg = beat_velocity(plan, t[lo:hi], b, sinus=sinus) * scale
        v_rel[lo:hi] = np.maximum(v_rel[lo:hi], seg)
    v = v_rel * plan.peak_velocity_m_s
    power = source_strength(v, diameter_m=plan.diameter_m, viscosity_pa_s=plan.viscosity_pa_s,
                            downstream_diameter_m=plan.downstream_diameter_m,
                            transition_factor=plan.transition_factor)
    amp = np.sqrt(power)
    # noise whose break frequency follows St v / d frame by frame
    nper = int(2 ** np.ceil(np.log2(0.064 * fs)))
    hop = nper // 8
    w = rng.standard_normal(n)
    f, tf, z = signal.stft(w, fs=fs, nperseg=nper, noverlap=nper - hop, boundary="even")
    v_frames = np.interp(tf, t, v)
    fb = plan.strouhal_number * np.maximum(v_frames, 0.05) / plan.diameter_m
    fb = np.minimum(fb, 0.4 * fs)
    shape = np.sqrt(source_spectrum(f[:, None], fb[None, :]))
    shape /= np.sqrt(np.mean(shape**2, axis=0, keepdims=True)) + 1e-20
    _, y = signal.istft(z * shape, fs=fs, nperseg=nper, noverlap=nper - hop, boundary=True)
    y = y[:n] if len(y) >= n else np.pad(y, (0, n - len(y)))
    y /= y.std() + 1e-20
    if plan.shape == "crescendo-decrescendo":
        # ejection and shunt murmurs sound harsh: slow random amplitude roughness
        rough = signal.sosfiltfilt(signal.butter(2, [12, 40], "band", fs=fs, output="sos"),
                                   rng.standard_normal(n))
        y *= 1.0 + 0.35 * rough / (rough.std() + 1e-20)
    if plan.tone_diameter_m:
        # vortex shedding off a thin structure: a tone at St_shed v / d that glides with
        # the velocity, with two weaker harmonics
        f_tone = SHEDDING_STROUHAL * v / plan.tone_diameter_m
        f_tone = np.minimum(f_tone, 0.4 * fs)
        ph = 2 * np.pi * np.cumsum(f_tone) / fs + rng.uniform(0, 2 * np.pi)
        tone = np.sin(ph) + 0.35 * np.sin(2 * ph) + 0.12 * np.sin(3 * ph)
        tone /= np.sqrt(np.mean(tone**2)) + 1e-20
        y = np.sqrt(1 - TONE_FRACTION) * y + np.sqrt(TONE_FRACTION) * tone
    x = amp * y
    intervals = []
    profiles = []
    for b, scale in zip(beats, scales, strict=True):
        lo = int(max(0, np.floor(b["s1_start_s"] * fs)))
        hi = int(min(n, np.ceil(b["next_s1_s"] * fs)))
        if hi <= lo or amp[lo:hi].max() <= 0:
            intervals.append((np.nan, np.nan))
            profiles.append({"velocity_scale": scale, "peak_level_db_re_reference": None,
                             "peak_s": None})
            continue
        seg = amp[lo:hi]
        k = int(np.argmax(seg))
        above = np.nonzero(seg >= 0.1 * seg[k])[0]
        intervals.append(((lo + above[0]) / fs, (lo + above[-1] + 1) / fs))
        profiles.append({"velocity_scale": scale,
                         "peak_level_db_re_reference": float(20 * np.log10(seg[k])),
                         "peak_s": (lo + k) / fs})
    return x, intervals, profiles
