"""Which way round the decoded S1/S2 labels are.

When systole and diastole are nearly equally long a decoding can come out mirrored
(every S1 called S2 and back). Four cues vote on the labels as decoded.

Public API
----------
swap_evidence(starts, ends, states, tilt, ffs, loglik=None) -> float
swap_cues(starts, ends, states, tilt, ffs, loglik=None) -> dict
"""

from __future__ import annotations

import numpy as np

from eddyphone.condition import median, percentiles
from eddyphone.physiology import systolic_interval_s
from eddyphone.segment.halving import sound_intervals as _intervals


def swap_evidence(starts: np.ndarray, ends: np.ndarray, states: np.ndarray,
                   tilt: np.ndarray, ffs: float, loglik: np.ndarray | None = None) -> float:
    """Evidence (> 0) that the decoded S1/S2 labels are the right way round."""
    return sum(swap_cues(starts, ends, states, tilt, ffs, loglik).values())


def _winsorised_sd(v: np.ndarray) -> float:
    """Standard deviation with values beyond the 10th and 90th percentiles pulled in to
    them: a premature beat or two does not decide it, and unlike a median it does not
    fall to zero on 20-ms frames."""
    lo, hi = percentiles(v, (10.0, 90.0))
    return float(np.std(np.clip(v, lo, hi)))


def swap_cues(starts: np.ndarray, ends: np.ndarray, states: np.ndarray,
               tilt: np.ndarray, ffs: float, loglik: np.ndarray | None = None
               ) -> dict[str, float]:
    """The cues of :func:`swap_evidence`, each > 0 for the labels as decoded.

    Four cues, each clipped to +/-3: timing (systole shorter than diastole by the
    margin the Weissler regression expects at this rate), stability (the systolic
    interval varies less than the diastolic one when the rhythm varies; spreads
    winsorised at 10/90 %, so a few premature beats cannot turn it), pitch (S2
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
    stability = 0.0
    sd_s, sd_d = _winsorised_sd(sys), _winsorised_sd(dia)
    if len(sys) >= 4 and max(sd_s, sd_d) > 0.015:
        stability = float(np.clip(np.log((sd_d + 0.005) / (sd_s + 0.005)) / 0.5, -3, 3))
    m1, m2 = tilt[frame_state == 0], tilt[frame_state == 2]
    pitch = 0.0
    if len(m1) and len(m2):
        pitch = float(np.clip((np.mean(m2) - np.mean(m1)) / 0.3, -3, 3))
    return {"timing": timing, "stability": stability, "pitch": pitch, "emission": emission}
