"""Published timing relations of the cardiac cycle, shared by the simulator and the segmenter.

Every constant names its source beside it. "From memory" marks a value recalled
from the literature rather than checked against the paper while writing.

Public functions
----------------
systolic_interval_s
    S1-onset to A2-onset interval (mean, sd) at a heart rate, from the Weissler
    regression of total electromechanical systole on heart rate.
left_ventricular_ejection_time_s
    Weissler regression of ejection time on heart rate (mean, sd).
pre_ejection_period_s
    Weissler regression of the pre-ejection period on heart rate (mean, sd).
diastolic_interval_s
    The rest of the cycle once systole and its spread are known (mean, sd).
s2_split_range_s
    A2-P2 interval range for expiration or inspiration.
sound_duration_s
    Typical duration (mean, sd) of S1 and S2.

Windows (seconds, relative to the named reference) are module constants such as
``S3_AFTER_A2_S`` and ``OPENING_SNAP_AFTER_A2_S``; each is a ``(low, high)`` pair.
"""

from __future__ import annotations

from eddyphone.errors import ParameterError

# --- Systolic time intervals -------------------------------------------------------
# Weissler AM, Harris WS, Schoenfeld CD. "Systolic time intervals in heart failure
# in man." Circulation 1968;37:149-159. Linear regressions on heart rate (HR, bpm)
# in healthy adults; coefficients from memory (men / women):
#   QS2  (Q wave to aortic closure)   = 0.546 - 0.0021 HR  /  0.549 - 0.0020 HR  s
#   LVET (left-ventricular ejection)  = 0.413 - 0.0017 HR  /  0.418 - 0.0016 HR  s
#   PEP  (pre-ejection period)        = 0.131 - 0.0004 HR  /  0.133 - 0.0004 HR  s
# Residual spreads (one sd) of about 14 ms (QS2), 10 ms (LVET), 10 ms (PEP), from memory.
WEISSLER_QS2 = {"male": (0.546, -0.0021), "female": (0.549, -0.0020)}
WEISSLER_LVET = {"male": (0.413, -0.0017), "female": (0.418, -0.0016)}
WEISSLER_PEP = {"male": (0.131, -0.0004), "female": (0.133, -0.0004)}
WEISSLER_QS2_SD_S = 0.014
WEISSLER_LVET_SD_S = 0.010
WEISSLER_PEP_SD_S = 0.010

#: Heart-rate range (bpm) of the subjects the regressions were fitted on, roughly
#: (from memory). Outside it the lines are extrapolated.
WEISSLER_HR_RANGE_BPM = (40.0, 120.0)

#: Electromechanical delay from the ECG Q wave to the mitral component of S1, in s.
#: Commonly quoted as 40-60 ms (common practice, from memory); its spread is added to
#: the QS2 spread to give the S1-to-S2 spread.
Q_TO_M1_S = 0.050
Q_TO_M1_SD_S = 0.010

#: The linear fits shorten systole too much above their fitted range (exercise data
#: show ejection lasting longer than the line predicts, and the line would make
#: systole a shrinking share of the cycle). Our own guard, not published: above
#: ``WEISSLER_HR_RANGE_BPM[1]`` the S1-to-S2 interval keeps at least the share of the
#: cycle it has at that rate.

# --- Splits of the heart sounds ----------------------------------------------------
#: Mitral-to-tricuspid (M1-T1) delay in s: "about 20-30 ms" in clinical texts on
#: auscultation (common practice, from memory).
S1_SPLIT_S = (0.020, 0.030)

#: A2-P2 interval in s. Physiological splitting: narrow or single on expiration, wide
#: on inspiration, overall about 20-80 ms (common practice, from memory; clinical
#: auscultation texts give <30 ms on expiration and 30-80 ms on inspiration).
S2_SPLIT_EXPIRATION_S = (0.015, 0.030)
S2_SPLIT_INSPIRATION_S = (0.035, 0.080)

# --- Extra sounds (windows relative to a reference sound onset) ---------------------
#: S3: early diastole, 120-180 ms after A2, during rapid ventricular filling
#: (common practice, from memory).
S3_AFTER_A2_S = (0.120, 0.180)
#: S4: late diastole with atrial contraction, its onset 60-120 ms before the onset of
#: S1 (common practice, from memory). Absent without organised atrial activity.
S4_BEFORE_S1_S = (0.060, 0.120)
#: Ejection click: at the opening of a stiff semilunar valve, at the end of the
#: pre-ejection period, about 120-140 ms after the Q wave, i.e. 60-100 ms after the
#: onset of S1 (common practice, from memory); it is heard just after S1.
EJECTION_CLICK_AFTER_S1_S = (0.060, 0.100)
#: Opening snap of a narrowed mitral valve: 40-120 ms after A2; the shorter the
#: interval, the higher the left atrial pressure (common practice, from memory).
OPENING_SNAP_AFTER_A2_S = (0.040, 0.120)

# --- Durations and frequency content -----------------------------------------------
#: Durations of S1 and S2 (mean, sd) in s, as used for the state durations of a
#: duration-dependent hidden semi-Markov segmenter: Schmidt SE et al., "Segmentation
#: of heart sound recordings by a duration-dependent hidden Markov model", Physiol
#: Meas 2010;31:513-529 (values from memory: S1 122 +/- 22 ms, S2 92 +/- 22 ms).
S1_DURATION_S = (0.122, 0.022)
S2_DURATION_S = (0.092, 0.022)
S3_DURATION_S = (0.040, 0.010)  # 30-50 ms, common practice (from memory)
S4_DURATION_S = (0.040, 0.010)  # 30-50 ms, common practice (from memory)

