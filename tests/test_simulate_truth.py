"""Murmur truth: what the recording carries (murmur-to-noise, audibility) and the pitch
at the chest surface, against scipy's filters and spectra."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import signal

from eddyphone.simulate import CaseSpec, MurmurSpec, chain, generate, murmurs
from eddyphone.simulate.truth import MNR_BANDS_HZ, audibility, murmur_to_noise_db

FS = 4000.0


def _tone(f_hz: float, amp: float, n: int) -> np.ndarray:
    return amp * np.sin(2 * np.pi * f_hz * np.arange(n) / FS)


def test_murmur_to_noise_is_the_power_ratio_in_the_best_band():
    # Power ratio of two sinusoids in the same band is 20 log10 of their amplitude ratio
    # (definition of the decibel, common practice); the best band wins, so noise far
    # outside the murmur's band does not lower the figure.
    n = int(4 * FS)
    mur = _tone(110.0, 1.0, n)
    noise = _tone(110.0, 0.5, n) + _tone(450.0, 20.0, n)
    mnr = murmur_to_noise_db(mur, noise, FS, [(0.5, 3.5)])
    assert mnr == pytest.approx(20 * np.log10(1.0 / 0.5), abs=0.3)
    # outside the spans nothing counts: a loud murmur there changes nothing
    # (beyond the band filters' ringing, a few tenths of a second)
    mur2 = mur.copy()
    mur2[: int(0.2 * FS)] *= 100.0
    assert murmur_to_noise_db(mur2, noise, FS, [(1.0, 3.5)]) == pytest.approx(mnr, abs=0.1)
    assert murmur_to_noise_db(mur, noise, FS, []) is None
    assert murmur_to_noise_db(np.zeros(n), noise, FS, [(0.5, 3.5)]) is None


def test_murmur_to_noise_matches_scipy_band_filters():
    # Independent computation with scipy.signal (4th-order Butterworth, forward and
    # backward) in each band, inside the spans, best band: the same figure.
    rng = np.random.default_rng(5)
    n = int(5 * FS)
    mur = signal.sosfilt(signal.butter(4, [200, 500], "band", fs=FS, output="sos"),
                         rng.standard_normal(n))
    noise = np.cumsum(rng.standard_normal(n)) * 0.02
    noise -= signal.sosfiltfilt(signal.butter(2, 5, fs=FS, output="sos"), noise)
    spans = [(0.3, 0.6), (1.3, 1.6), (2.3, 2.6), (3.3, 3.6)]
    sel = np.zeros(n, bool)
    for a, b in spans:
        sel[int(a * FS): int(b * FS)] = True
    ref = -np.inf
    for lo, hi in MNR_BANDS_HZ:
        sos = signal.butter(4, [lo, hi], "band", fs=FS, output="sos")
        mb, nb = signal.sosfiltfilt(sos, mur), signal.sosfiltfilt(sos, noise)
        ref = max(ref, 10 * np.log10(np.mean(mb[sel] ** 2) / np.mean(nb[sel] ** 2)))
    assert murmur_to_noise_db(mur, noise, FS, spans) == pytest.approx(ref, abs=0.2)


def test_audibility_rule():
    # our own convention (docs/simulator.md): carried when at or above the grade I edge
    # and at or above 0 dB over the noise; the grade I edge is reported first
    edge = murmurs.GRADE_EDGES_DB[0]
    assert audibility(edge, 0.0, edge) == (True, "")
    assert audibility(edge - 0.1, 12.0, edge) == (False, "below grade I")
    assert audibility(edge + 5, -0.1, edge) == (False, "buried in noise")
    assert audibility(edge - 5, -9.0, edge) == (False, "below grade I")
    assert audibility(edge + 5, None, edge) == (False, "buried in noise")


def test_chest_wall_gain_is_the_rendered_filter():
    # The gain used for the truth's pitch is what the chest wall does to a sinusoid
    # (power ratio after/before, measured past the start-up), and half power at the
    # corner (Butterworth -3 dB point, common practice).
    n = int(2 * FS)
    for f in (50.0, 150.0, 300.0, 600.0, 1200.0):
        x = _tone(f, 1.0, n)
        y = chain.chest_wall(x, FS, 300.0)
        measured = np.mean(y[n // 2:] ** 2) / np.mean(x[n // 2:] ** 2)
        assert murmurs.chest_wall_gain(np.array([f]), 300.0, FS)[0] == pytest.approx(
            measured, rel=0.03)
    assert murmurs.chest_wall_gain(np.array([300.0]), 300.0, FS)[0] == pytest.approx(0.5,
                                                                                     rel=1e-3)


def test_truth_pitch_is_taken_at_the_chest_surface():
    # The chest wall's low-pass lowers a high murmur's centroid: the truth's centre
    # matches the Welch centroid of the rendered murmur after the chest wall, not the
    # source's (reference: scipy.signal.welch).
    spec = CaseSpec(heart_rate_bpm=70, duration_s=12.0, seed=11, snr_db=25.0, fs=FS,
                    chest_wall_cutoff_hz=200.0, device="flat",
                    murmur=MurmurSpec("systolic_leak", diameter_m=0.004, velocity_m_s=5.0))
    sim = generate(spec)
    m = sim.truth["murmur"]
    plan = murmurs.plan_murmur(spec.murmur)
    fs = sim.fs
    beats = [{k: b[k] for k in ("s1_start_s", "ejection_s", "a2_s", "next_s1_s",
                                "mitral_open_s", "rr_prev_s", "premature")}
             for b in sim.truth["beats"]]
    n = int(spec.duration_s * fs)
    x, _, _ = murmurs.render_murmur(plan, beats, n, fs, np.random.default_rng(0), sinus=True,
                                    mean_rr_s=60 / 70)
    f, p_src = signal.welch(x, fs=fs, nperseg=2048)
    _, p_cw = signal.welch(chain.chest_wall(x, fs, 200.0), fs=fs, nperseg=2048)
    c_src = float(np.sum(f * p_src) / np.sum(p_src))
    c_cw = float(np.sum(f * p_cw) / np.sum(p_cw))
    assert m["centre_hz_source"] == pytest.approx(c_src, rel=0.2)
    assert m["centre_hz"] == pytest.approx(c_cw, rel=0.2)
    assert m["centre_hz"] < 0.6 * m["centre_hz_source"]
    assert m["pitch_source"] == "high" and m["pitch"] in ("low", "medium")


def test_truth_says_whether_the_recording_carries_the_murmur():
    # A loud murmur at high SNR is carried; the same murmur buried under loud noise is
    # generated ("present") but not carried, with the reason; the recorded ratio agrees
    # with the parts the generator reports (sim.parts) measured independently.
    loud = MurmurSpec("narrowed_outflow", diameter_m=0.008, velocity_m_s=4.0)
    sim = generate(CaseSpec(heart_rate_bpm=72, duration_s=10.0, seed=3, snr_db=30.0,
                            murmur=loud))
    m = sim.truth["murmur"]
    assert m["present"] and m["audible_in_recording"] and m["inaudible_reason"] == ""
    assert m["murmur_to_noise_db"] == pytest.approx(murmur_to_noise_db(
        sim.parts["murmur"], sim.parts["noise"], sim.fs, m["spans"]), abs=1e-9)
    assert m["murmur_to_noise_db"] > 10.0
    faint = MurmurSpec("high_flow", diameter_m=0.02, velocity_m_s=1.4)
    sim2 = generate(CaseSpec(heart_rate_bpm=72, duration_s=10.0, seed=3, snr_db=0.0,
                             murmur=faint, breathing=0.6))
    m2 = sim2.truth["murmur"]
    assert not m2["audible_in_recording"]
    assert m2["inaudible_reason"] in ("below grade I", "buried in noise")
    none = generate(CaseSpec(heart_rate_bpm=72, duration_s=8.0, seed=3))
    assert none.truth["murmur"]["audible_in_recording"] is False
    assert none.truth["murmur"]["inaudible_reason"] == "no murmur"


def test_carried_murmur_bands_are_the_simulators_own():
    # The benchmark's truth must not move with the findings' settings: the bands are
    # our own convention (octave-wide from 75 Hz over 25-900 Hz, docs/simulator.md),
    # defined in the simulator and not imported from the findings package.
    import ast
    import inspect

    from eddyphone.simulate import truth

    assert MNR_BANDS_HZ == ((25.0, 75.0), (75.0, 150.0), (150.0, 300.0), (300.0, 600.0),
                            (600.0, 900.0))
    for (lo, hi), (lo2, _) in zip(MNR_BANDS_HZ[1:-1], MNR_BANDS_HZ[2:-1]):
        assert hi == pytest.approx(2.0 * lo) and lo2 == hi  # octaves, contiguous
    tree = ast.parse(inspect.getsource(truth))
    imported = [n.module for n in ast.walk(tree) if isinstance(n, ast.ImportFrom)]
    assert not any((m or "").startswith("eddyphone.findings") for m in imported)
