"""Property checks: any allowed spec gives a well-formed recording and truth."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from eddyphone import physics
from eddyphone.simulate import MURMUR_CAUSES, SITES, CaseSpec, MurmurSpec, generate
from eddyphone.simulate.chain import DEVICES
from eddyphone.simulate.spec import S2_SPLITS

causes = [c for c in MURMUR_CAUSES if c != "none"]

murmur_st = st.one_of(
    st.none(),
    st.builds(MurmurSpec, cause=st.sampled_from(causes),
              diameter_m=st.floats(0.003, 0.025), velocity_m_s=st.floats(0.5, 6.0),
              hematocrit=st.floats(0.15, 0.6), transition_factor=st.floats(0.3, 1.5)),
)

spec_st = st.builds(
    CaseSpec,
    heart_rate_bpm=st.floats(40, 200), rhythm=st.sampled_from(["sinus", "irregular"]),
    ectopic_rate=st.sampled_from([0.0, 0.1, 0.3]), duration_s=st.floats(3.0, 8.0),
    fs=st.sampled_from([1000.0, 2000.0, 4000.0, 8000.0]), murmur=murmur_st,
    s3=st.booleans(), s4=st.booleans(), ejection_click=st.booleans(),
    opening_snap=st.booleans(), s2_split=st.sampled_from(S2_SPLITS),
    snr_db=st.floats(-5, 40), device=st.sampled_from(sorted(DEVICES)),
    site=st.sampled_from(SITES), speech=st.sampled_from([0.0, 0.4]),
    friction_per_min=st.sampled_from([0.0, 30.0]), hum_hz=st.sampled_from([None, 60.0]),
    adventitious=st.sampled_from(["none", "crackles", "wheeze"]),
    breath_held=st.booleans(), overdrive_db=st.sampled_from([0.0, 6.0]),
    seed=st.integers(0, 2**31 - 1),
)


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(spec=spec_st)
def test_any_spec_gives_well_formed_truth(spec):
    sim = generate(spec)
    assert sim.x.dtype == np.float64 and len(sim.x) == round(spec.duration_s * spec.fs)
    assert np.all(np.isfinite(sim.x)) and np.abs(sim.x).max() <= 1.0
    seg = sim.segments
    labels = [lab for _, _, lab in seg]
    assert labels == ["S1", "systole", "S2", "diastole"] * (len(labels) // 4)
    if seg:
        starts = np.array([a for a, _, _ in seg])
        ends = np.array([b for _, b, _ in seg])
        assert np.all(ends - starts > 0.005)
        assert np.allclose(starts[1:], ends[:-1]) and starts[0] >= 0
        assert ends[-1] <= spec.duration_s + 1e-9
    for a, b, _ in sim.events:
        assert 0 <= a < b <= spec.duration_s + 1e-9
    m = sim.truth["murmur"]
    if spec.murmur is not None:
        p = m["physics"]
        # Reynolds number as defined (rho v d / mu, common practice)
        re = physics.BLOOD_DENSITY_KG_M3 * p["peak_velocity_m_s"] * p["diameter_m"] / p[
            "viscosity_pa_s"]
        assert p["reynolds"] == pytest.approx(re, rel=1e-9)
        assert 1 <= m["grade"] <= 6
        assert m["present"] == (p["relative_power"] > 0 and p["audible"])
    else:
        assert m["present"] is False
