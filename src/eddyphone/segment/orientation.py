"""Which way round the decoded S1/S2 labels are.

When systole and diastole are nearly equally long a decoding can come out mirrored
(every S1 called S2 and back). Four cues vote on the labels as decoded.

Public API
----------
swap_evidence(starts, ends, states, tilt, ffs, loglik=None, signal=None) -> float
swap_cues(starts, ends, states, tilt, ffs, loglik=None, signal=None) -> dict
sound_times(starts, ends, ffs, signal=None) -> ndarray
"""

from __future__ import annotations

import numpy as np

from eddyphone.condition import median
from eddyphone.physiology import systolic_interval_s
from eddyphone.segment.halving import sound_intervals as _intervals


def swap_evidence(starts: np.ndarray, ends: np.ndarray, states: np.ndarray,
                   tilt: np.ndarray, ffs: float, loglik: np.ndarray | None = None,
                   signal: tuple[np.ndarray, int] | None = None) -> float:
    """Evidence (> 0) that the decoded S1/S2 labels are the right way round."""
    return sum(swap_cues(starts, ends, states, tilt, ffs, loglik, signal).values())


def sound_times(starts: np.ndarray, ends: np.ndarray, ffs: float,
                signal: tuple[np.ndarray, int] | None = None) -> np.ndarray:
    """Time in s of each sound: the centre of its energy (squared samples from one
    frame before to one frame after the segment) when ``signal`` = (samples, samples
    per frame) is given, to a fraction of a frame; else its first frame."""
    if signal is None:
        return starts / ffs
    x, hop = signal
    n_frames = len(x) // hop
    power = np.square(x[:n_frames * hop]).reshape(n_frames, hop)
    energy = power.sum(axis=1)
    # moment of each frame about sample 0 of the signal
    moment = power @ np.arange(hop, dtype=float) + energy * hop * np.arange(n_frames)
    energy = np.concatenate([[0.0], np.cumsum(energy)])
    moment = np.concatenate([[0.0], np.cumsum(moment)])
    a = np.clip(starts - 1, 0, n_frames)
    b = np.clip(ends + 1, 0, n_frames)
    total = energy[b] - energy[a]
    centre = np.where(total > 0, (moment[b] - moment[a]) / np.maximum(total, 1e-300),
                      0.5 * (a + b) * hop)
    return centre / (hop * ffs)


def _stability(starts: np.ndarray, ends: np.ndarray, states: np.ndarray, ffs: float,
               signal: tuple[np.ndarray, int] | None) -> float:
    """Log ratio of the beat-to-beat change of S2-to-S1 against S1-to-S2 intervals.

    The change is the robust spread (1.4826 x median absolute deviation) of the
    successive differences, so slow drifts and a few premature beats do not decide
    it; intervals run between the sounds' energy centres (:func:`sound_times`).
    """
    keep = (states % 2 == 0) & (starts > 0)
    s, e, k = starts[keep], ends[keep], states[keep]
    gaps = np.diff(sound_times(s, e, ffs, signal))
    first = gaps[(k[:-1] == 0) & (k[1:] == 2)]
    second = gaps[(k[:-1] == 2) & (k[1:] == 0)]
    if len(first) < 5 or len(second) < 5:
        return 0.0

    def change(v: np.ndarray) -> float:
        d = np.diff(v)
        return 1.4826 * median(np.abs(d - median(d)))

    return float(np.log((change(second) + 0.002) / (change(first) + 0.002)))


def swap_cues(starts: np.ndarray, ends: np.ndarray, states: np.ndarray,
               tilt: np.ndarray, ffs: float, loglik: np.ndarray | None = None,
               signal: tuple[np.ndarray, int] | None = None) -> dict[str, float]:
    """The cues of :func:`swap_evidence`, each > 0 for the labels as decoded.

    Four cues, each clipped to +/-3: timing (systole shorter than diastole by the
    margin the Weissler regression expects at this rate), stability (the systolic
    interval changes less from beat to beat than the diastolic one, which takes up
    most of every RR change, common practice; measured between the sounds' energy
    centres when ``signal`` = (samples, samples per frame) is given, see
    :func:`_stability`), pitch (S2
    is higher-pitched than S1, common practice) and the emission model (log
    likelihood of the labels against the mirrored labels, per beat). The decoded
    sound durations are no cue: the duration laws give S1 the longer mean, so
    whichever sound is labelled S1 comes out longer.
    """
    sys, dia = _intervals(starts, states, ffs)
    if len(sys) < 2 or len(dia) < 2:
        return {}
    frame_state = np.repeat(states, ends - starts)
    emission = 0.0
    if loglik is not None:
        rows = np.arange(len(frame_state))
        diff = float(np.sum(loglik[rows, frame_state])
                     - np.sum(loglik[rows, (frame_state + 2) % 4]))
        emission = float(np.clip(diff / max(len(sys), 1), -3, 3))
    sys_m, dia_m = median(sys), median(dia)
    hr = 60.0 / (sys_m + dia_m)
    sys_reg = systolic_interval_s(float(np.clip(hr, 20.0, 250.0)))[0]
    expected = (60.0 / hr - sys_reg) - sys_reg
    timing = 0.0
    if abs(expected) >= 0.05:
        timing = float(np.clip((dia_m - sys_m) / 0.08, -3, 3)) * np.sign(expected)
    stability = float(np.clip(_stability(starts, ends, states, ffs, signal) / 0.3, -3, 3))
    m1, m2 = tilt[frame_state == 0], tilt[frame_state == 2]
    pitch = 0.0
    if len(m1) and len(m2):
        pitch = float(np.clip((np.mean(m2) - np.mean(m1)) / 0.3, -3, 3))
    return {"timing": timing, "stability": stability, "pitch": pitch, "emission": emission}
