"""Timing relations of eddyphone.physiology against their published sources."""

from __future__ import annotations

import numpy as np
import pytest

from eddyphone import physiology as ph
from eddyphone.errors import ParameterError


def test_weissler_lines_reproduced():
    # Weissler, Harris & Schoenfeld 1968 (Circulation 37:149), men (from memory):
    # QS2 = 546 - 2.1 HR ms, LVET = 413 - 1.7 HR ms, PEP = 131 - 0.4 HR ms.
    for hr in (50.0, 70.0, 100.0):
        lvet, _ = ph.left_ventricular_ejection_time_s(hr)
        pep, _ = ph.pre_ejection_period_s(hr)
        sys_s, _ = ph.systolic_interval_s(hr)
        assert lvet == pytest.approx((413 - 1.7 * hr) / 1000, abs=1e-9)
        assert pep == pytest.approx((131 - 0.4 * hr) / 1000, abs=1e-9)
        assert sys_s + ph.Q_TO_M1_S == pytest.approx((546 - 2.1 * hr) / 1000, abs=1e-9)
    # women's lines (same paper, from memory): LVET = 418 - 1.6 HR ms
    assert ph.left_ventricular_ejection_time_s(70, sex="female")[0] == pytest.approx(0.306)


def test_qs2_is_pep_plus_lvet():
    # QS2 = PEP + LVET by definition of the intervals (common practice); Weissler's three
    # separate fits agree with that to within a few ms over the fitted range.
    for hr in np.linspace(45, 120, 7):
        qs2 = ph.systolic_interval_s(hr)[0] + ph.Q_TO_M1_S
        parts = ph.pre_ejection_period_s(hr)[0] + ph.left_ventricular_ejection_time_s(hr)[0]
        assert abs(qs2 - parts) < 0.006


def test_resting_values_match_handbook_ranges():
    # At about 70 bpm: LVET roughly 0.27-0.31 s and QS2 roughly 0.38-0.42 s in healthy
    # adults (common practice, from memory).
    assert 0.27 <= ph.left_ventricular_ejection_time_s(70)[0] <= 0.31
    assert 0.38 <= ph.systolic_interval_s(70)[0] + ph.Q_TO_M1_S <= 0.42


def test_diastole_shortens_more_than_systole():
    # As heart rate rises, diastole shortens more than systole, so systole takes a
    # growing share of the cycle (common practice).
    hrs = np.arange(40, 201, 10)
    frac = [ph.systolic_interval_s(h)[0] / (60 / h) for h in hrs]
    assert np.all(np.diff(frac) >= -1e-12)
    assert all(ph.diastolic_interval_s(h)[0] > 0.1 * 60 / h for h in hrs)
    assert frac[0] < 0.3 and frac[-1] <= 0.55  # Weissler line at 40 bpm; guard above 120


def test_spreads_and_windows():
    _, sd = ph.systolic_interval_s(70)
    assert 0.010 <= sd <= 0.025  # Weissler residual sd ~14 ms plus Q-M1 spread
    # A2-P2: about 20-80 ms overall, wider on inspiration (common practice)
    lo_e, hi_e = ph.s2_split_range_s(False)
    lo_i, hi_i = ph.s2_split_range_s(True)
    assert lo_e >= 0.0 and hi_i <= 0.080 and lo_i >= hi_e
    assert ph.S1_SPLIT_S == (0.020, 0.030)
    # S1 about 122 ms and S2 about 92 ms (Schmidt et al. 2010, from memory)
    assert ph.sound_duration_s("S1")[0] > ph.sound_duration_s("S2")[0]
    # S3 falls in early diastole, S4 in late diastole: both fit inside a resting diastole
    dia = ph.diastolic_interval_s(70)[0]
    assert ph.S3_AFTER_A2_S[1] < 0.5 * dia
    assert ph.S4_BEFORE_S1_S[1] < 0.5 * dia


def test_bad_inputs_raise():
    with pytest.raises(ParameterError, match="heart_rate_bpm"):
        ph.systolic_interval_s(5.0)
    with pytest.raises(ParameterError, match="sex"):
        ph.systolic_interval_s(70, sex="x")
    with pytest.raises(ParameterError, match="label"):
        ph.sound_duration_s("S9")