#: Main frequency content in Hz (common practice, from memory): S1 low-pitched with
#: most energy 25-100 Hz (spreading to ~150 Hz); S2 higher, 40-200 Hz; S3 and S4
#: low, 20-60 Hz; clicks and snaps short and high-pitched, 100-300 Hz.
S1_BAND_HZ = (25.0, 140.0)
S2_BAND_HZ = (40.0, 200.0)
S3_BAND_HZ = (20.0, 60.0)
S4_BAND_HZ = (20.0, 60.0)
CLICK_BAND_HZ = (100.0, 300.0)
SNAP_BAND_HZ = (100.0, 300.0)

#: Respiratory sinus arrhythmia: peak-to-peak swing of heart rate over a breath in
#: resting adults, a few to about 10 bpm (common practice, from memory).
RSA_SWING_BPM = (2.0, 10.0)


def _check_hr(heart_rate_bpm: float) -> float:
    hr = float(heart_rate_bpm)
    if not 20.0 <= hr <= 250.0:
        raise ParameterError(
            f"heart_rate_bpm={heart_rate_bpm!r} is outside 20-250 bpm; pass a heart rate in "
            "beats per minute"
        )
    return hr


def _regression(table: dict, sex: str, hr: float) -> float:
    if sex not in table:
        raise ParameterError(f"sex={sex!r} is not one of {sorted(table)}; pass 'male' or 'female'")
    a, b = table[sex]
    return a + b * hr


def left_ventricular_ejection_time_s(heart_rate_bpm: float, *, sex: str = "male"
                                     ) -> tuple[float, float]:
    """Ejection time at a heart rate (Weissler 1968 regression, from memory).

    Parameters
    ----------
    heart_rate_bpm : float
        Heart rate in beats per minute.
    sex : {'male', 'female'}
        Which of the two published lines to use.

    Returns
    -------
    mean_s, sd_s : float
        Expected ejection time and the regression's residual spread, in seconds.
    """
    hr = _check_hr(heart_rate_bpm)
    return _regression(WEISSLER_LVET, sex, hr), WEISSLER_LVET_SD_S


def pre_ejection_period_s(heart_rate_bpm: float, *, sex: str = "male") -> tuple[float, float]:
    """Pre-ejection period at a heart rate (Weissler 1968 regression, from memory).

    Returns
    -------
    mean_s, sd_s : float
    """
    hr = _check_hr(heart_rate_bpm)
    return _regression(WEISSLER_PEP, sex, hr), WEISSLER_PEP_SD_S


def systolic_interval_s(heart_rate_bpm: float, *, sex: str = "male") -> tuple[float, float]:
    """S1-onset to S2-onset (first vibrations of S1 to A2) interval at a heart rate.

    Total electromechanical systole QS2 from the Weissler et al. 1968 regression
    (coefficients from memory) minus the Q-to-M1 delay (``Q_TO_M1_S``, common
    practice). Above 120 bpm the line is extrapolated and the interval keeps at least
    the share of the cycle it has at 120 bpm (our own guard).

    Parameters
    ----------
    heart_rate_bpm : float
        Heart rate in beats per minute (20-250).
    sex : {'male', 'female'}
        Which published line to use.

    Returns
    -------
    mean_s, sd_s : float
        Expected interval and its spread (QS2 residual and Q-M1 spread combined).

    Examples
    --------
    >>> mean_s, sd_s = systolic_interval_s(60.0)
    >>> round(mean_s, 3), round(sd_s, 3)
    (0.37, 0.017)
    """
    hr = _check_hr(heart_rate_bpm)
    qs2 = _regression(WEISSLER_QS2, sex, hr)
    mean = qs2 - Q_TO_M1_S
    top = WEISSLER_HR_RANGE_BPM[1]
    if hr > top:
        share = (_regression(WEISSLER_QS2, sex, top) - Q_TO_M1_S) / (60.0 / top)
        mean = max(mean, share * 60.0 / hr)
    sd = (WEISSLER_QS2_SD_S**2 + Q_TO_M1_SD_S**2) ** 0.5
    return mean, sd


def diastolic_interval_s(heart_rate_bpm: float, *, sex: str = "male") -> tuple[float, float]:
    """S2-onset to next S1-onset interval: the rest of the cycle.

    Returns
    -------
    mean_s, sd_s : float
        ``60 / heart_rate_bpm`` minus the systolic interval, with the same spread.
    """
    mean, sd = systolic_interval_s(heart_rate_bpm, sex=sex)
    return 60.0 / float(heart_rate_bpm) - mean, sd


def s2_split_range_s(inspiration: bool) -> tuple[float, float]:
    """A2-P2 interval range in seconds for inspiration or expiration (common practice)."""
    return S2_SPLIT_INSPIRATION_S if inspiration else S2_SPLIT_EXPIRATION_S


def sound_duration_s(label: str) -> tuple[float, float]:
    """Typical (mean, sd) duration in seconds of ``'S1'``, ``'S2'``, ``'S3'`` or ``'S4'``."""
    table = {"S1": S1_DURATION_S, "S2": S2_DURATION_S, "S3": S3_DURATION_S,
             "S4": S4_DURATION_S}
    if label not in table:
        raise ParameterError(f"label={label!r} is not one of {sorted(table)}")
    return table[label]
