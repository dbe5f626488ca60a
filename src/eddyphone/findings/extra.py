"""Extra heart sounds: S3, S4, split S2, early-systolic ejection click, opening snap.

Each is searched for in a window fixed relative to S1 or S2 onset, taken from the
published timing windows in :mod:`eddyphone.physiology` (sources named there),
widened by a tolerance for segmentation error. In each beat the sound must stand
out from the quiet level of the same beat in its band and be separated from the
neighbouring heart sound by a dip (a distinct event, not a tail). A sound is
reported when enough usable beats show it.

Public functions
----------------
find_extra_sounds(x, fs, beats, config) -> tuple of ExtraSound
band_envelope(x, fs, band_hz, smooth_s) -> (envelope, envelope rate)
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from scipy import signal

from eddyphone import physiology as phy
from eddyphone.findings.config import FindingsConfig
from eddyphone.findings.records import ExtraSound

#: Bands (Hz): S3/S4 are low-pitched (20-60 Hz per ``physiology.S3_BAND_HZ``; the
#: conditioned signal starts at 25 Hz, so 25-70 Hz); clicks and snaps high-pitched
#: (100-300 Hz per ``physiology.CLICK_BAND_HZ``, taken as 120-400 Hz to keep clear of
#: S1/S2 energy); S2 components in 40-250 Hz (``physiology.S2_BAND_HZ``).
LOW_BAND_HZ = (25.0, 70.0)
HIGH_BAND_HZ = (120.0, 400.0)
S2_BAND_HZ = (40.0, 250.0)

#: Tolerance (s) added to each published window for segmentation boundary error.
WINDOW_TOLERANCE_S = 0.02

#: An event must rise this far (dB) above the beat's quiet level in its band ...
EVENT_DB = 6.0
#: ... and be separated from the neighbouring sound by a dip this deep (dB).
DIP_DB = 3.0
#: An opening snap is higher-pitched than A2 (snaps 100-300 Hz per
#: ``physiology.SNAP_BAND_HZ``, S2 40-200 Hz); its centroid must reach this
#: multiple of A2's (our own margin), which keeps P2 out.
SNAP_PITCH_RATIO = 1.3
#: A2 is the loudest S2-band peak within this long (s) of S2's onset: in a
#: paradoxically split S2 the aortic closure follows P2 by up to the widest split
#: (``physiology.S2_SPLIT_INSPIRATION_S``), and a snap is timed from A2, not P2.
A2_SEARCH_S = phy.S2_SPLIT_INSPIRATION_S[1]
#: The snap window opens no earlier than A2's envelope peak plus the interval's low
#: end, less this allowance (s; our own): A2 peaks some 10-30 ms after its onset, and
#: the published interval runs from the onset.
A2_ONSET_ALLOWANCE_S = 0.01
#: A2's pitch is measured on the frame centred this long (s) after its envelope
#: peak: centred on the peak itself, the frame takes in the attack and reads A2
#: higher, and a fifth of the true snaps of two benchmark draws fell under the
#: pitch ratio (measured, see docs/findings.md).
A2_PITCH_AFTER_PEAK_S = 0.005
#: An ejection click is higher-pitched than S1 (clicks 100-300 Hz, S1 25-140 Hz per
#: ``physiology``); its centroid must reach this multiple of S1's (our own margin).
CLICK_PITCH_RATIO = 1.5
#: Clicks and snaps last 10-30 ms (common practice, from memory): their envelope
#: must fall SHORT_FALL_DB within SHORT_FALL_S of the peak (a murmur onset does not).
SHORT_FALL_S = 0.03
SHORT_FALL_DB = 6.0
#: ... and their envelope's median 10-40 ms after the peak must be that far down as
#: well (our own check): the onset of a harsh systolic murmur dips as deeply for a
#: moment, but carries on (false clicks 32 -> 23 on held-out benchmark draws).
SHORT_SETTLE_S = (0.01, 0.04)
#: Above this rate (bpm) an ejection click is reported with half its confidence and a
#: caution: on the simulator's benchmark (seeds 1-7, n=600 each, its own beats) every
#: false click came at 144 bpm or faster (with the segmenter's beats 11 of 14), where
#: S1's end and a flow or ejection murmur's onset fall in the click's window, and
#: about half the clicks called there were false.
FAST_CLICK_BPM = 140.0
#: A heart sound keeps its place in the cycle: the interquartile range of its timing
#: across beats must stay within this many ms (our own limit; the simulated and
#: textbook intervals vary by a few ms at a steady rate).
MAX_TIMING_IQR_MS = 20.0
#: Fraction of usable beats that must show an extra sound for it to be reported.
MIN_FRACTION = 0.5
#: Minimum resolvable A2-P2 interval (s): closer components fuse (common practice,
#: from memory: splits under about 20-30 ms are heard as single).
MIN_SPLIT_S = 0.02
#: A2-P2 spread (10th-90th percentile, s) at or above which the split "varies".
#: Known limit: the per-beat measurement jitters, so the simulator's fixed splits read
#: "varies" in most recordings. A running median over three beats brought that to 2 of
#: 16 (seeds 1-8 at 70 and 110 bpm), but on seeds 9-16 it read 5 of 16 physiological
#: splits (truth spread 15-42 ms) as fixed, a false pathological sign; so the raw
#: spread stays, erring towards "varies".
SPLIT_VARIES_S = 0.015
#: A fixed split is heard in every beat; one heard in fewer than this fraction of the
#: beats closes in the others (single S2, as on expiration), so it is not fixed
#: (common practice).
FIXED_SPLIT_MIN_FRACTION = 0.8
#: A split is called fixed only when it stays wider than a normal expiratory split
#: (``physiology.S2_SPLIT_EXPIRATION_S``, up to 30 ms) by the measure's per-beat
#: jitter (about 5 ms, our own): a fixed split is a sign because it stays open on
#: expiration. Narrower, the measure cannot tell it from a single S2 either (one
#: closure sound's envelope has two lobes some 24 ms apart; docs/findings.md).
FIXED_SPLIT_MIN_S = phy.S2_SPLIT_EXPIRATION_S[1] + 0.005


def _split_variation(splits: list[float | None]) -> tuple[str, bool | None]:
    """Whether the A2-P2 interval varies across the recording, and how to say it.

    ``splits`` holds each beat's interval in s, None where S2 was single. A split
    missing from more than a fifth of the beats is not fixed
    (:data:`FIXED_SPLIT_MIN_FRACTION`); otherwise it varies when the 10th-90th
    percentile spread reaches :data:`SPLIT_VARIES_S`. A steady split narrower than
    :data:`FIXED_SPLIT_MIN_S` is not judged (None).
    """
    heard = sum(v is not None for v in splits)
    if heard < FIXED_SPLIT_MIN_FRACTION * len(splits):
        return (f"heard in {heard} of {len(splits)} beats, single in the others as on "
                "expiration", True)
    heard_s = np.array([v for v in splits if v is not None])
    spread = float(np.percentile(heard_s, 90) - np.percentile(heard_s, 10))
    if spread >= SPLIT_VARIES_S:
        return "varies across the recording (as with breathing)", True
    if float(np.median(heard_s)) < FIXED_SPLIT_MIN_S:
        return (f"steady but no wider than a normal expiratory split (under "
                f"{1000 * FIXED_SPLIT_MIN_S:.0f} ms), so not judged fixed", None)
    return "fixed across the recording", False


def _centroid_hz(x: np.ndarray, fs: float, t: float, frame_s: float = 0.024) -> float:
    """Spectral centroid (25-600 Hz) of a short Hann frame centred at ``t``."""
    n = max(16, int(round(frame_s * fs)))
    i0 = int(round(t * fs)) - n // 2
    if i0 < 0 or i0 + n > len(x):
        return float("nan")
    p = np.abs(np.fft.rfft(x[i0:i0 + n] * np.hanning(n), 4 * n)) ** 2
    f = np.fft.rfftfreq(4 * n, 1.0 / fs)
    sel = (f >= 25.0) & (f <= 600.0)
    return float(np.sum(f[sel] * p[sel]) / max(np.sum(p[sel]), 1e-30))


def band_envelope(x: np.ndarray, fs: float, band_hz: tuple[float, float],
                  smooth_s: float = 0.008) -> tuple[np.ndarray, float]:
    """Power envelope of one band at 1 kHz (or ``fs`` if lower).

    Zero-phase 4th-order Butterworth band-pass, squared, moving-average smoothed.
    """
    hi = min(band_hz[1], 0.45 * fs)
    sos = signal.butter(4, [band_hz[0], hi], btype="bandpass", fs=fs, output="sos")
    y = signal.sosfiltfilt(sos, np.asarray(x, dtype=float)) ** 2
    k = max(1, int(round(smooth_s * fs)))
    y = np.convolve(y, np.ones(k) / k, mode="same")
    step = max(1, int(fs // 1000))
    return y[::step], fs / step


def _seg(env: np.ndarray, rate: float, a: float, b: float) -> tuple[np.ndarray, int]:
    i0 = max(int(round(a * rate)), 0)
    i1 = min(int(round(b * rate)), len(env))
    return env[i0:i1] if i1 > i0 else env[0:0], i0


def _db(a: float, b: float) -> float:
    return 10.0 * np.log10(max(a, 1e-30) / max(b, 1e-30))


def _event(env: np.ndarray, rate: float, win: tuple[float, float], ref: float,
           anchor: tuple[float, float], fall_s: float = 0.04, fall_db: float = DIP_DB,
           settle_s: tuple[float, float] | None = None) -> tuple[float, float] | None:
    """Largest peak in ``win`` that stands EVENT_DB over ``ref``, is separated by a
    DIP_DB dip from the anchor sound (searched in ``anchor``) and falls ``fall_db``
    within ``fall_s`` (its median level over ``settle_s`` after the peak too, when
    given). Returns (peak time s, onset time s) or None."""
    seg, i0 = _seg(env, rate, *win)
    if len(seg) < 3:
        return None
    k = int(np.argmax(seg))
    if k == 0 or k == len(seg) - 1:
        return None  # a rising or falling edge, not a peak inside the window
    peak = float(seg[k])
    if _db(peak, ref) < EVENT_DB:
        return None
    tp = (i0 + k) / rate
    anc, j0 = _seg(env, rate, *anchor)
    if len(anc) == 0:
        return None
    ja = j0 + int(np.argmax(anc))
    lo, hi = sorted((ja, i0 + k))
    between = env[lo:hi + 1]
    if len(between) < 3 or _db(peak, float(between.min())) < DIP_DB:
        return None
    # fall after the peak too (a distinct event, not a rising murmur)
    after, _ = _seg(env, rate, tp, tp + fall_s)
    if len(after) > 2 and _db(peak, float(after.min())) < fall_db:
        return None
    if settle_s is not None:
        # ... and stay down: a murmur's noisy envelope dips but carries on
        later, _ = _seg(env, rate, tp + settle_s[0], tp + settle_s[1])
        if len(later) > 2 and _db(peak, float(np.median(later))) < fall_db:
            return None
    before = env[max(i0 + k - int(0.06 * rate), 0): i0 + k + 1]
    half = np.flatnonzero(before < 0.5 * peak)
    onset = (max(i0 + k - int(0.06 * rate), 0) + (half[-1] + 1 if len(half) else 0)) / rate
    return tp, onset


def _quiet_level(env: np.ndarray, rate: float, bt) -> float:
    """Quiet level of a beat in one band: 20th percentile over its two windows."""
    parts = [_seg(env, rate, bt.s1_offset_s, bt.s2_onset_s)[0]]
    if bt.next_s1_onset_s is not None:
        parts.append(_seg(env, rate, bt.s2_offset_s, bt.next_s1_onset_s)[0])
    allv = np.concatenate(parts) if parts else np.zeros(0)
    return float(np.percentile(allv, 20)) if len(allv) else float(np.median(env))


def _conf(fraction: float, n: int) -> float:
    return float(np.clip((fraction - 0.3) / 0.6, 0.0, 1.0) * min(1.0, n / 8.0))


def _split_s2(env: np.ndarray, rate: float, bt, end_s: float | None = None) -> float | None:
    """A2-P2 interval (s) from two peaks within the S2 segment (ending at ``end_s`` when
    given), or None if single."""
    end = bt.s2_offset_s + 0.02 if end_s is None else min(bt.s2_offset_s + 0.02, end_s)
    seg, i0 = _seg(env, rate, bt.s2_onset_s - 0.01, end)
    if len(seg) < 10:
        return None
    peaks, props = signal.find_peaks(seg, distance=max(1, int(MIN_SPLIT_S * rate)))
    if len(peaks) < 2:
        return None
    top = peaks[np.argsort(seg[peaks])[::-1][:2]]
    a, b = sorted(int(v) for v in top)
    if _db(min(seg[a], seg[b]), float(seg[a:b + 1].min())) < 2.0:
        return None
    if _db(float(seg[a]), float(seg[b])) > 15.0:
        return None  # second peak too small to be P2
    dt = (b - a) / rate
    return dt if MIN_SPLIT_S <= dt <= 0.1 else None


def find_extra_sounds(x: np.ndarray, fs: float, beats: Sequence,
                      config: FindingsConfig) -> tuple[ExtraSound, ...]:
    """Search every beat with a following S1 for extra sounds and aggregate.

    Parameters
    ----------
    x : ndarray
        Conditioned samples.
    fs : float
        Sample rate in Hz.
    beats : sequence of Beat
    config : FindingsConfig

    Returns
    -------
    tuple of ExtraSound
        Those seen in at least :data:`MIN_FRACTION` of the beats, ids ``x1``, ``x2``...
    """
    full = [b for b in beats if b.next_s1_onset_s is not None]
    if len(full) < config.min_beats:
        return ()
    low, rate = band_envelope(x, fs, LOW_BAND_HZ)
    high, _ = band_envelope(x, fs, HIGH_BAND_HZ)
    mid, _ = band_envelope(x, fs, S2_BAND_HZ, smooth_s=0.005)
    tol = WINDOW_TOLERANCE_S
    hits: dict[str, list[float]] = {k: [] for k in ("S3", "S4", "ejection_click",
                                                   "opening_snap")}
    splits: list[float | None] = []
    snap_onsets: list[float | None] = []  # per beat, where an opening snap starts
    for bt in full:
        s2, s1n = bt.s2_onset_s, bt.next_s1_onset_s
        # reference: the beat's quiet level, or the typical level of the window the
        # sound falls in when that is higher (a murmur there must be out-shouted)
        q_low, q_high = _quiet_level(low, rate, bt), _quiet_level(high, rate, bt)
        dia_low = float(np.median(_seg(low, rate, bt.s2_offset_s, s1n)[0]))
        dia_high = float(np.median(_seg(high, rate, bt.s2_offset_s, s1n)[0]))
        sys_high = float(np.median(_seg(high, rate, bt.s1_offset_s, s2)[0]))
        q_low = max(q_low, dia_low)
        q_dia_high, q_sys_high = max(q_high, dia_high), max(q_high, sys_high)
        # S3: 120-180 ms after A2 (S2 onset), physiology.S3_AFTER_A2_S
        lo, hi = phy.S3_AFTER_A2_S
        win = (max(s2 + lo - tol, bt.s2_offset_s), min(s2 + hi + 0.04 + tol, s1n - 0.1))
        if win[1] - win[0] > 0.02:
            ev = _event(low, rate, win, q_low, (s2, bt.s2_offset_s))
            if ev is not None:
                hits["S3"].append(1000.0 * (ev[1] - s2))
        # S4: onset 60-120 ms before S1 onset, physiology.S4_BEFORE_S1_S
        lo, hi = phy.S4_BEFORE_S1_S
        win = (max(s1n - hi - tol, bt.s2_offset_s + 0.1), s1n - 0.01)
        if win[1] - win[0] > 0.02:
            ev = _event(low, rate, win, q_low, (s1n, s1n + 0.06))
            if ev is not None:
                hits["S4"].append(1000.0 * (s1n - ev[1]))
        # ejection click: 60-100 ms after S1 onset, physiology.EJECTION_CLICK_AFTER_S1_S
        lo, hi = phy.EJECTION_CLICK_AFTER_S1_S
        win = (bt.s1_onset_s + lo, min(bt.s1_onset_s + hi + 0.02 + tol, s2 - 0.03))
        if win[1] - win[0] > 0.02:
            ev = _event(high, rate, win, q_sys_high,
                        (bt.s1_onset_s, bt.s1_onset_s + lo - tol),
                        fall_s=SHORT_FALL_S, fall_db=SHORT_FALL_DB,
                        settle_s=SHORT_SETTLE_S)
            if ev is not None:
                s1_t = bt.s1_onset_s + float(np.argmax(
                    _seg(mid, rate, bt.s1_onset_s, bt.s1_onset_s + 0.05)[0])) / rate
                if _centroid_hz(x, fs, ev[0]) >= CLICK_PITCH_RATIO * _centroid_hz(x, fs, s1_t):
                    hits["ejection_click"].append(1000.0 * (ev[1] - bt.s1_onset_s))
        # opening snap: 40-120 ms after A2, physiology.OPENING_SNAP_AFTER_A2_S; high
        # pitched, so it must stand out in the high band more than A2 itself does
        # A2 is S2's loudest component, and in a paradoxically split S2 it comes last:
        # the window opens after A2, so A2 itself is never taken for a snap
        lo, hi = phy.OPENING_SNAP_AFTER_A2_S
        a2_peak = s2 - 0.005 + float(np.argmax(
            _seg(mid, rate, s2 - 0.005, s2 + A2_SEARCH_S)[0])) / rate
        win = (max(s2 + lo + 0.01, a2_peak + lo - A2_ONSET_ALLOWANCE_S),
               min(s2 + hi + tol, s1n - 0.08))
        snap_onsets.append(None)
        if win[1] - win[0] > 0.02:
            ev = _event(high, rate, win, q_dia_high, (s2 - 0.005, a2_peak + 0.03),
                        fall_s=SHORT_FALL_S, fall_db=SHORT_FALL_DB,
                        settle_s=SHORT_SETTLE_S)
            if ev is not None:
                # higher-pitched than A2 (simulated and textbook snaps are): its
                # centroid at least SNAP_PITCH_RATIO times that of A2
                a2_pitch = _centroid_hz(x, fs, a2_peak + A2_PITCH_AFTER_PEAK_S)
                if _centroid_hz(x, fs, ev[0]) >= SNAP_PITCH_RATIO * a2_pitch:
                    hits["opening_snap"].append(1000.0 * (ev[1] - s2))
                    snap_onsets[-1] = ev[1]
        splits.append(_split_s2(mid, rate, bt))

    n = len(full)
    rate_bpm = 60.0 / float(np.median([b.next_s1_onset_s - b.s1_onset_s for b in full]))
    out: list[ExtraSound] = []
    windows = {
        "S3": (phy.S3_AFTER_A2_S, "after S2 onset",
               "physiology.S3_AFTER_A2_S (common practice, from memory)"),
        "S4": (phy.S4_BEFORE_S1_S, "before S1 onset",
               "physiology.S4_BEFORE_S1_S (common practice, from memory)"),
        "ejection_click": (phy.EJECTION_CLICK_AFTER_S1_S, "after S1 onset",
                           "physiology.EJECTION_CLICK_AFTER_S1_S (common practice, "
                           "from memory)"),
        "opening_snap": (phy.OPENING_SNAP_AFTER_A2_S, "after S2 onset",
                         "physiology.OPENING_SNAP_AFTER_A2_S (common practice, from memory)"),
    }
    for kind, times in hits.items():
        frac = len(times) / n
        if frac < MIN_FRACTION:
            continue
        iqr = float(np.subtract(*np.percentile(times, [75, 25])))
        if iqr > MAX_TIMING_IQR_MS:
            continue  # not time-locked to the cycle: noise peaks, not a heart sound
        (lo, hi), ref, src = windows[kind]
        t_med = float(np.median(times))
        if not 1000 * (lo - tol) <= t_med <= 1000 * (hi + tol):
            continue  # outside the published window (plus tolerance): something else
        details = {"window_ms": [round(1000 * lo), round(1000 * hi)],
                   "window_source": src, "tolerance_ms": round(1000 * tol),
                   "beats_with_sound": len(times), "beats_used": n,
                   "timing_sd_ms": float(np.std(times)), "timing_iqr_ms": iqr}
        conf = _conf(frac, n)
        if kind == "ejection_click" and rate_bpm > FAST_CLICK_BPM:
            conf *= 0.5
            details["caution"] = (f"possible: above {FAST_CLICK_BPM:.0f} bpm S1's end and a "
                                  "systolic murmur's onset also fall in the click's window")
        out.append(ExtraSound(id="", kind=kind, confidence=conf, timing_ms=t_med,
                              reference=ref, details=details))
    if any(e.kind == "opening_snap" for e in out):
        # a snap inside the S2 segment is not P2: in the beats that show the snap, the
        # split search ends where it starts (docs/findings.md, split S2)
        splits = [v if t is None else _split_s2(mid, rate, bt, end_s=t)
                  for v, t, bt in zip(splits, snap_onsets, full)]
    heard = [v for v in splits if v is not None]
    if len(heard) / n >= MIN_FRACTION:
        sp = np.array(heard)
        variation, varies = _split_variation(splits)
        out.append(ExtraSound(
            id="", kind="split_S2", confidence=_conf(len(sp) / n, n),
            timing_ms=float(1000 * np.median(sp)), reference="A2 to P2",
            details={"a2_p2_min_ms": float(1000 * sp.min()),
                     "a2_p2_max_ms": float(1000 * sp.max()),
                     "a2_p2_spread_ms": 1000 * float(np.percentile(sp, 90)
                                                     - np.percentile(sp, 10)),
                     "variation": variation,
                     "varies": varies,
                     "window_source": "physiology.S2_SPLIT_EXPIRATION_S / "
                                      "S2_SPLIT_INSPIRATION_S (common practice, from memory)",
                     "beats_with_split": len(sp), "beats_used": n}))
    from dataclasses import replace

    return tuple(replace(e, id=f"x{i + 1}") for i, e in enumerate(out))
