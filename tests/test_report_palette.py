"""The palette stays apart for colour-deficient readers.

Method: each colour is converted from sRGB to linear RGB (IEC 61966-2-1), passed
through the Machado, Oliveira & Fernandes (2009) simulation matrices for full
protanopia, deuteranopia and tritanopia (coefficients from memory), and compared
in CIE 1976 L*a*b* (D65 white). A colour difference of about 2.3 is just noticeable
and ~10 or more is easily told apart at a glance (common practice).
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from eddyphone.report import palette

MACHADO_2009 = {
    "normal": np.eye(3),
    "protan": np.array([[0.152286, 1.052583, -0.204868],
                        [0.114503, 0.786281, 0.099216],
                        [-0.003882, -0.048116, 1.051998]]),
    "deutan": np.array([[0.367322, 0.860646, -0.227968],
                        [0.280085, 0.672501, 0.047413],
                        [-0.011820, 0.042940, 0.968881]]),
    "tritan": np.array([[1.255528, -0.076749, -0.178779],
                        [-0.078411, 0.930809, 0.147602],
                        [0.004733, 0.691367, 0.303900]]),
}
#: Smallest pairwise difference we accept between state colours and between mechanism colours.
MIN_DELTA_E = 20.0


def _linear(hex_colour: str) -> np.ndarray:
    c = np.array([int(hex_colour[i:i + 2], 16) / 255 for i in (1, 3, 5)])
    return np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)  # IEC 61966-2-1


def _lab(linear_rgb: np.ndarray) -> np.ndarray:
    # sRGB (D65) to XYZ matrix of IEC 61966-2-1; CIE 1976 L*a*b* with the D65 white point.
    m = np.array([[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722],
                  [0.0193, 0.1192, 0.9505]])
    xyz = m @ np.clip(linear_rgb, 0, 1) / np.array([0.95047, 1.0, 1.08883])
    d = 6 / 29
    f = np.where(xyz > d ** 3, np.cbrt(xyz), xyz / (3 * d * d) + 4 / 29)
    return np.array([116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])])


def test_lab_conversion_matches_the_handbook_value_for_pure_red():
    # sRGB (255, 0, 0) is L* 53.24, a* 80.09, b* 67.20 (widely tabulated; from memory).
    assert np.allclose(_lab(_linear("#ff0000")), [53.24, 80.09, 67.20], atol=0.1)
    assert np.allclose(_lab(_linear("#ffffff")), [100.0, 0.0, 0.0], atol=0.05)


@pytest.mark.parametrize("vision", sorted(MACHADO_2009))
@pytest.mark.parametrize("colours", [palette.STATE_COLOURS, palette.MECHANISM_COLOURS],
                         ids=["states", "mechanisms"])
def test_colours_stay_apart_for_every_colour_vision(colours, vision):
    labs = {k: _lab(MACHADO_2009[vision] @ _linear(v)) for k, v in colours.items()}
    worst = min((float(np.linalg.norm(labs[a] - labs[b])), a, b)
                for a, b in itertools.combinations(labs, 2))
    assert worst[0] >= MIN_DELTA_E, f"{worst[1]} and {worst[2]} too close for {vision}: {worst}"


def test_energy_map_lightness_falls_monotonically():
    # Quiet-to-loud must read the same in grey and for every colour vision.
    for vision, matrix in MACHADO_2009.items():
        lightness = [_lab(matrix @ _linear(c))[0] for c in palette.ENERGY_STOPS]
        assert np.all(np.diff(lightness) < 0), (vision, lightness)


def test_palette_names_every_state_and_mechanism():
    assert set(palette.STATE_COLOURS) == {"S1", "systole", "S2", "diastole"}
    assert set(palette.MECHANISM_COLOURS) == {"high_flow", "narrowed_orifice", "low_viscosity",
                                              "wall_irregularity", "no_flow_disturbance"}
    assert palette.mechanism_colour("something_new") == palette.OTHER_MECHANISM
