"""``describe``: the findings of one recording from its segmentation."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from eddyphone.errors import InputError
from eddyphone.findings.boundaries import refine_s2_onsets
from eddyphone.findings.config import PITCH_BOUNDARIES_HZ, FindingsConfig
from eddyphone.findings.measures import (
    MIN_WINDOW_S,
    analysis_frame_s,
    beat_profiles,
    spectrogram,
)
from eddyphone.findings.murmur import find_murmurs
from eddyphone.findings.records import BeatMeasures, Findings

#: The frame length MIN_WINDOW_S was set for.
DEFAULT_FRAME_S = 0.032

#: Frames for the murmur's time course (timing and shape words) are this fraction of
#: the analysis frames, and at least MIN_TIME_FRAME_S long (octave bands from 75 Hz
#: up still hold a few frequency bins).
TIME_FRAME_RATIO = 0.5
MIN_TIME_FRAME_S = 0.008


def _usable_beats(beats: Sequence, quality) -> list:
    """Beats whose whole cycle lies in windows quality marked usable."""
    bad = []
    if quality is not None:
        bad = [(w.start_s, w.end_s) for w in getattr(quality, "windows", ())
               if not getattr(w, "usable", True)]
    out = []
    for bt in beats:
        end = bt.next_s1_onset_s if bt.next_s1_onset_s is not None else bt.s2_offset_s
        if any(a < end and bt.s1_onset_s < b for a, b in bad):
            continue
        out.append(bt)
    return out


def describe(x: np.ndarray, fs: float, segmentation, *, quality=None,
             config: FindingsConfig | None = None) -> Findings:
    """Describe murmurs and extra sounds of a conditioned, segmented recording.

    Parameters
    ----------
    x : ndarray
        Conditioned samples (:func:`eddyphone.condition.condition`).
    fs : float
        Sample rate in Hz.
    segmentation : Segmentation
        From :func:`eddyphone.segment.segment` (only ``.beats`` is used; any object
        with a ``beats`` sequence of :class:`eddyphone.segment.Beat`-like items works).
    quality : Quality, optional
        Beats touching unusable windows are left out.
    config : FindingsConfig, optional

    Returns
    -------
    Findings

    Examples
    --------
    >>> from eddyphone.findings import describe
    >>> f = describe(cond.x, cond.fs, seg)  # doctest: +SKIP
    >>> f.summary_dict()["murmur"]  # doctest: +SKIP
    'absent'
    """
    from eddyphone.findings.extra import find_extra_sounds

    cfg = config or FindingsConfig()
    x = np.asarray(x, dtype=float)
    if x.ndim != 1:
        raise InputError(None, f"x has shape {x.shape}, expected one channel",
                         "pass the 1-D conditioned samples")
    beats_all = list(getattr(segmentation, "beats", segmentation) or ())
    beats = _usable_beats(beats_all, quality)
    # murmur windows end at S2 onsets checked against the recording's S2 template
    # (a loud murmur can pull the segmenter's S2 onset early); extra sounds keep the
    # segmenter's boundaries
    mbeats, _ = refine_s2_onsets(x, fs, beats)
    frame_s = analysis_frame_s(mbeats, cfg.frame_s)
    spec = spectrogram(x, fs, frame_s=frame_s, hop_s=min(cfg.hop_s, frame_s / 4.0))
    prof = beat_profiles(spec, mbeats, cfg,
                         min_window_s=MIN_WINDOW_S * frame_s / DEFAULT_FRAME_S)
    # the murmur's time course from frames half as long (the long frames smear it
    # over several bins of a short window)
    t_frame = max(frame_s * TIME_FRAME_RATIO, MIN_TIME_FRAME_S)
    tspec = spectrogram(x, fs, frame_s=t_frame, hop_s=min(cfg.hop_s, t_frame / 4.0))
    tprof = beat_profiles(tspec, mbeats, cfg,
                          min_window_s=MIN_WINDOW_S * frame_s / DEFAULT_FRAME_S)
    search = find_murmurs(spec, prof, cfg, tprof, t_frame)
    extras = find_extra_sounds(x, fs, beats, cfg)
    murmurs, extras, notes = _resolve_extra_vs_murmur(search.murmurs, extras)

    measures = _beat_measures(prof, search, spec, fs)
    n = prof.n_beats
    present = [m for m in murmurs if m.presence == "present"]
    uncertain = [m for m in murmurs if m.presence == "uncertain"]
    if n < cfg.min_beats:
        presence = "uncertain"
        reason = (f"only {n} usable beat(s) with both windows (need {cfg.min_beats}); "
                  "record longer or with less noise")
    elif present:
        m = present[0]
        presence = "present"
        reason = (f"{m.phase} excess up to {m.snr_db:.0f} dB over the quiet parts of the "
                  f"cycle in {m.beats_with_murmur}/{m.beats_used} beats, "
                  f"{m.level_db_re_heart_sounds:.0f} dB re S1/S2")
    elif uncertain:
        m = uncertain[0]
        presence = "uncertain"
        reason = (f"a {m.phase} excess in {m.beats_with_murmur}/{m.beats_used} beats, "
                  f"{m.uncertain_reason or f'consistency {m.consistency:.0%}'}")
    else:
        presence = "absent"
        reason = (f"systolic and diastolic windows stay within {cfg.excess_db:g} dB of the "
                  f"quiet level in {n} usable beats")
        rejected = list(notes) + list(search.rejected)
        if rejected:
            reason += "; " + "; ".join(rejected[:2])
    return Findings(murmurs=murmurs, extra_sounds=extras, beat_measures=measures,
                    presence=presence, presence_reason=reason)


def _resolve_extra_vs_murmur(murmurs, extras):
    """Decide between a diastolic murmur and an S3/S4 found at the same place.

    A short (at most 40 % of diastole, or within 6 dB of its peak over at most a
    fifth of it), low-pitched (or, in plain Hz, below the low-pitch edge)
    early-diastolic excess where an S3 was found is the S3, not a murmur; likewise
    late-diastolic with an S4. A longer diastolic murmur keeps its place and the
    S3/S4 is not reported (an inflow murmur's presystolic accent looks like an S4).
    """
    from dataclasses import replace

    kinds = {e.kind for e in extras}
    keep, notes, drop_sounds = [], [], set()
    for m in murmurs:
        if m.phase in ("diastolic", "continuous"):
            # low: by the pitch word, or by its plain spectrum (the pitch word can
            # read the broadband edges of a transient as high where the floor is
            # very low, as behind a strongly tilted chest piece)
            low = m.pitch == "low" or m.centroid_hz < PITCH_BOUNDARIES_HZ[0]
            short = m.end_fraction - m.onset_fraction <= 0.4
            # or brief at its loudest (a faint unrelated excess, such as a wheeze,
            # can stretch its extent): judged where it peaks
            brief = not short and _brief_peak(m.profile)
            short_low = low and m.phase == "diastolic" and (short or brief)
            early = m.peak_fraction <= 0.34 if brief else m.onset_fraction <= 0.34
            late = m.peak_fraction >= 0.66 if brief else m.end_fraction >= 0.66
            if short_low and "S3" in kinds and early:
                notes.append("a short low-pitched early-diastolic excess is the S3")
                continue
            if short_low and "S4" in kinds and late:
                notes.append("a short low-pitched late-diastolic excess is the S4")
                continue
            drop_sounds |= {"S3", "S4"}
        keep.append(m)
    keep = [replace(m, id=f"m{i + 1}") for i, m in enumerate(keep)]
    extras = tuple(replace(e, id=f"x{i + 1}") for i, e in enumerate(
        e for e in extras if e.kind not in drop_sounds))
    return tuple(keep), extras, notes


def _brief_peak(profile, share: float = 0.2, wide_share: float = 0.25,
                tail_share: float = 0.4) -> bool:
    """True when a murmur's window profile (peak 1) looks like an S3 or S4, not a
    sustained murmur: at most ``share`` of it within 6 dB of its peak, or at most
    ``wide_share`` when no more than ``tail_share`` of it stays within 10 dB (a
    rumble trailing on after its loudest part is a murmur). An S3 or S4 lasts
    30-50 ms (``physiology.S3_DURATION_S``); smeared by the 32-ms frames and by its
    drift across beats in the time-normalised window it can cover a quarter of a
    short diastole (our own allowances)."""
    p = np.asarray(profile, dtype=float)
    if not len(p):
        return False
    near, within10 = float(np.mean(p >= 0.25)), float(np.mean(p >= 0.1))
    return near <= share + 1e-9 or (near <= wide_share + 1e-9
                                    and within10 <= tail_share + 1e-9)


def _window_spectrum_measures(spec, a: float, b: float, fs: float) -> tuple[float, float]:
    """Spectral centroid (Hz) and spectral flatness-based tonality (0 noise-like, 1
    a single tone) of the mean spectrum over one window, 25-900 Hz."""
    i0, i1 = np.searchsorted(spec.t, [a, b])
    if i1 <= i0:
        return float("nan"), float("nan")
    p = spec.power[i0:i1].mean(axis=0).astype(float)
    sel = (spec.f >= 25.0) & (spec.f <= min(900.0, 0.45 * fs))
    p = p[sel]
    tot = float(p.sum())
    if tot <= 0:
        return float("nan"), float("nan")
    centroid = float(np.sum(spec.f[sel] * p) / tot)
    # spectral flatness: geometric over arithmetic mean (1 white, 0 a line)
    flat = float(np.exp(np.mean(np.log(np.maximum(p, 1e-30)))) / np.mean(p))
    return centroid, float(np.clip(1.0 - flat, 0.0, 1.0))


def _beat_measures(prof, search, spec, fs: float) -> tuple[BeatMeasures, ...]:
    out = []
    R = prof.ratio
    hs = np.maximum(prof.s1_power.sum(axis=1), prof.s2_power.sum(axis=1))
    sys_flag = search.beat_flags.get("systolic")
    dia_flag = search.beat_flags.get("diastolic")
    for i in range(prof.n_beats):
        s1 = 10 * np.log10(max(prof.s1_power[i].sum(), 1e-30))
        s2 = 10 * np.log10(max(prof.s2_power[i].sum(), 1e-30))
        sys_p = prof.power[i, 0].sum(axis=0).mean()
        dia_p = prof.power[i, 1].sum(axis=0).mean()
        sys_c, sys_t = _window_spectrum_measures(spec, *prof.windows_s[i, 0], fs)
        dia_c, dia_t = _window_spectrum_measures(spec, *prof.windows_s[i, 1], fs)
        out.append(BeatMeasures(
            beat=int(prof.beat_index[i]), usable=True,
            s1_db=float(s1), s2_db=float(s2),
            sys_db_re_hs=float(10 * np.log10(max(sys_p, 1e-30) / max(hs[i], 1e-30))),
            dia_db_re_hs=float(10 * np.log10(max(dia_p, 1e-30) / max(hs[i], 1e-30))),
            sys_snr_db=float(10 * np.log10(max(R[i, 0].sum(axis=0).max(), 1e-30)
                                           / R.shape[2])),
            dia_snr_db=float(10 * np.log10(max(R[i, 1].sum(axis=0).max(), 1e-30)
                                           / R.shape[2])),
            sys_centroid_hz=sys_c, dia_centroid_hz=dia_c,
            sys_tonality=sys_t, dia_tonality=dia_t,
            sys_murmur=bool(sys_flag[i]) if sys_flag is not None else False,
            dia_murmur=bool(dia_flag[i]) if dia_flag is not None else False))
    return tuple(out)
