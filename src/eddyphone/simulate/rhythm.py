"""Beat times and breathing: sinus rhythm with respiratory modulation, irregular rhythm, ectopics.

Public functions
----------------
breathing_track
    Breath phase and lung volume on a coarse time grid.
beat_times
    S1 onset times of every beat that touches the recording, with flags.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Shortest beat-to-beat interval the simulator makes, s (about the ventricular
#: refractory period, from memory).
SHORTEST_RR_S = 0.26

#: Time step of the coarse grid that rhythm and breathing live on, in s.
GRID_DT_S = 0.01

#: Fraction of a breath spent breathing in (resting adults breathe in for about
#: 40% of the cycle; common practice, from memory).
INSPIRATION_FRACTION = 0.4


@dataclass(frozen=True)
class BreathTrack:
    """Breathing on a coarse grid.

    Attributes
    ----------
    t : ndarray
        Grid times in s (may start before 0).
    phase : ndarray
        Position within the current breath, 0-1; inspiration while below
        :data:`INSPIRATION_FRACTION`.
    volume : ndarray
        Lung volume above its resting level, 0 (end of expiration) to 1.
    airflow : ndarray
        Rate of change of ``volume`` in 1/s (positive breathing in).
    """

    t: np.ndarray
    phase: np.ndarray
    volume: np.ndarray
    airflow: np.ndarray

    def at(self, t: np.ndarray | float, what: str = "volume") -> np.ndarray:
        """Interpolate ``volume``, ``airflow`` or ``phase`` at times ``t`` (s)."""
        return np.interp(t, self.t, getattr(self, what))

    def inspiring(self, t: np.ndarray | float) -> np.ndarray:
        """True where the subject is breathing in at time ``t``."""
        return self.at(t, "airflow") > 0


@dataclass(frozen=True)
class Beats:
    """Timing of the beats of one recording.

    Attributes
    ----------
    s1_onset_s : ndarray
        S1 onset time of each beat in s; the last entry is the onset of the beat
        after the last one described, so that ``rr_s`` is defined for every beat.
    rr_s : ndarray
        Cycle length from each S1 onset to the next (one shorter than ``s1_onset_s``).
    premature : ndarray of bool
        Beats that came early (ectopic).
    """

    s1_onset_s: np.ndarray
    rr_s: np.ndarray
    premature: np.ndarray


def _smooth_noise(n: int, dt: float, corner_hz: float, rng: np.random.Generator) -> np.ndarray:
    """Zero-mean, unit-sd noise low-passed at ``corner_hz`` (FFT shaping)."""
    w = rng.standard_normal(n)
    spec = np.fft.rfft(w)
    f = np.fft.rfftfreq(n, dt)
    spec *= 1.0 / (1.0 + (f / corner_hz) ** 4)
    y = np.fft.irfft(spec, n)
    y -= y.mean()
    sd = y.std()
    return y / sd if sd > 0 else y


def breathing_track(t_start_s: float, t_end_s: float, rate_per_min: float,
                    rng: np.random.Generator) -> BreathTrack:
    """Breath phase, lung volume and airflow from ``t_start_s`` to ``t_end_s``.

    The breathing rate wanders by about 10% from breath to breath; the shape of
    each breath is a raised cosine in and out with :data:`INSPIRATION_FRACTION`.
    """
    t = np.arange(t_start_s, t_end_s + GRID_DT_S, GRID_DT_S)
    rate_hz = rate_per_min / 60.0 * (1.0 + 0.10 * _smooth_noise(len(t), GRID_DT_S, 0.05, rng))
    cycles = rng.uniform(0, 1) + np.cumsum(np.clip(rate_hz, 0.02, None)) * GRID_DT_S
    phase = cycles % 1.0
    ins = phase < INSPIRATION_FRACTION
    volume = np.where(
        ins,
        0.5 * (1 - np.cos(np.pi * phase / INSPIRATION_FRACTION)),
        0.5 * (1 + np.cos(np.pi * (phase - INSPIRATION_FRACTION) / (1 - INSPIRATION_FRACTION))),
    )
    depth = 1.0 + 0.15 * _smooth_noise(len(t), GRID_DT_S, 0.05, rng)
    volume = volume * depth
    airflow = np.gradient(volume, GRID_DT_S)
    return BreathTrack(t=t, phase=phase, volume=volume, airflow=airflow)


def beat_times(*, heart_rate_bpm: float, rhythm: str, duration_s: float,
               rsa_swing_bpm: float, ectopic_rate: float, breath: BreathTrack,
               rng: np.random.Generator, trend_bpm_per_min: float = 0.0) -> Beats:
    """S1 onsets of every beat from before 0 s to after ``duration_s``.

    Sinus rhythm: the instantaneous rate is the mean plus a slow wander (about 2%)
    plus respiratory sinus arrhythmia (rate rises with lung volume, peak-to-peak
    ``rsa_swing_bpm``), integrated to beat times, with a few ms of beat jitter.
    Irregular rhythm: independent RR intervals with a coefficient of variation of
    15-30%, like atrial fibrillation. Ectopic beats come at 55-75% of the cycle and
    are followed by a compensatory pause. ``trend_bpm_per_min`` makes a sinus rate drift
    steadily (recovery after exercise), centred on the mean.
    """
    mean_rr = 60.0 / heart_rate_bpm
    t0 = -2.0 * mean_rr - rng.uniform(0, mean_rr)
    t_end = duration_s + 2.0 * mean_rr
    if rhythm == "sinus":
        grid = breath.t
        hr = (heart_rate_bpm * (1.0 + 0.02 * _smooth_noise(len(grid), GRID_DT_S, 0.03, rng))
              + rsa_swing_bpm * (np.clip(breath.volume, 0, 1.2) - 0.5)
              + trend_bpm_per_min * (grid - duration_s / 2) / 60.0)
        cycles = np.cumsum(np.clip(hr, 20.0, 250.0) / 60.0) * GRID_DT_S
        cycles -= np.interp(t0, grid, cycles)
        n_beats = int(np.floor(cycles[-1]))
        onsets = np.interp(np.arange(n_beats + 1), cycles, grid)
        onsets = onsets[onsets <= t_end + mean_rr]
        onsets = onsets + rng.normal(0.0, 0.003, len(onsets))
    else:
        cv = rng.uniform(0.15, 0.30)
        n_max = int((t_end - t0) / (0.45 * mean_rr)) + 4
        sigma = np.sqrt(np.log(1 + cv**2))
        rr = mean_rr * np.exp(rng.normal(-0.5 * sigma**2, sigma, n_max))
        rr = np.clip(rr, max(SHORTEST_RR_S, 0.45 * mean_rr), 2.5)
        onsets = t0 + np.concatenate([[0.0], np.cumsum(rr)])
        onsets = onsets[: np.searchsorted(onsets, t_end) + 1]
    premature = np.zeros(len(onsets), dtype=bool)
    if ectopic_rate > 0:
        for i in range(2, len(onsets) - 1):
            if premature[i - 1] or rng.uniform() >= ectopic_rate:
                continue
            normal_rr = onsets[i] - onsets[i - 1]
            coupling = rng.uniform(0.55, 0.75) * normal_rr
            # no beat inside the refractory period of the one before (at fast rates
            # 55 % of the cycle would be under 0.15 s)
            onsets[i] = onsets[i - 1] + max(coupling, SHORTEST_RR_S)
            premature[i] = True
    rr_s = np.diff(onsets)
    return Beats(s1_onset_s=onsets, rr_s=rr_s, premature=premature[:-1])
