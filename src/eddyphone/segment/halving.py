"""Signs that a decoding runs at half the true heart rate.

At 140-200 bpm with one of the two heart sounds too soft to hear, every audible
sound is the same sound (all S1 or all S2) and they are evenly spaced. A decoder
can then read two beats as one: "S1" and "S2" are consecutive beats' sounds and
the rate comes out halved. Three things tell such a decoding apart from a real
rhythm at that rate, each a property of the cardiac cycle, not of a device:

- half a cycle looks like a whole one: the feature envelopes correlate with
  themselves at half the decoded period at least as well as at the whole period
  (in a real cycle S1 + systole differs from S2 + diastole);
- the sounds labelled S1 and those labelled S2 do not differ in pitch, loudness
  or length (in a real cycle S2 is higher pitched and shorter than S1, common
  practice);
- the S1-to-S2 intervals vary from beat to beat as much as the S2-to-S1 intervals
  (in a real rhythm the systolic interval barely follows RR changes, which land
  in diastole: common practice).

Public API
----------
looks_halved(starts, ends, states, feats, period_frames) -> bool
too_even(starts, states, ffs) -> bool
missed_fraction(starts, ends, states, sound) -> float
sound_separation(starts, ends, states, feats) -> float
sound_intervals(starts, states, ffs) -> (systolic, diastolic intervals)
"""

from __future__ import annotations

import numpy as np

from eddyphone.condition import median
from eddyphone.physiology import systolic_interval_s
from eddyphone.rhythm import autocorrelation_at, envelope_autocorrelation

#: Feature columns (of ``emissions.FEATURE_NAMES``) whose self-similarity is compared:
#: relative homomorphic, low-band and mid-band levels and the pitch tilt.
_ENVELOPE_COLUMNS = (0, 3, 4, 6)
#: Sounds counted alike when no measure separates the two labels by this many pooled
#: standard deviations. The halved readings found separate by 0.25-1.1 (pitch tilt,
#: low- and mid-band peak). Set at 1.5 on benchmark draws 0, 1, 3 and 5-9 together
#: with the check that the doubled reading is nearly as likely as the halved one
#: (``SegmentConfig.half_rate_margin``): against 1.0 it mended one 152-bpm recording
#: and spoilt none.
ALIKE_SOUNDS_SD = 1.5
#: Evenly spaced sounds (see :func:`too_even`) are taken for one sound per beat only
#: when S1 and S2 differ by less than this: on the 71 recordings of benchmark draws 0,
#: 1, 3 and 5-9 where evenness fired, the fast rhythms read at half rate separated by
#: 0.5-1.7 sd, the real cycles at 60-95 bpm mostly by 1.9-14 (two at 0-5 dB by 0.7 and
#: 1.3). At 2.5 an 86-bpm cycle separated by 2.0 was doubled; 1.9 mended it and one
#: recording of draws 2 and 4, and changed no other.
EVEN_SOUNDS_SD = 1.9
#: S1-to-S2 intervals vary "as much" as S2-to-S1 intervals when their median change
#: from beat to beat is at least this fraction of the latter's.
ALIKE_INTERVALS = 0.35


def _half_like_whole(feats: np.ndarray, period_frames: float) -> bool:
    if len(feats) < 2 * period_frames + 2:
        return False
    diffs = []
    for col in _ENVELOPE_COLUMNS:
        ac = envelope_autocorrelation(feats[:, col], max_lag=int(period_frames) + 2)
        diffs.append(autocorrelation_at(ac, period_frames / 2.0)
                     - autocorrelation_at(ac, period_frames))
    return float(np.mean(diffs)) > 0.0


def sound_separation(starts: np.ndarray, ends: np.ndarray, states: np.ndarray,
                     feats: np.ndarray) -> float:
    """Largest separation of the S1 and S2 sounds over pitch tilt and low- and mid-band
    peak, in pooled standard deviations (inf with under three of either). Their decoded
    lengths are no measure: the duration laws give S1 the longer mean, so whichever
    sound is labelled S1 comes out longer."""
    per_label = []
    for label in (0, 2):
        sel = states == label
        if np.count_nonzero(sel) < 3:
            return float("inf")
        # per sound: mean pitch tilt, peak low band, peak mid band (reduceat over the
        # sounds' [start, end) pairs; a padding row lets an end fall on the last frame)
        padded = np.vstack([feats[:, [6, 3, 4]], np.zeros((1, 3))])
        bounds = np.column_stack([starts[sel], ends[sel]]).ravel()
        length = (ends[sel] - starts[sel])[:, None]
        tilt = np.add.reduceat(padded[:, :1], bounds, axis=0)[::2] / length
        peaks = np.maximum.reduceat(padded[:, 1:], bounds, axis=0)[::2]
        per_label.append(np.hstack([tilt, peaks]))
    first, second = per_label
    spread = np.sqrt((first.var(axis=0) + second.var(axis=0)) / 2.0) + 1e-9
    return float(np.max(np.abs(first.mean(axis=0) - second.mean(axis=0)) / spread))


