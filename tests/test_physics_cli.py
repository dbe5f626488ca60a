"""``eddyphone flow``: the issue's command lines, checked against outside references."""

from __future__ import annotations

import json
import subprocess
import sys

import fluids.core
import pytest
import scipy.constants as sc

from eddyphone.cli import main
from eddyphone.physics.describe import describe_flow


def run_json(capsys, *argv: str) -> dict:
    assert main(["flow", *argv, "--json"]) == 0
    return json.loads(capsys.readouterr().out)


def test_reynolds_9086_and_regime(capsys):
    out = run_json(capsys, "--velocity-m-s", "1.2", "--diameter-mm", "25",
                   "--viscosity-mpa-s", "3.5", "--density-kg-m3", "1060")
    # Reference: fluids.core.Reynolds.
    assert out["reynolds_number"] == pytest.approx(
        fluids.core.Reynolds(V=1.2, D=0.025, rho=1060.0, mu=3.5e-3))
    assert round(out["reynolds_number"]) == 9086
    # Common practice: above the 2000-2300 steady-pipe transition range.
    assert out["flow_regime"] == "turbulent"
    assert "turbulent" in out["meanings"]["flow_regime"]


def test_flow_and_hematocrit(capsys):
    out = run_json(capsys, "--flow-l-min", "5", "--diameter-mm", "25", "--hematocrit", "0.45")
    # Pries et al. 1992 large-tube limit 3.2 x plasma (1.2 mPa s) for the viscosity.
    assert out["relative_viscosity"] == pytest.approx(3.2, abs=1e-6)
    mu = out["viscosity_mpa_s"] * 1e-3
    assert mu == pytest.approx(3.84e-3, rel=1e-6)
    # Reference: fluids.core.Reynolds with V = Q / A (Q from scipy.constants liter, minute).
    v = 5 * sc.liter / sc.minute / (3.141592653589793 * 0.025**2 / 4)
    assert out["reynolds_number"] == pytest.approx(
        fluids.core.Reynolds(V=v, D=0.025, rho=1060.0, mu=mu))
    assert out["flow_regime"] == "laminar"


def test_small_tube_relative_viscosity(capsys):
    out = run_json(capsys, "--diameter-um", "100", "--hematocrit", "0.45")
    # Pries, Neuhaus & Gaehtgens 1992, value computed from the published formula.
    assert out["relative_viscosity"] == pytest.approx(2.443, abs=1e-3)
    assert out["viscosity_mpa_s"] < out["bulk_viscosity_mpa_s"]
    assert "Fahraeus-Lindqvist" in out["meanings"]["bulk_viscosity_mpa_s"]


def test_jet_pressure_drop_64(capsys):
    out = run_json(capsys, "--jet-velocity-m-s", "4")
    # Common practice: simplified Bernoulli 4 v^2 = 64 mmHg at 4 m/s.
    assert out["pressure_drop_mmhg"] == pytest.approx(64.0)
    # Full form 1/2 rho v^2 with scipy.constants.mmHg.
    assert out["pressure_drop_full_mmhg"] == pytest.approx(0.5 * 1060 * 16 / sc.mmHg, rel=1e-6)


def test_strouhal_orifice_estimate_with_assumption(capsys):
    out = run_json(capsys, "--frequency-hz", "200", "--velocity-m-s", "3")
    # Reference: fluids.core.Strouhal(f, L, V) of the estimate gives back St = 1.
    d_m = out["orifice_diameter_mm"] * 1e-3
    assert fluids.core.Strouhal(f=200.0, L=d_m, V=3.0) == pytest.approx(1.0)
    assert any("St = 1" in a and "jet velocity" in a for a in out["assumptions"])
    assert out["jet_reynolds_number"] > 2300


def test_table_explains_each_number(capsys):
    assert main(["flow", "--velocity-m-s", "1.2", "--diameter-mm", "25",
                 "--viscosity-mpa-s", "3.5"]) == 0
    text = capsys.readouterr().out
    assert "Reynolds number" in text and "9,086" in text
    assert "turbulent" in text and "Stein & Sabbah" in text


def test_preset_aorta_in_stein_sabbah_range(capsys):
    out = run_json(capsys, "--preset", "normal-adult-aorta")
    # Stein & Sabbah 1976: peak Re about 5,700-8,900 in normal human ascending aortas.
    assert 5700 <= out["reynolds_number"] <= 8900
    # From memory: the human aorta has a Womersley number of roughly 10-20.
    assert 10 < out["womersley_number"] < 22
    assert out["assumptions"][0].startswith("Preset normal-adult-aorta")


@pytest.mark.parametrize(
    ("argv", "needle"),
    [
        (["--hematocrit", "45"], "0.45, not a percentage"),
        (["--flow-l-min", "-5", "--diameter-mm", "3"], "--flow-l-min -5"),
        (["--velocity-m-s", "nan", "--diameter-mm", "3"], "--velocity-m-s nan"),
        (["--diameter-um", "2", "--hematocrit", "0.4"], "3 um"),
        ([], "nothing to compute"),
        (["--velocity-m-s", "1", "--flow-l-min", "5", "--diameter-mm", "25"], "two of them"),
        (["--viscosity-mpa-s", "3", "--hematocrit", "0.4"], "one of them"),
    ],
)
def test_errors_are_one_line_and_non_zero(capsys, argv, needle):
    assert main(["flow", *argv]) == 2
    err = capsys.readouterr().err
    assert needle in err
    assert err.count("\n") == 1


def test_cli_module_imports_no_physics_at_load():
    # The dispatcher imports every command module for --help; the flow module must not
    # pull in numpy-backed code at import time.
    code = "import sys, eddyphone.cli.flow; print('eddyphone.physics' in sys.modules)"
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True)
    assert res.stdout.strip() == "False"


def test_describe_flow_states_default_assumptions():
    d = describe_flow(velocity_m_s=1.0, diameter_m=0.02)
    assert any("hematocrit of 0.45" in a for a in d["assumptions"])
    assert any("1060 kg/m3" in a for a in d["assumptions"])
    assert set(d["meanings"]) == set(d["units"]) == set(d["labels"])
    for key in d["meanings"]:
        assert key in d and d["meanings"][key].endswith(".")
    json.dumps(d)  # JSON-ready


def test_describe_flow_velocity_from_frequency_and_orifice():
    d = describe_flow(frequency_hz=400.0, orifice_diameter_m=0.01)
    # Reference: fluids.core.Strouhal of the estimate gives back St = 1; 4 v^2 rule.
    assert fluids.core.Strouhal(f=400.0, L=0.01, V=d["jet_velocity_m_s"]) == pytest.approx(1.0)
    assert d["pressure_drop_mmhg"] == pytest.approx(4 * d["jet_velocity_m_s"] ** 2)
