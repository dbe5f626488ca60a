"""eddyphone.physics checked against outside references (source named beside each check)."""

from __future__ import annotations

import math

import fluids.core
import fluids.friction
import numpy as np
import pytest
import scipy.constants as sc

from eddyphone.errors import EddyphoneError, ParameterError
from eddyphone.physics import (
    BLOOD_DENSITY_KG_M3,
    PLASMA_VISCOSITY_PA_S,
    STROUHAL_NUMBER,
    TRANSITION_RE_HIGH,
    TRANSITION_RE_LOW,
    area_m2,
    bernoulli_pressure_drop_mmhg,
    blood_viscosity_pa_s,
    flow_from_velocity_m3_s,
    flow_regime,
    l_min_from_m3_s,
    m3_s_from_l_min,
    mmhg_from_pa,
    pa_from_mmhg,
    poiseuille_pressure_drop_pa,
    poiseuille_resistance_pa_s_m3,
    relative_viscosity_pries,
    reynolds_number,
    reynolds_number_from_flow,
    strouhal_diameter_m,
    strouhal_frequency_hz,
    strouhal_velocity_m_s,
    velocity_from_flow_m_s,
    womersley_number,
)
from eddyphone.physics.describe import describe_flow
from eddyphone.physics.sites import NORMAL_ADULT_AORTA

VELOCITIES_M_S = [0.05, 0.3, 1.2, 4.0]
DIAMETERS_M = [100e-6, 3e-3, 0.025]
VISCOSITIES_PA_S = [1.2e-3, 3.5e-3, 6e-3]
DENSITIES_KG_M3 = [1000.0, 1060.0]


# --- Reynolds number ------------------------------------------------------------------

@pytest.mark.parametrize("v", VELOCITIES_M_S)
@pytest.mark.parametrize("d", DIAMETERS_M)
@pytest.mark.parametrize("mu", VISCOSITIES_PA_S)
@pytest.mark.parametrize("rho", DENSITIES_KG_M3)
def test_reynolds_matches_fluids(v, d, mu, rho):
    # Reference: fluids.core.Reynolds (general-purpose fluid-dynamics library), Re = rho V D / mu.
    expected = fluids.core.Reynolds(V=v, D=d, rho=rho, mu=mu)
    got = reynolds_number(velocity_m_s=v, diameter_m=d, viscosity_pa_s=mu, density_kg_m3=rho)
    assert got == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("q_l_min", [0.001, 0.5, 5.0, 25.0])
@pytest.mark.parametrize("d", DIAMETERS_M)
@pytest.mark.parametrize("mu", VISCOSITIES_PA_S)
def test_reynolds_flow_form_matches_fluids(q_l_min, d, mu):
    # Reference: fluids.core.Reynolds with V = Q / (pi D^2 / 4), i.e. Re = 4 rho Q / (pi D mu).
    q = q_l_min * sc.liter / sc.minute
    expected = fluids.core.Reynolds(V=q / (math.pi * d**2 / 4), D=d, rho=1060.0, mu=mu)
    got = reynolds_number_from_flow(flow_m3_s=q, diameter_m=d, viscosity_pa_s=mu)
    assert got == pytest.approx(expected, rel=1e-12)


def test_reynolds_vectorised_matches_fluids():
    # Reference: fluids.core.Reynolds, element by element.
    v = np.array(VELOCITIES_M_S)
    got = reynolds_number(velocity_m_s=v, diameter_m=0.02, viscosity_pa_s=3.5e-3)
    expected = [fluids.core.Reynolds(V=x, D=0.02, rho=BLOOD_DENSITY_KG_M3, mu=3.5e-3) for x in v]
    np.testing.assert_allclose(got, expected, rtol=1e-12)


def test_issue_example_reynolds_9086():
    # Worked example: 1060 * 1.2 * 0.025 / 3.5e-3 = 9085.7 (hand arithmetic, cross-checked
    # with fluids.core.Reynolds).
    re = reynolds_number(velocity_m_s=1.2, diameter_m=0.025, viscosity_pa_s=3.5e-3,
                         density_kg_m3=1060.0)
    assert re == pytest.approx(fluids.core.Reynolds(V=1.2, D=0.025, rho=1060.0, mu=3.5e-3))
    assert round(re) == 9086


def test_transition_range_is_the_documented_one():
    # Common practice: steady pipe flow transition about 2000-2300 (handbook critical Re 2300).
    assert (TRANSITION_RE_LOW, TRANSITION_RE_HIGH) == (2000.0, 2300.0)
    assert flow_regime(1999.0) == "laminar"
    assert flow_regime(2000.0) == "transitional"
    assert flow_regime(2300.0) == "transitional"
    assert flow_regime(2301.0) == "turbulent"
    assert flow_regime(0.0) == "laminar"


