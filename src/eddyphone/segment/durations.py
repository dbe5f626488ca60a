"""State-duration distributions of the segmenter, conditioned on heart rate.

Each state's duration (in frames) is a Gaussian mixed with a small uniform floor
over its allowed range, so that unusual but real durations (an early beat, a long
pause) stay possible when the sounds clearly support them. Means follow the
published scheme of Schmidt et al. 2010 / Springer et al. 2016: S1 and S2 fixed,
systole = systolic interval - S1, diastole = beat period - systolic interval - S2.

Public functions
----------------
state_durations
    (mean_s, sd_s, min_s, max_s) of each state for one heart rate.
duration_tables
    Log probability mass and log survival tables for the Viterbi decoder.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numba
import numpy as np

STATES = ("S1", "systole", "S2", "diastole")
_SQRT2 = math.sqrt(2.0)

#: S2 lasts at most its mean plus this many sd (92 + 3 x 22 = 158 ms with the default
#: law; 8 frames at 50 Hz, where 3.5 sd gave 9). At fast irregular rates an S1 less
#: than 150 ms after the S2 before it was absorbed into one long "S2" and its beat
#: lost; a widely split S2 (two components of about 60 ms, 80 ms apart) still fits.
#: On the eight default benchmark draws heart rate within 2 bpm 915 -> 918 of 960
#: (+5 -2) and F1 at 0-10 dB 0.9511 -> 0.9521; draws 2 and 4 unchanged in heart rate,
#: F1 within +/-0.001; 2.5 sd gives the same 8 frames.
S2_MAX_SD = 3.0


@dataclass(frozen=True)
class StateDuration:
    """Duration law of one state, in seconds."""

    mean_s: float
    sd_s: float
    min_s: float
    max_s: float


def state_durations(heart_rate_bpm: float, systolic_interval_s: float, *,
                    s1_s: tuple[float, float], s2_s: tuple[float, float],
                    systole_sd_s: float, diastole_sd_fraction: float,
                    diastole_sd_floor_s: float, rr_spread_s: float = 0.0,
                    diastole_tail_s: float = 0.0,
                    ) -> tuple[StateDuration, ...]:
    """Duration laws of S1, systole, S2 and diastole for one heart rate.

    Parameters
    ----------
    heart_rate_bpm : float
        Heart rate used for the mean beat period.
    systolic_interval_s : float
        S1-onset to S2-onset interval.
    s1_s, s2_s : (float, float)
        Mean and sd of the S1 and S2 durations in seconds.
    systole_sd_s : float
        Spread of the systole duration.
    diastole_sd_fraction, diastole_sd_floor_s : float
        Diastole sd = fraction * mean + floor.
    rr_spread_s : float
        Extra spread (sd of RR, seconds) added to the diastole for irregular rhythms.
    diastole_tail_s : float
        The longest diastole is at least this much above its mean.

    Returns
    -------
    tuple of StateDuration
        In the order of :data:`STATES`.
    """
    period = 60.0 / heart_rate_bpm
    # S1 at most 2.5 sd above its mean, so that an S4 just before it stays apart.
    s1 = StateDuration(s1_s[0], s1_s[1], max(0.03, s1_s[0] - 3 * s1_s[1]),
                       s1_s[0] + 2.5 * s1_s[1])
    s2 = StateDuration(s2_s[0], s2_s[1], max(0.03, s2_s[0] - 3 * s2_s[1]),
                       s2_s[0] + S2_MAX_SD * s2_s[1])
    sys_mean = max(systolic_interval_s - s1_s[0], 0.02)
    sys_sd = systole_sd_s + 0.05 * sys_mean
    systole = StateDuration(sys_mean, sys_sd, max(0.02, sys_mean - 2.5 * sys_sd),
                            sys_mean + 4.0 * sys_sd)
    dia_mean = max(period - systolic_interval_s - s2_s[0], 0.04)
    dia_sd = float(np.hypot(diastole_sd_fraction * dia_mean + diastole_sd_floor_s,
                            rr_spread_s))
    diastole = StateDuration(dia_mean, dia_sd, max(0.04, dia_mean - 3.5 * dia_sd),
                             dia_mean + max(4.5 * dia_sd, diastole_tail_s))
    return s1, systole, s2, diastole


def duration_tables(laws: tuple[StateDuration, ...], feature_fs: float, *,
                    floor_weight: float) -> tuple[np.ndarray, np.ndarray]:
    """Log mass and log survival of each state's duration in frames.

    Parameters
    ----------
    laws : tuple of StateDuration
        One per state.
    feature_fs : float
        Frame rate in Hz.
    floor_weight : float
        Weight of the uniform floor mixed into each Gaussian (0-1).

    Returns
    -------
    log_mass, log_survival : ndarray, shape (N, D + 1)
        Column ``d`` is a duration of ``d`` frames; column 0 is impossible.
    """
    dmins = np.array([max(1, math.floor(law.min_s * feature_fs)) for law in laws])
    dmaxs = np.maximum(dmins + 1, [math.ceil(law.max_s * feature_fs) for law in laws])
    mu = np.array([law.mean_s * feature_fs for law in laws])
    sd = np.array([max(law.sd_s * feature_fs, 0.5) for law in laws])
    return _log_tables(mu, sd, dmins, dmaxs, float(floor_weight))


@numba.njit(cache=True, nogil=True)
def _log_tables(mu: np.ndarray, sd: np.ndarray, dmins: np.ndarray, dmaxs: np.ndarray,
                floor_weight: float) -> tuple[np.ndarray, np.ndarray]:
    """:func:`duration_tables` from each state's mean, sd and range in frames.

    Written out as a compiled loop: the tables are small (4 x 30-100) and numpy's
    per-call overhead made them cost as much as a Viterbi decoding.
    """
    n, width = len(mu), dmaxs.max() + 1
    log_mass = np.full((n, width), -np.inf)
    log_surv = np.full((n, width), -np.inf)
    g = np.zeros(width)
    for j in range(n):
        lo, hi = dmins[j], dmaxs[j]
        # Gaussian mass in d +/- 1/2: differences of the distribution function,
        # Phi(z) = erfc(-z / sqrt 2) / 2.
        total = 0.0
        below = 0.5 * math.erfc(-(lo - 0.5 - mu[j]) / (sd[j] * _SQRT2))
        for d in range(lo, hi + 1):
            above = 0.5 * math.erfc(-(d + 0.5 - mu[j]) / (sd[j] * _SQRT2))
            g[d] = above - below
            total += g[d]
            below = above
        uniform = 1.0 / (hi - lo + 1)
        surv = 0.0  # P(D >= d), summed from the longest duration down
        for d in range(width - 1, 0, -1):
            if lo <= d <= hi:
                p = g[d] / total if total > 0 else uniform
                mass = (1.0 - floor_weight) * p + floor_weight * uniform
                surv += mass
                log_mass[j, d] = np.log(mass) if mass > 0 else -np.inf
            log_surv[j, d] = np.log(min(surv, 1.0)) if surv > 0 else -np.inf
        log_surv[j, 0] = 0.0
    return log_mass, log_surv
