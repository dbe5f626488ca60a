"""Facts of the trade about flow and viscosity, as property tests (common practice)."""

from __future__ import annotations

from hypothesis import assume, given, settings
from hypothesis import strategies as st

from eddyphone.physics import (
    blood_viscosity_pa_s,
    flow_regime,
    relative_viscosity_pries,
    reynolds_number_from_flow,
    strouhal_frequency_hz,
)

flows = st.floats(min_value=1e-9, max_value=1e-3)  # m3/s: capillary to aortic peak
diameters = st.floats(min_value=1e-3, max_value=0.04)  # m: arteries
hematocrits = st.floats(min_value=0.0, max_value=0.8)
factors = st.floats(min_value=1.01, max_value=10.0)
_RANK = {"laminar": 0, "transitional": 1, "turbulent": 2}


@settings(max_examples=200, deadline=None)
@given(q=flows, d=diameters, h=hematocrits, k=factors)
def test_turbulence_more_likely_as_flow_rises(q, d, h, k):
    # Common practice: at a fixed lumen and blood, more flow means a higher Reynolds number.
    mu = blood_viscosity_pa_s(h)
    re1 = reynolds_number_from_flow(flow_m3_s=q, diameter_m=d, viscosity_pa_s=mu)
    re2 = reynolds_number_from_flow(flow_m3_s=q * k, diameter_m=d, viscosity_pa_s=mu)
    assert re2 > re1
    assert _RANK[flow_regime(re2)] >= _RANK[flow_regime(re1)]


@settings(max_examples=200, deadline=None)
@given(q=flows, d=diameters, h=hematocrits, k=factors)
def test_turbulence_more_likely_as_lumen_narrows_at_fixed_flow(q, d, h, k):
    # Common practice: Re = 4 rho Q / (pi D mu) grows as D shrinks at a fixed flow
    # (the same flow is forced through a narrower lumen, faster).
    mu = blood_viscosity_pa_s(h)
    re_wide = reynolds_number_from_flow(flow_m3_s=q, diameter_m=d, viscosity_pa_s=mu)
    re_narrow = reynolds_number_from_flow(flow_m3_s=q, diameter_m=d / k, viscosity_pa_s=mu)
    assert re_narrow > re_wide
    assert _RANK[flow_regime(re_narrow)] >= _RANK[flow_regime(re_wide)]


@settings(max_examples=200, deadline=None)
@given(q=flows, d=diameters, h_low=hematocrits, dh=st.floats(min_value=0.01, max_value=0.8))
def test_turbulence_more_likely_as_hematocrit_falls(q, d, h_low, dh):
    # Common practice: anaemic (thinner) blood has lower viscosity, hence higher Re.
    h_high = min(h_low + dh, 0.8)
    assume(h_high - h_low > 1e-6)
    mu_low = blood_viscosity_pa_s(h_low, diameter_m=d)
    mu_high = blood_viscosity_pa_s(h_high, diameter_m=d)
    assert mu_low < mu_high
    re_thin = reynolds_number_from_flow(flow_m3_s=q, diameter_m=d, viscosity_pa_s=mu_low)
    re_thick = reynolds_number_from_flow(flow_m3_s=q, diameter_m=d, viscosity_pa_s=mu_high)
    assert re_thin > re_thick


@settings(max_examples=300, deadline=None)
@given(d_um=st.floats(min_value=10.0, max_value=299.0), h=st.floats(min_value=0.05, max_value=0.8))
def test_viscosity_falls_in_tubes_below_300_um(d_um, h):
    # Common practice (Fahraeus-Lindqvist effect): blood in tubes below about 300 um is
    # less viscous than the same blood in a large vessel.
    assert blood_viscosity_pa_s(h, diameter_m=d_um * 1e-6) < blood_viscosity_pa_s(h)


@settings(max_examples=300, deadline=None)
@given(d_small_um=st.floats(min_value=15.0, max_value=290.0),
       k=st.floats(min_value=1.01, max_value=3.0), h=st.floats(min_value=0.05, max_value=0.8))
def test_viscosity_keeps_falling_as_tube_narrows(d_small_um, k, h):
    # Common practice (Fahraeus-Lindqvist): from ~300 um down to a few red-cell diameters the
    # apparent viscosity falls steadily as the tube narrows.
    d_big_um = min(d_small_um * k, 300.0)
    assume(d_big_um / d_small_um > 1.005)
    assert relative_viscosity_pries(d_small_um * 1e-6, h) < relative_viscosity_pries(
        d_big_um * 1e-6, h)


@settings(max_examples=200, deadline=None)
@given(d=st.floats(min_value=5e-6, max_value=0.04), h1=hematocrits, h2=hematocrits)
def test_viscosity_rises_with_hematocrit_at_any_diameter(d, h1, h2):
    # Common practice: more red cells, more viscous blood, in any tube.
    assume(abs(h1 - h2) > 1e-6)
    lo, hi = sorted((h1, h2))
    assert relative_viscosity_pries(d, lo) < relative_viscosity_pries(d, hi)


@settings(max_examples=100, deadline=None)
@given(v=st.floats(min_value=0.5, max_value=6.0), d=st.floats(min_value=1e-3, max_value=0.03),
       k=factors)
def test_higher_pitch_from_faster_jet_or_smaller_orifice(v, d, k):
    # Common practice: faster jets and tighter orifices give higher-pitched murmurs.
    f = strouhal_frequency_hz(velocity_m_s=v, diameter_m=d)
    assert strouhal_frequency_hz(velocity_m_s=v * k, diameter_m=d) > f
    assert strouhal_frequency_hz(velocity_m_s=v, diameter_m=d / k) > f