def test_normal_adult_aorta_lands_in_stein_sabbah_range():
    # Stein & Sabbah 1976: peak Re about 5,700-8,900 in normal human ascending aortas.
    site = NORMAL_ADULT_AORTA
    mu = blood_viscosity_pa_s(site.hematocrit, diameter_m=site.diameter_m)
    re = reynolds_number(velocity_m_s=site.peak_velocity_m_s, diameter_m=site.diameter_m,
                         viscosity_pa_s=mu)
    assert 5700.0 <= re <= 8900.0
    # Same check through the explainer's helper.
    d = describe_flow(velocity_m_s=site.peak_velocity_m_s, diameter_m=site.diameter_m,
                      hematocrit=site.hematocrit)
    assert 5700.0 <= d["reynolds_number"] <= 8900.0


def test_cardiac_output_mean_flow_is_laminar():
    # Common practice: time-averaged aortic flow (5 L/min, ~25 mm) has Re of order 1000.
    mu = blood_viscosity_pa_s(0.45)
    re = reynolds_number_from_flow(flow_m3_s=5 * sc.liter / sc.minute, diameter_m=0.025,
                                   viscosity_pa_s=mu)
    assert 800.0 < re < 1500.0
    assert flow_regime(re) == "laminar"


# --- Viscosity ------------------------------------------------------------------------

@pytest.mark.parametrize(
    ("diameter_um", "expected"),
    [
        # Pries, Neuhaus & Gaehtgens 1992 (Am J Physiol 263:H1770), values computed from the
        # published in-vitro formula at hematocrit 0.45.
        (7.0, 1.248),
        (100.0, 2.443),
        (1000.0, 3.186),
    ],
)
def test_pries_worked_values(diameter_um, expected):
    assert relative_viscosity_pries(diameter_um * 1e-6, 0.45) == pytest.approx(expected, abs=1e-3)


def test_pries_large_tube_limit_and_plasma():
    # Pries et al. 1992: eta_0.45 -> 3.2 for large tubes; at hematocrit 0 the suspension is
    # plasma, so the relative viscosity is 1 by definition.
    assert relative_viscosity_pries(0.03, 0.45) == pytest.approx(3.2, abs=1e-6)
    assert relative_viscosity_pries(np.array([10e-6, 1e-3, 0.02]), 0.0) == pytest.approx(1.0)


def test_pries_minimum_near_7_um():
    # Pries et al. 1992 (from memory): relative viscosity at Hct 0.45 is lowest near 6-7 um.
    d = np.geomspace(3e-6, 50e-6, 2000)
    d_min_um = d[np.argmin(relative_viscosity_pries(d, 0.45))] * 1e6
    assert 5.0 < d_min_um < 8.0


def test_bulk_viscosity_in_handbook_range():
    # Common practice (from memory): whole blood at Hct ~0.45, 37 degC, high shear is
    # 3-4 mPa s; plasma at 37 degC 1.1-1.3 mPa s.
    assert 1.1e-3 <= PLASMA_VISCOSITY_PA_S <= 1.3e-3
    assert 3.0e-3 <= blood_viscosity_pa_s(0.45) <= 4.0e-3
    # Anaemic blood (Hct 0.25) is markedly thinner, polycythaemic (0.65) thicker.
    assert blood_viscosity_pa_s(0.25) < 2.6e-3 < 5.0e-3 < blood_viscosity_pa_s(0.65)


def test_blood_viscosity_with_diameter_uses_pries():
    # Pries et al. 1992 worked value at 100 um, times the plasma viscosity.
    mu = blood_viscosity_pa_s(0.45, diameter_m=100e-6, plasma_viscosity_pa_s=1.3e-3)
    assert mu == pytest.approx(2.443 * 1.3e-3, rel=1e-3)
    # Above about 1 mm the diameter hardly matters (within 0.5 % of the bulk value).
    assert blood_viscosity_pa_s(0.45, diameter_m=1e-3) == pytest.approx(
        blood_viscosity_pa_s(0.45), rel=5e-3)


# --- Continuity and Poiseuille --------------------------------------------------------

def test_continuity_round_trip():
    # Common practice: A = pi d^2 / 4, Q = v A.
    assert area_m2(0.02) == pytest.approx(math.pi * 1e-4)
    q = flow_from_velocity_m3_s(0.8, 0.02)
    assert q == pytest.approx(0.8 * math.pi * 1e-4)
    assert velocity_from_flow_m_s(q, 0.02) == pytest.approx(0.8)