def sound_intervals(starts: np.ndarray, states: np.ndarray, ffs: float
                    ) -> tuple[np.ndarray, np.ndarray]:
    """S1-onset to S2-onset and S2-onset to next S1-onset intervals, in s (segments
    starting at frame 0, cut by the start, left out)."""
    s1 = starts[(states == 0) & (starts > 0)]
    s2 = starts[(states == 2) & (starts > 0)]
    if len(s1) < 2 or len(s2) < 2:
        return np.array([]), np.array([])
    k = np.searchsorted(s2, s1)
    ok = k < len(s2)
    first = (s2[k[ok]] - s1[ok]) / ffs
    j = np.searchsorted(s1, s2)
    ok = j < len(s1)
    second = (s1[j[ok]] - s2[ok]) / ffs
    return first, second


def _intervals_alike(starts: np.ndarray, states: np.ndarray) -> bool:
    """S1-to-S2 intervals change from beat to beat as much as S2-to-S1 intervals."""
    first, second = sound_intervals(starts, states, 1.0)
    if len(first) < 4 or len(second) < 4:
        return False
    change_first = median(np.abs(np.diff(first)))
    change_second = median(np.abs(np.diff(second)))
    return change_first >= ALIKE_INTERVALS * change_second


def looks_halved(starts: np.ndarray, ends: np.ndarray, states: np.ndarray,
                 feats: np.ndarray, period_frames: float) -> bool:
    """True when a decoding at ``period_frames`` shows all three signs of half the rate.

    ``starts``, ``ends`` and ``states`` are the decoded segments in frames (states
    0-3: S1, systole, S2, diastole), ``feats`` the frame features they were decoded
    from.
    """
    return (_intervals_alike(starts, states)
            and sound_separation(starts, ends, states, feats) < ALIKE_SOUNDS_SD
            and _half_like_whole(feats, period_frames))


def missed_fraction(starts: np.ndarray, ends: np.ndarray, states: np.ndarray,
                     sound: np.ndarray) -> float:
    """Fraction of systoles and diastoles holding a sound the model did not label.

    A rate that is half the true one leaves a whole S1-S2 pair inside each of its
    diastoles. A gap "holds a sound" when at least 3 consecutive frames (60 ms at
    50 Hz) inside it have P(sound) above 0.6.
    """
    loud = sound > 0.6
    triple = np.zeros(len(sound) + 1, dtype=int)
    triple[1: max(len(sound) - 1, 1)] = loud[:-2] & loud[1:-1] & loud[2:]
    count = np.cumsum(triple)  # count[i] = triples starting before frame i
    gap = ((states == 1) | (states == 3)) & (ends - starts >= 5)
    gaps = int(np.count_nonzero(gap))
    # a triple inside frames s + 1 .. e - 2 starts at s + 1 .. e - 4
    hits = int(np.count_nonzero(count[ends[gap] - 3] - count[starts[gap] + 1] > 0))
    return hits / gaps if gaps else 0.0


def too_even(starts: np.ndarray, states: np.ndarray, ffs: float) -> bool:
    """True when "S1" and "S2" are evenly spaced although the rate says they should not be.

    At a given rate the Weissler regression fixes how unequal systole and diastole
    are (at 65 bpm diastole is about 0.2 s longer). Sounds spaced evenly where the
    regression expects a clear difference are more likely one sound per beat at
    twice the rate (a soft S2 at a fast rate) than S1 and S2 at this rate.
    """
    sys, dia = sound_intervals(starts, states, ffs)
    if len(sys) < 3 or len(dia) < 3:
        return False
    sys_m, dia_m = median(sys), median(dia)
    rr = sys_m + dia_m
    hr = 60.0 / rr
    expected_s = abs(rr - 2.0 * systolic_interval_s(float(np.clip(hr, 20.0, 250.0)))[0])
    measured_s = abs(dia_m - sys_m)
    # Even within a quarter of the expected difference (when that is over 8 % of
    # the cycle), or within about one frame (20 ms) where 40 ms or more is due.
    return ((expected_s > 0.08 * rr and measured_s < 0.25 * expected_s)
            or (expected_s >= 0.04 and measured_s <= 0.025))
