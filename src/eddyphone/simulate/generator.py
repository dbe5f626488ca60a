"""Put rhythm, sounds, murmur and recording chain together: :func:`generate`."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy import signal

from eddyphone import physiology
from eddyphone._version import __version__
from eddyphone.simulate import chain
from eddyphone.simulate.murmurs import GRADE_EDGES_DB, PHASE, plan_murmur, render_murmur
from eddyphone.simulate.rhythm import BreathTrack, beat_times, breathing_track
from eddyphone.simulate.sounds import Timbre, add_component
from eddyphone.simulate.spec import CaseSpec
from eddyphone.simulate.truth import (
    TRUTH_SCHEMA_VERSION,
    audibility,
    murmur_to_noise_db,
    profile_fractions,
    shape_from_profile,
    timing_from_fractions,
)

#: Relative loudness at each site: S1, S2 (A2) and P2 as a fraction of A2
#: (S1 loudest at the apex, S2 at the base, P2 heard mainly at the pulmonic area;
#: common practice).
SITE_LEVELS = {
    "mitral": {"S1": 1.0, "S2": 0.55, "P2": 0.3, "T1": 0.5, "low": 1.0},
    "tricuspid": {"S1": 1.0, "S2": 0.65, "P2": 0.45, "T1": 0.8, "low": 0.7},
    "aortic": {"S1": 0.55, "S2": 1.0, "P2": 0.4, "T1": 0.4, "low": 0.4},
    "pulmonic": {"S1": 0.6, "S2": 1.0, "P2": 0.75, "T1": 0.5, "low": 0.5},
}

#: Murmur loudness by site (dB) for each cause: loudest where the jet points
#: (common practice for the classic radiation areas).
MURMUR_SITE_DB = {
    "narrowed_outflow": {"aortic": 0, "pulmonic": -3, "tricuspid": -5, "mitral": -4},
    "high_flow": {"aortic": -2, "pulmonic": 0, "tricuspid": -4, "mitral": -6},
    "low_viscosity": {"aortic": -1, "pulmonic": 0, "tricuspid": -4, "mitral": -4},
    "wall_irregularity": {"aortic": 0, "pulmonic": -3, "tricuspid": -5, "mitral": -4},
    "systolic_leak": {"aortic": -8, "pulmonic": -7, "tricuspid": -3, "mitral": 0},
    "diastolic_leak": {"aortic": -2, "pulmonic": -4, "tricuspid": 0, "mitral": -5},
    "narrowed_inflow": {"aortic": -12, "pulmonic": -10, "tricuspid": -6, "mitral": 0},
    "continuous": {"aortic": -4, "pulmonic": 0, "tricuspid": -4, "mitral": -8},
}

#: How each murmur cause changes the loudness of S1 and of A2 (factor at the most
#: severe end; common practice of auscultation: a loud S1 with a narrowed inflow
#: valve in sinus rhythm, a soft S1 with a leaking inflow valve, a soft A2 with a
#: tight outflow valve or a leaking outflow valve).
MURMUR_SOUND_GAINS = {
    "narrowed_inflow": {"S1": 1.6, "A2": 1.0},
    "systolic_leak": {"S1": 0.65, "A2": 1.0},
    "narrowed_outflow": {"S1": 1.0, "A2": 0.45},
    "diastolic_leak": {"S1": 0.9, "A2": 0.7},
}

#: Band in which signal-to-noise ratios are defined, Hz.
SNR_BAND_HZ = (25.0, 400.0)


@dataclass(frozen=True, eq=False)
class Simulated:
    """One synthetic recording and its exact truth.

    Attributes
    ----------
    x : ndarray of float64
        Samples in full-scale units, already quantised to the spec's bit depth.
    fs : float
        Sample rate in Hz.
    segments : tuple of (start_s, end_s, label)
        S1/systole/S2/diastole in time order, covering whole cycles.
    events : tuple of (start_s, end_s, label)
        Valve components (M1, T1, A2, P2) and extra sounds (S3, S4, click, snap).
    murmur_spans : tuple of (start_s, end_s)
        Per beat, where the murmur is within 20 dB of that beat's peak.
    truth : dict
        Everything written to ``truth.json``.
    parts : dict of ndarray
        The scaled parts before quantisation: ``cardiac`` (sounds + murmur after
        chest wall and device), ``sounds`` (heart sounds alone), ``murmur``, ``noise``
        (everything else).
    """

    x: np.ndarray
    fs: float
    segments: tuple
    events: tuple
    murmur_spans: tuple
    truth: dict
    parts: dict = field(default_factory=dict, repr=False)

    def recording(self, source: str | None = None):
        """The samples as an :class:`eddyphone.recording.Recording` (site from the spec)."""
        from eddyphone.recording import Recording

        spec = self.truth["spec"]
        return Recording(x=self.x, fs=self.fs, source=source or f"<simulated seed {spec['seed']}>",
                         original_fs=self.fs, format="simulated",
                         subtype=f"PCM_{spec['bit_depth']}", site=spec["site"],
                         metadata={"synthetic": True})


def _streams(seed: int, k: int) -> list[np.random.Generator]:
    return [np.random.default_rng(s) for s in np.random.SeedSequence(seed).spawn(k)]


def _slow(n: int, rng: np.random.Generator) -> np.ndarray:
    # unit-sd noise on the rhythm grid wandering over about ten seconds
    from eddyphone.simulate.rhythm import GRID_DT_S, _smooth_noise

    return _smooth_noise(n, GRID_DT_S, 0.1, rng)


def _within(value: float, window: tuple[float, float], margin: float = 0.002) -> float:
    # keep beat-to-beat jitter inside the published window (plus rounding to samples)
    return float(np.clip(value, window[0] + margin, window[1] - margin))


def _db(p: float) -> float:
    return float(10 * np.log10(max(p, 1e-30)))


def generate(spec: CaseSpec, *, seed: int | None = None) -> Simulated:
    """Synthesise one recording from ``spec``.

    Parameters
    ----------
    spec : CaseSpec
        What to make.
    seed : int, optional
        Overrides ``spec.seed``. Same spec and seed give the same samples.

    Returns
    -------
    Simulated
    """
    seed = int(spec.seed if seed is None else seed)
    r_rhythm, r_sound, r_murmur, r_noise, r_subject, r_drift = _streams(seed, 6)
    fs = float(spec.fs)
    n = int(round(spec.duration_s * fs))
    mean_rr = 60.0 / spec.heart_rate_bpm
    sinus = spec.rhythm == "sinus"

    breath = breathing_track(-3.0 * mean_rr - 2.0, spec.duration_s + 4.0 * mean_rr + 2.0,
                             spec.respiration_per_min, r_rhythm)
    if spec.breath_held:
        breath = BreathTrack(t=breath.t, phase=np.full_like(breath.t, 0.5),
                             volume=np.full_like(breath.t, 0.3),
                             airflow=np.zeros_like(breath.t))
    beats = beat_times(heart_rate_bpm=spec.heart_rate_bpm, rhythm=spec.rhythm,
                       duration_s=spec.duration_s,
                       rsa_swing_bpm=spec.rsa_swing_bpm if sinus else 0.0,
                       ectopic_rate=spec.ectopic_rate, breath=breath, rng=r_rhythm,
                       trend_bpm_per_min=spec.heart_rate_trend_bpm_per_min if sinus else 0.0)
    # chest-piece pressure drifts slowly: pitch and loudness of the sounds follow
    drift_t = breath.t
    drift = np.tanh(_slow(len(drift_t), r_drift))

    # --- the subject: fixed for the whole recording --------------------------------
    _, sys_sd = physiology.systolic_interval_s(spec.heart_rate_bpm, sex=spec.sex)
    subject_sys_offset = float(np.clip(r_subject.normal(0, 1), -1.5, 1.5)) * sys_sd
    s1_base = float(np.clip(r_subject.normal(*physiology.S1_DURATION_S), 0.085, 0.165))
    s2_base = float(np.clip(r_subject.normal(*physiology.S2_DURATION_S), 0.065, 0.13))
    m1_t1 = r_subject.uniform(*physiology.S1_SPLIT_S)
    split_lo = r_subject.uniform(*physiology.S2_SPLIT_EXPIRATION_S)
    split_hi = r_subject.uniform(0.04, physiology.S2_SPLIT_INSPIRATION_S[1] - 0.01)
    fixed_split = r_subject.uniform(0.045, 0.065)
    s3_delay = r_subject.uniform(*physiology.S3_AFTER_A2_S)
    s4_lead = r_subject.uniform(*physiology.S4_BEFORE_S1_S)
    click_delay = r_subject.uniform(*physiology.EJECTION_CLICK_AFTER_S1_S)
    os_lo, os_hi = physiology.OPENING_SNAP_AFTER_A2_S
    plan = None
    if spec.murmur is not None and spec.murmur.cause != "none":
        plan = plan_murmur(spec.murmur)
    if plan is not None and plan.cause == "narrowed_inflow":
        # higher inflow velocity = higher atrial pressure = earlier opening
        snap_delay = float(np.clip(0.12 - 0.025 * (plan.peak_velocity_m_s - 1.0), os_lo, os_hi))
    else:
        snap_delay = r_subject.uniform(0.07, os_hi)
    timbres = {k: Timbre.draw(k, r_subject) for k in
               ("S1a", "M1", "T1", "A2", "P2", "S3", "S4", "click", "snap")}
    m1_lead = r_subject.uniform(0.005, 0.015)
    site = SITE_LEVELS[spec.site]
    s1_cause, a2_cause = _cause_gains(plan, sinus)

    # --- heart sounds, beat by beat --------------------------------------------------
    sounds = np.zeros(n)
    beat_rows: list[dict] = []
    events: list[tuple[float, float, str]] = []
    onsets, rrs = beats.s1_onset_s, beats.rr_s
    for i, (s1, rr) in enumerate(zip(onsets[:-1], rrs, strict=True)):
        rr_prev = float(rrs[i - 1]) if i > 0 else float(rr)
        premature = bool(beats.premature[i])
        hr_for_systole = 60.0 / rr_prev
        sys_mean, _ = physiology.systolic_interval_s(float(np.clip(hr_for_systole, 30, 240)),
                                                     sex=spec.sex)
        # sound durations shrink a little with short cycles; within one cycle S1 takes at
        # most 28% and S2 22%, leaving room for systole and diastole (our own bounds)
        shrink = float(np.clip((rr / 0.8) ** 0.25, 0.8, 1.05))
        s1_dur = min(s1_base * shrink * (1 + r_sound.normal(0, 0.05)), 0.28 * rr)
        t1_delay = float(np.clip(m1_t1 + r_sound.normal(0, 0.002), *physiology.S1_SPLIT_S))
        comp1 = max(s1_dur - t1_delay - m1_lead, 0.03)
        s1_total = m1_lead + t1_delay + comp1
        vol = float(np.clip(breath.at(s1 + sys_mean), 0, 1))
        soften = 1.0 - spec.respiratory_loudness * vol
        if spec.s2_split == "physiological":
            split = split_lo + (split_hi - split_lo) * vol + r_sound.normal(0, 0.002)
        elif spec.s2_split == "fixed":
            split = fixed_split + r_sound.normal(0, 0.002)
        elif spec.s2_split == "paradoxical":
            # aortic closure delayed behind pulmonic: wide on expiration, narrow on
            # inspiration (common practice)
            split = split_hi - (split_hi - split_lo) * vol + r_sound.normal(0, 0.002)
        else:
            split = r_sound.uniform(0.0, 0.008)
        split = max(split, 0.0)
        comp2 = max(s2_base * shrink - 0.4 * split, 0.045)
        if split + comp2 > 0.22 * rr:
            f = 0.22 * rr / (split + comp2)
            split, comp2 = split * f, comp2 * f
        sys = sys_mean + subject_sys_offset + r_sound.normal(0, 0.004)
        sys_lo = s1_total + max(0.02, 0.05 * rr)
        sys_hi = rr - (split + comp2) - max(0.04, 0.1 * rr)
        sys = float(np.clip(sys, sys_lo, sys_hi))
        # loudness: S1 follows the preceding filling time in irregular rhythms
        if sinus:
            g1 = 1.0 + r_sound.normal(0, 0.06)
        else:
            g1 = float(np.clip((mean_rr / rr_prev) ** 0.5, 0.6, 1.6))
            g1 *= 1 + r_sound.normal(0, 0.08)
        d_beat = float(np.interp(s1, drift_t, drift)) * spec.timbre_drift
        ps = 1.0 + d_beat
        g1 *= soften * s1_cause * (1.0 + 1.5 * d_beat)
        g2 = ((1.0 + r_sound.normal(0, 0.06)) * (0.5 if premature else 1.0) * soften
              * (1.0 + 1.5 * d_beat))
        s1a = add_component(sounds, fs, s1, comp1 * 0.7, 0.2 * site["S1"] * g1, timbres["S1a"],
                            r_sound, pitch_scale=ps)
        m1 = add_component(sounds, fs, s1 + m1_lead, comp1, site["S1"] * g1, timbres["M1"],
                           r_sound, pitch_scale=ps)
        t1 = add_component(sounds, fs, s1 + m1_lead + t1_delay, comp1,
                           site["S1"] * site["T1"] * g1, timbres["T1"], r_sound,
                           pitch_scale=ps)
        a2_at, p2_at = (s1 + sys + split, s1 + sys) if spec.s2_split == "paradoxical" else (
            s1 + sys, s1 + sys + split)
        a2 = add_component(sounds, fs, a2_at, comp2, site["S2"] * g2 * a2_cause,
                           timbres["A2"], r_sound, pitch_scale=ps)
        p2 = add_component(sounds, fs, p2_at, comp2, site["S2"] * site["P2"] * g2,
                           timbres["P2"], r_sound, pitch_scale=ps)
        nxt = s1 + rr
        row = {
            "index": i, "s1_start_s": s1a[0], "s1_end_s": max(m1[1], t1[1]),
            "s2_start_s": min(a2[0], p2[0]), "s2_end_s": max(a2[1], p2[1]),
            "next_s1_s": float(round(nxt * fs) / fs), "rr_s": float(rr), "rr_prev_s": rr_prev,
            "premature": premature, "hr_for_systole_bpm": hr_for_systole,
            "systolic_interval_s": min(a2[0], p2[0]) - s1a[0],
            "systolic_interval_expected_s": sys_mean,
            "m1_s": m1[0], "t1_s": t1[0], "a2_s": a2[0], "p2_s": p2[0],
            "s1_split_s": t1[0] - m1[0], "s2_split_s": p2[0] - a2[0],
            "lung_volume": vol, "inspiration": bool(breath.inspiring(s1 + sys)),
            "s1_gain": float(site["S1"] * g1), "s2_gain": float(site["S2"] * g2),
        }
        pep_mean, _ = physiology.pre_ejection_period_s(float(np.clip(hr_for_systole, 30, 240)))
        row["ejection_s"] = m1[0] + float(np.clip(pep_mean - physiology.Q_TO_M1_S, 0.02,
                                                  0.5 * (a2[0] - m1[0])))
        row["mitral_open_s"] = a2[0] + snap_delay
        for label, iv in (("M1", m1), ("T1", t1), ("A2", a2), ("P2", p2)):
            events.append((iv[0], iv[1], label))
        s2_end = row["s2_end_s"]
        lows = site["low"]
        s3_iv = None
        if spec.s3:
            on = a2[0] + _within(s3_delay + r_sound.normal(0, 0.004), physiology.S3_AFTER_A2_S)
            d = max(r_sound.normal(*physiology.S3_DURATION_S), 0.025)
            if on > s2_end + 0.01 and on + d < nxt - 0.06:
                s3_iv = add_component(sounds, fs, on, d, 0.35 * lows * (1 + r_sound.normal(0, 0.1)),
                                      timbres["S3"], r_sound)
                events.append((s3_iv[0], s3_iv[1], "S3"))
        if spec.s4 and sinus and not premature:
            d = max(r_sound.normal(*physiology.S4_DURATION_S), 0.025)
            on = nxt - _within(s4_lead + r_sound.normal(0, 0.004), physiology.S4_BEFORE_S1_S)
            clear = s3_iv is None or on > s3_iv[1] + 0.02
            if on > s2_end + 0.06 and clear and on + d <= nxt:
                iv = add_component(sounds, fs, on, d, 0.35 * lows * (1 + r_sound.normal(0, 0.1)),
                                   timbres["S4"], r_sound)
                events.append((iv[0], iv[1], "S4"))
        if spec.ejection_click:
            on = s1a[0] + _within(click_delay + r_sound.normal(0, 0.003),
                                 physiology.EJECTION_CLICK_AFTER_S1_S)
            d = r_sound.uniform(0.012, 0.022)
            if on + d < a2[0] - 0.03:
                iv = add_component(sounds, fs, on, d, 0.7 * max(site["S2"], 0.7) * g2,
                                   timbres["click"], r_sound)
                events.append((iv[0], iv[1], "click"))
        if spec.opening_snap:
            on = a2[0] + _within(snap_delay + r_sound.normal(0, 0.003),
                                 physiology.OPENING_SNAP_AFTER_A2_S)
            d = r_sound.uniform(0.015, 0.028)
            if on > a2[0] + 0.03 and on + d < nxt - 0.08:
                iv = add_component(sounds, fs, on, d, 0.6 * (1 + r_sound.normal(0, 0.08)),
                                   timbres["snap"], r_sound)
                events.append((iv[0], iv[1], "snap"))
        beat_rows.append(row)

    # reference loudness: RMS of S1 over its extent, averaged over beats inside
    inside = [b for b in beat_rows if b["s1_start_s"] >= 0 and b["next_s1_s"] <= spec.duration_s]
    s1_power = []
    for b in inside:
        a, z = int(round(b["s1_start_s"] * fs)), int(round(b["s1_end_s"] * fs))
        s1_power.append(np.mean(sounds[a:z] ** 2))
    s1_rms = float(np.sqrt(np.mean(s1_power))) if s1_power else float(np.abs(sounds).max() / 3)
    # murmur levels refer to the S1 this site would have without the cause's own change
    # of S1 loudness, so a soft S1 does not make the jet itself quieter
    s1_rms /= s1_cause

    # --- murmur --------------------------------------------------------------------
    murmur = np.zeros(n)
    murmur_truth: dict = {"present": False, "cause": "none"}
    spans: list[tuple[float, float]] = []
    if plan is not None:
        site_db = MURMUR_SITE_DB[plan.cause][spec.site]
        unit, spans, profiles = render_murmur(plan, beat_rows, n, fs, r_murmur, sinus=sinus,
                                              mean_rr_s=mean_rr)
        gain = s1_rms * 10 ** ((plan.level_db_re_s1 - 10 * np.log10(plan.relative_power)
                                + site_db) / 20) if plan.relative_power > 0 else 0.0
        murmur = unit * gain
        murmur_truth = _murmur_truth(plan, murmur, sounds, beat_rows, spans, profiles, fs,
                                     spec, site_db, s1_rms, sinus, s1_cause, a2_cause)

    # --- body, chest wall, device --------------------------------------------------
    ripple = chain.draw_ripple(spec.device_ripple_db, r_noise)

    def device(sig: np.ndarray, name: str = spec.device) -> np.ndarray:
        return chain.apply_device(sig, fs, name, ripple=ripple)

    cutoff = spec.chest_wall_cutoff_hz
    cardiac = device(chain.chest_wall(sounds + murmur, fs, cutoff))
    murmur_dev = device(chain.chest_wall(murmur, fs, cutoff)) if plan is not None else np.zeros(n)
    p_card = chain.band_power(cardiac, fs, SNR_BAND_HZ)

    t = np.arange(n) / fs
    airflow = breath.at(t, "airflow")
    slope = r_noise.uniform(0.5, 2.0)
    bg = chain.coloured_noise(n, fs, slope, r_noise)
    br = chain.chest_wall(chain.breath_noise(n, fs, airflow, r_noise), fs, cutoff)
    br /= br.std() + 1e-20
    sp = chain.speech_noise(n, fs, r_noise) if spec.speech > 0 else np.zeros(n)
    w_bg = max(0.1, 1.0 - spec.breathing - spec.speech)
    # stationary noise: body and room background and breath sounds through the chest
    # piece; room speech also leaks in around it (airborne, phone-like band)
    comp = {
        "background": device(np.sqrt(w_bg) * bg),
        "breathing": device(np.sqrt(spec.breathing) * br),
        "speech": np.sqrt(spec.speech) * (device(sp) + 0.5 * device(sp, "phone")),
    }
    stationary = comp["background"] + comp["breathing"] + comp["speech"]
    stationary += r_noise.standard_normal(n) * 1e-3 * np.sqrt(
        chain.band_power(stationary, fs, SNR_BAND_HZ) + 1e-30)
    if spec.noise_wander_db > 0:
        # the room and the body are not steady: the background level drifts over seconds
        # (the mean power, and so the SNR, stays as asked)
        level = _slow(len(breath.t), r_drift)
        level = 10 ** (spec.noise_wander_db * np.tanh(level) / 20)
        level = np.interp(t, breath.t, level)
        stationary = stationary * level
        comp = {k: v * level for k, v in comp.items()}
    scale = np.sqrt(p_card / max(chain.band_power(stationary, fs, SNR_BAND_HZ), 1e-30)
                    * 10 ** (-spec.snr_db / 10))
    stationary *= scale
    comp = {k: v * scale for k, v in comp.items()}
    peak_sounds = np.abs(device(sounds)).max()
    fr_events: list = []
    comp["friction"] = np.zeros(n)
    if spec.friction_per_min > 0:
        fr, fr_events = chain.friction_bursts(n, fs, spec.friction_per_min, r_noise)
        if fr_events:
            fr = device(fr)
            comp["friction"] = (fr / (np.abs(fr).max() + 1e-20) * np.abs(cardiac).max()
                                * r_noise.uniform(1.0, 4.0))
    comp["hum"] = np.zeros(n)
    if spec.hum_hz:
        comp["hum"] = chain.hum(n, fs, spec.hum_hz, r_noise) * np.sqrt(p_card) * 10 ** (
            spec.hum_db / 20)
    comp["motion"] = np.zeros(n)
    if spec.precordial_motion > 0:
        raw = _precordial_motion(beat_rows, n, fs, sinus)
        raw *= spec.precordial_motion * np.abs(sounds).max() / (np.abs(raw).max() + 1e-20)
        comp["motion"] = device(raw)
    comp["lung"] = np.zeros(n)
    lung_events: list = []
    if spec.adventitious != "none":
        lung, lung_events = chain.adventitious_sounds(n, fs, spec.adventitious, airflow,
                                                      breath.at(t, "phase"), r_noise)
        lung = device(chain.chest_wall(lung, fs, cutoff))
        comp["lung"] = (lung / (np.abs(lung).max() + 1e-20) * peak_sounds
                        * 10 ** (spec.adventitious_db / 20))
    noise = stationary + comp["friction"] + comp["hum"] + comp["motion"] + comp["lung"]
    y = cardiac + noise
    levels_db = {k: _db(chain.band_power(v, fs, SNR_BAND_HZ) / p_card) if np.any(v) else None
                 for k, v in comp.items()}

    # --- gain, wander, offset, clipping, quantisation --------------------------------
    wander = np.ones(n)
    if spec.gain_wander_db > 0:
        slow = chain.coloured_noise(n, fs, 0.0, r_noise)
        slow = signal.sosfiltfilt(signal.butter(2, 0.3, fs=fs, output="sos"), slow)
        slow /= np.abs(slow).max() + 1e-20
        wander = 10 ** (spec.gain_wander_db * slow / 20)
    y = y * wander
    peak = np.abs(y).max()
    gain = 10 ** (spec.peak_dbfs / 20) / peak * 10 ** (spec.overdrive_db / 20)
    y = y * gain + spec.dc_offset
    clipped = float(np.mean(np.abs(y) >= 1.0))
    x = chain.quantise(y, spec.bit_depth)
    gain = gain * wander

    # --- segments covering whole cycles inside the recording ------------------------
    segments: list[tuple[float, float, str]] = []
    for b in inside:
        segments += [(b["s1_start_s"], b["s1_end_s"], "S1"),
                     (b["s1_end_s"], b["s2_start_s"], "systole"),
                     (b["s2_start_s"], b["s2_end_s"], "S2"),
                     (b["s2_end_s"], b["next_s1_s"], "diastole")]
    ev = tuple(sorted((float(a), float(b), lab) for a, b, lab in events
                      if a >= 0 and b <= spec.duration_s))
    sp_in = tuple((float(a), float(b)) for a, b in spans
                  if np.isfinite(a) and a >= 0 and b <= spec.duration_s)

    achieved = _db(p_card / chain.band_power(stationary, fs, SNR_BAND_HZ))
    truth = {
        "schema_version": TRUTH_SCHEMA_VERSION,
        "generator": f"eddyphone.simulate {__version__}",
        "synthetic": True,
        "seed": seed,
        "spec": spec.to_dict(),
        "recording": {"fs_hz": fs, "duration_s": n / fs, "n_samples": n,
                      "bit_depth": spec.bit_depth,
                      "peak_dbfs": _db(float(np.max(np.abs(x))) ** 2),
                      "clipped_fraction": clipped, "site": spec.site},
        "rhythm": {
            "rhythm": spec.rhythm,
            "heart_rate_bpm": float(60.0 / np.mean([b["rr_s"] for b in inside]))
            if inside else spec.heart_rate_bpm,
            "heart_rate_spec_bpm": spec.heart_rate_bpm,
            "n_beats": len(inside),
            "n_premature": int(sum(b["premature"] for b in inside)),
            "rr_s": [b["rr_s"] for b in inside],
            "respiration_per_min": spec.respiration_per_min,
            "systolic_interval_source": "Weissler et al. 1968 QS2 regression minus Q-M1 delay "
                                        "(eddyphone.physiology.systolic_interval_s)",
            "subject_systolic_offset_s": subject_sys_offset,
        },
        "beats": [_round_row(b) for b in inside],
        "segments": [[a, b, lab] for a, b, lab in segments],
        "events": [[a, b, lab] for a, b, lab in ev],
        "murmur": murmur_truth,
        "noise": {
            "snr_db": achieved, "snr_band_hz": list(SNR_BAND_HZ),
            "snr_all_noise_db": _db(p_card / chain.band_power(noise, fs, SNR_BAND_HZ)),
            "background_slope": slope, "breathing_weight": spec.breathing,
            "speech_weight": spec.speech,
            "hum_hz": spec.hum_hz, "hum_db_re_cardiac": spec.hum_db if spec.hum_hz else None,
            "friction_bursts": [[a, b, k] for a, b, k in fr_events],
            "adventitious": spec.adventitious,
            "adventitious_events": [[a, b, k] for a, b, k in lung_events],
            "levels_db_re_cardiac": levels_db,
            "gain_wander_db": spec.gain_wander_db, "dc_offset": spec.dc_offset,
            "precordial_motion": spec.precordial_motion,
        },
        "device": {"response": spec.device, "note": chain.DEVICE_NOTES[spec.device],
                   "ripple_db": spec.device_ripple_db,
                   "group_delay_ms": chain.group_delay_ms(fs, spec.device, (50.0, 150.0),
                                                          ripple=ripple),
                   "chest_wall_cutoff_hz": spec.chest_wall_cutoff_hz},
    }
    sounds_dev = cardiac - murmur_dev if plan is not None else cardiac
    parts = {"cardiac": cardiac * gain, "sounds": sounds_dev * gain, "murmur": murmur_dev * gain,
             "noise": noise * gain}
    if plan is not None:
        mnr = murmur_to_noise_db(parts["murmur"], parts["noise"], fs, murmur_truth["spans"])
        carried, why = audibility(murmur_truth["level_db_re_s1"], mnr, GRADE_EDGES_DB[0])
        murmur_truth.update({"murmur_to_noise_db": mnr, "audible_in_recording": carried,
                             "inaudible_reason": why})
    else:
        murmur_truth.update({"murmur_to_noise_db": None, "audible_in_recording": False,
                             "inaudible_reason": "no murmur"})
    return Simulated(x=x, fs=fs, segments=tuple(segments), events=ev, murmur_spans=sp_in,
                     truth=truth, parts=parts)


def _cause_gains(plan, sinus: bool) -> tuple[float, float]:
    """S1 and A2 loudness factors for a murmur cause, scaled by severity (0-1)."""
    if plan is None or plan.cause not in MURMUR_SOUND_GAINS:
        return 1.0, 1.0
    g = MURMUR_SOUND_GAINS[plan.cause]
    if plan.cause == "narrowed_outflow":
        severity = float(np.clip((plan.peak_velocity_m_s - 2.5) / 2.0, 0.0, 1.0))
    elif plan.cause == "narrowed_inflow":
        severity = float(np.clip((plan.peak_velocity_m_s - 1.2) / 1.0, 0.0, 1.0))
        if not sinus:
            severity *= 0.5  # no atrial kick: the leaflets are not held wide open
    else:
        severity = float(np.clip(plan.diameter_m / 0.006, 0.0, 1.0))
    return (1.0 + (g["S1"] - 1.0) * severity, 1.0 + (g["A2"] - 1.0) * severity)


def _precordial_motion(beat_rows: list[dict], n: int, fs: float, sinus: bool) -> np.ndarray:
    """Slow chest-wall movement with each beat (apical impulse), before the device.

    A systolic outward thrust from S1 to just after A2, a small rapid-filling wave in
    early diastole and, in sinus rhythm, an atrial wave before S1 (the shape of an
    apexcardiogram, common practice), all smooth and below about 20 Hz.
    """
    t = np.arange(n) / fs
    y = np.zeros(n)
    for b in beat_rows:
        s1, a2, nxt = b["s1_start_s"], b["a2_s"], b["next_s1_s"]
        for centre, width, height in (((s1 + a2) / 2, (a2 - s1) / 2.2, 1.0),
                                      (a2 + 0.14, 0.04, 0.3),
                                      (nxt - 0.08, 0.03, 0.25 if sinus else 0.0)):
            lo = max(int((centre - 4 * width) * fs), 0)
            hi = min(int((centre + 4 * width) * fs), n)
            if hi > lo and height > 0:
                y[lo:hi] += height * np.exp(-0.5 * ((t[lo:hi] - centre) / width) ** 2)
    return y - y.mean()


def _round_row(row: dict) -> dict:
    return {k: (round(v, 6) if isinstance(v, float) else v) for k, v in row.items()}


def _murmur_truth(plan, murmur, sounds, beat_rows, spans, profiles, fs, spec, site_db, s1_rms,
                  sinus, s1_cause, a2_cause) -> dict:
    from eddyphone.simulate.murmurs import pitch_word, spectrum_summary

    fb = min(plan.break_frequency_hz, 0.4 * fs)
    summary = spectrum_summary(fb, fs, chest_wall_cutoff_hz=spec.chest_wall_cutoff_hz,
                               tone_hz=plan.tone_hz)
    source = spectrum_summary(fb, fs)
    env = np.abs(murmur)
    # smooth envelope (20 ms RMS) for the profile measurement
    k = max(int(0.02 * fs), 1)
    env = np.sqrt(np.convolve(env**2, np.ones(k) / k, mode="same"))
    fr = []
    inside = [(b, p) for b, p in zip(beat_rows, profiles, strict=True)
              if b["s1_start_s"] >= 0 and b["next_s1_s"] <= spec.duration_s]
    for b, _ in inside:
        if plan.phase == "systolic":
            win = (b["s1_end_s"], b["s2_start_s"])
        elif plan.phase == "diastolic":
            win = (b["s2_end_s"], b["next_s1_s"])
        else:
            win = (b["s1_start_s"], b["next_s1_s"])
        f = profile_fractions(env, fs, 0.0, win)
        if f is not None:
            fr.append(f)
    if fr:
        onset = float(np.median([f["onset"] for f in fr]))
        end = float(np.median([f["end"] for f in fr]))
        peak = float(np.median([f["peak"] for f in fr]))
        prof = np.median([f["profile_db"] for f in fr], axis=0)
        measured_timing = "continuous" if plan.phase == "continuous" else \
            timing_from_fractions(onset, end)
        measured_shape = shape_from_profile(prof)
    else:
        onset = end = peak = float("nan")
        prof = np.full(10, np.nan)
        measured_timing = measured_shape = None
    levels = [p["peak_level_db_re_reference"] for _, p in inside
              if p["peak_level_db_re_reference"] is not None]
    spread = float(np.std(levels)) if levels else None
    level = plan.level_db_re_s1 + site_db
    from eddyphone.simulate.murmurs import grade_from_level

    accent = plan.cause == "narrowed_inflow" and sinus
    return {
        "present": bool(plan.audible and plan.relative_power > 0),
        "cause": plan.cause,
        "phase": plan.phase,
        "timing": plan.timing,
        "shape": plan.shape,
        "presystolic_accent": accent,
        "measured": {"timing": measured_timing, "shape": measured_shape,
                     "onset_fraction": onset, "end_fraction": end, "peak_fraction": peak,
                     "profile_db": [float(v) for v in prof],
                     "window": {"systolic": "S1 end to S2 start",
                                "diastolic": "S2 end to next S1 start",
                                "continuous": "S1 start to next S1 start"}[plan.phase]},
        "quality": plan.quality,
        "tone_hz": plan.tone_hz,
        "pitch": pitch_word(summary["centre_hz"]),
        "centre_hz": summary["centre_hz"],
        "pitch_band_hz": summary["band_hz"],
        "pitch_reference": "at the chest surface: source (and shed tone) after the chest "
                           "wall, before the device",
        "pitch_source": pitch_word(source["centre_hz"]),
        "centre_hz_source": source["centre_hz"],
        "pitch_band_hz_source": source["band_hz"],
        "break_frequency_hz": plan.break_frequency_hz,
        "level_db_re_s1": level,
        "level_db_re_s1_at_reference_site": plan.level_db_re_s1,
        "site_offset_db": site_db,
        "grade": grade_from_level(level),
        "grade_convention": "our own: murmur peak RMS re the RMS of a normal S1 at this site, "
                            "edges -20/-13/-6/0/+6 dB; grades IV+ would need a palpable thrill",
        "s1_gain_from_cause": s1_cause,
        "a2_gain_from_cause": a2_cause,
        "beat_level_sd_db": spread,
        "consistency": "varies with preceding cycle" if (not sinus and plan.phase == "systolic"
                                                        and plan.cause != "systolic_leak")
        else "consistent",
        "s1_rms_fs": s1_rms,
        "physics": plan.to_dict(),
        "spans": [[float(a), float(b)] for a, b in spans
                  if np.isfinite(a) and a >= 0 and b <= spec.duration_s],
    }


__all__ = ["Simulated", "generate", "PHASE"]