@pytest.mark.parametrize("d", [50e-6, 1e-3, 0.01])
@pytest.mark.parametrize("v", [1e-3, 0.05])
def test_poiseuille_matches_laminar_darcy_friction(d, v):
    # Reference: fluids.friction.friction_laminar (Darcy f = 64/Re), with
    # dP = f (L/D) rho v^2 / 2 (Darcy-Weisbach, common practice).
    mu, rho, length = 3.5e-3, 1060.0, 0.05
    re = fluids.core.Reynolds(V=v, D=d, rho=rho, mu=mu)
    dp_expected = fluids.friction.friction_laminar(re) * length / d * rho * v**2 / 2
    q = v * math.pi * d**2 / 4
    dp = poiseuille_pressure_drop_pa(flow_m3_s=q, length_m=length, diameter_m=d,
                                     viscosity_pa_s=mu)
    assert dp == pytest.approx(dp_expected, rel=1e-10)


def test_poiseuille_resistance_textbook_form():
    # Common practice: R = 8 mu L / (pi r^4); halving the radius multiplies R by 16.
    r1 = poiseuille_resistance_pa_s_m3(length_m=0.1, diameter_m=4e-3, viscosity_pa_s=3.5e-3)
    assert r1 == pytest.approx(8 * 3.5e-3 * 0.1 / (math.pi * (2e-3) ** 4))
    r2 = poiseuille_resistance_pa_s_m3(length_m=0.1, diameter_m=2e-3, viscosity_pa_s=3.5e-3)
    assert r2 / r1 == pytest.approx(16.0)


# --- Womersley ------------------------------------------------------------------------

@pytest.mark.parametrize("d", [1e-3, 4e-3, 0.025])
@pytest.mark.parametrize("f", [1.0, 2.5])
def test_womersley_from_fluids_reynolds_and_strouhal(d, f):
    # Reference: fluids.core.Reynolds and fluids.core.Strouhal; by definition
    # alpha^2 = (D/2)^2 2 pi f rho / mu = (pi / 2) Re St, for any velocity scale V.
    mu, rho, v = 3.5e-3, 1060.0, 0.7
    re = fluids.core.Reynolds(V=v, D=d, rho=rho, mu=mu)
    st = fluids.core.Strouhal(f=f, L=d, V=v)
    alpha = womersley_number(diameter_m=d, frequency_hz=f, viscosity_pa_s=mu, density_kg_m3=rho)
    assert alpha == pytest.approx(math.sqrt(math.pi / 2 * re * st), rel=1e-12)


def test_womersley_of_human_aorta():
    # From memory: the human aorta at rest has a Womersley number of roughly 10-20.
    alpha = womersley_number(diameter_m=0.025, frequency_hz=1.2,
                             viscosity_pa_s=blood_viscosity_pa_s(0.45))
    assert 10.0 < alpha < 22.0


# --- Bernoulli and Strouhal ----------------------------------------------------------

def test_half_rho_v2_against_four_v2_rule():
    # 1/2 rho v^2 in mmHg: 0.5 * 1060 / 133.322 = 3.975 per (m/s)^2; scipy.constants.mmHg is
    # the pascal value of one mmHg. The simplified rule is 4 v^2 (common practice).
    for v in (1.0, 2.5, 4.0, 5.5):
        full = bernoulli_pressure_drop_mmhg(v, density_kg_m3=1060.0)
        assert full == pytest.approx(0.5 * 1060.0 * v**2 / sc.mmHg, rel=1e-6)
        assert full / v**2 == pytest.approx(3.975, abs=1e-3)
        assert bernoulli_pressure_drop_mmhg(v) == pytest.approx(4.0 * v**2)
    assert bernoulli_pressure_drop_mmhg(4.0) == pytest.approx(64.0)


def test_bernoulli_with_proximal_velocity():
    # Common practice (modified Bernoulli): dP = 4 (v2^2 - v1^2); full form with rho.
    assert bernoulli_pressure_drop_mmhg(4.0, proximal_velocity_m_s=1.5) == pytest.approx(
        4 * (16 - 2.25))
    full = bernoulli_pressure_drop_mmhg(4.0, proximal_velocity_m_s=1.5, density_kg_m3=1060.0)
    assert full == pytest.approx(0.5 * 1060 * (16 - 2.25) / sc.mmHg, rel=1e-6)
    with pytest.raises(ParameterError, match="proximal_velocity_m_s=5"):
        bernoulli_pressure_drop_mmhg(4.0, proximal_velocity_m_s=5.0)


@pytest.mark.parametrize(("v", "d"), [(3.0, 0.015), (5.0, 0.004), (1.2, 0.025)])
def test_strouhal_matches_fluids_definition(v, d):
    # Reference: fluids.core.Strouhal(f, L, V) = f L / V must give back our St.
    f = strouhal_frequency_hz(velocity_m_s=v, diameter_m=d)
    assert fluids.core.Strouhal(f=f, L=d, V=v) == pytest.approx(STROUHAL_NUMBER)
    assert strouhal_diameter_m(frequency_hz=f, velocity_m_s=v) == pytest.approx(d)
    assert strouhal_velocity_m_s(frequency_hz=f, diameter_m=d) == pytest.approx(v)
    f2 = strouhal_frequency_hz(velocity_m_s=v, diameter_m=d, strouhal=0.2)
    assert fluids.core.Strouhal(f=f2, L=d, V=v) == pytest.approx(0.2)


def test_strouhal_value_documented():
    # Lees & Dewey 1970 break-frequency relation f ~ v / d (from memory): St = 1.
    assert STROUHAL_NUMBER == 1.0
    # Issue example: 200 Hz at 3 m/s -> 15 mm.
    assert strouhal_diameter_m(frequency_hz=200.0, velocity_m_s=3.0) == pytest.approx(0.015)


# --- Units ----------------------------------------------------------------------------

def test_units_against_scipy_constants():
    # Reference: scipy.constants (mmHg, liter, minute).
    assert pa_from_mmhg(1.0) == pytest.approx(sc.mmHg, rel=1e-6)
    assert mmhg_from_pa(sc.mmHg * 120) == pytest.approx(120.0, rel=1e-6)
    assert m3_s_from_l_min(5.0) == pytest.approx(5 * sc.liter / sc.minute, rel=1e-12)
    assert l_min_from_m3_s(5 * sc.liter / sc.minute) == pytest.approx(5.0, rel=1e-12)
    np.testing.assert_allclose(mmhg_from_pa(pa_from_mmhg(np.array([0.0, 80.0, 120.0]))),
                               [0.0, 80.0, 120.0])


# --- Validation -----------------------------------------------------------------------

@pytest.mark.parametrize("h", [-0.1, 0.81, 45.0, float("nan")])
def test_bad_hematocrit_named(h):
    with pytest.raises(ParameterError, match="hematocrit"):
        blood_viscosity_pa_s(h)
    with pytest.raises(ParameterError, match="hematocrit"):
        relative_viscosity_pries(1e-4, h)


def test_hematocrit_message_gives_range_and_hint():
    with pytest.raises(ParameterError) as info:
        blood_viscosity_pa_s(45.0)
    msg = str(info.value)
    assert "45" in msg and "0-0.8" in msg and "0.45" in msg
    assert isinstance(info.value, EddyphoneError)


@pytest.mark.parametrize("bad", [0.0, -0.01, float("nan"), float("inf")])
def test_non_positive_inputs_refused(bad):
    with pytest.raises(ParameterError, match="diameter_m"):
        reynolds_number(velocity_m_s=1.0, diameter_m=bad, viscosity_pa_s=3.5e-3)
    with pytest.raises(ParameterError, match="velocity_m_s"):
        reynolds_number(velocity_m_s=bad, diameter_m=0.01, viscosity_pa_s=3.5e-3)
    with pytest.raises(ParameterError, match="viscosity_pa_s"):
        reynolds_number(velocity_m_s=1.0, diameter_m=0.01, viscosity_pa_s=bad)
    with pytest.raises(ParameterError, match="jet_velocity_m_s"):
        bernoulli_pressure_drop_mmhg(bad)
    with pytest.raises(ParameterError, match="frequency_hz"):
        strouhal_diameter_m(frequency_hz=bad, velocity_m_s=3.0)


def test_array_error_names_first_bad_value():
    with pytest.raises(ParameterError, match=r"velocity_m_s=-2 m/s"):
        reynolds_number(velocity_m_s=np.array([1.0, -2.0, 3.0]), diameter_m=0.01,
                        viscosity_pa_s=3.5e-3)


def test_pries_refuses_tubes_narrower_than_red_cells():
    with pytest.raises(ParameterError, match="3 um"):
        relative_viscosity_pries(2e-6, 0.45)


def test_non_numbers_refused():
    with pytest.raises(ParameterError, match="not a number"):
        area_m2("wide")  # type: ignore[arg-type]
