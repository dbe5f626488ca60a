"""Teaching renders: pitch kept when slowed, parts attenuated by what was asked, seamless loops."""

from __future__ import annotations

import io
import subprocess
import sys
from types import SimpleNamespace

import librosa
import numpy as np
import pytest
import scipy.signal
import soundfile as sf
from _report_data import MURMUR_CASE

from eddyphone.errors import ParameterError, QualityError
from eddyphone.segment import Segment
from eddyphone.teach import (
    choose_beat,
    gain_curve,
    heart_sounds_only,
    isolate_murmur,
    loop_beat,
    time_stretch,
    wav_bytes,
)

FS = 4000.0


def _peak_hz(x: np.ndarray, fs: float) -> float:
    """Dominant frequency by scipy's Welch periodogram with parabolic peak interpolation."""
    f, p = scipy.signal.welch(x, fs=fs, nperseg=4096, window="hann")
    k = int(np.argmax(p))
    a, b, c = np.log(p[k - 1: k + 2])
    return float(f[k] + 0.5 * (a - c) / (a - 2 * b + c) * (f[1] - f[0]))


@pytest.mark.parametrize("tone_hz", [60.0, 180.0, 440.0])
def test_slowed_tone_keeps_its_pitch_and_doubles_in_length(tone_hz):
    t = np.arange(int(4.0 * FS)) / FS
    x = 0.5 * np.sin(2 * np.pi * tone_hz * t)
    y = time_stretch(x, FS, speed=0.5)
    assert len(y) == 2 * len(x)
    core = y[len(y) // 8: -len(y) // 8]
    # Issue requirement: dominant frequency unchanged within 2 %.
    assert abs(_peak_hz(core, FS) - tone_hz) / tone_hz < 0.02
    # Second, independent estimator: librosa's YIN fundamental-frequency tracker.
    f0 = librosa.yin(core, fmin=tone_hz / 2, fmax=min(tone_hz * 2, FS / 2 - 1), sr=FS,
                     frame_length=2048)
    assert abs(float(np.median(f0)) - tone_hz) / tone_hz < 0.02


def test_naive_resampling_would_fail_the_same_check():
    # The check can fail: slowing by resampling (no phase vocoder) halves the pitch.
    t = np.arange(int(2.0 * FS)) / FS
    x = np.sin(2 * np.pi * 200.0 * t)
    naive = scipy.signal.resample(x, 2 * len(x))  # played at FS: twice as long, pitch halved
    assert abs(_peak_hz(naive, FS) - 200.0) / 200.0 > 0.4


def test_faster_playback_halves_the_length():
    x = np.sin(2 * np.pi * 100 * np.arange(int(3 * FS)) / FS)
    assert len(time_stretch(x, FS, speed=2.0)) == len(x) // 2


def test_speed_out_of_range_names_the_value():
    with pytest.raises(ParameterError, match="speed=0.01"):
        time_stretch(np.zeros(8000), FS, speed=0.01)


def _segments():
    segs = []
    t0 = 0.2
    for _ in range(6):
        segs += [Segment(t0, t0 + 0.1, "S1"), Segment(t0 + 0.1, t0 + 0.3, "systole"),
                 Segment(t0 + 0.3, t0 + 0.38, "S2"), Segment(t0 + 0.38, t0 + 0.8, "diastole")]
        t0 += 0.8
    return segs


def _band_db(y, x, a, b):
    i, j = int(a * FS), int(b * FS)
    return 10 * np.log10(np.mean(y[i:j] ** 2) / np.mean(x[i:j] ** 2))


def test_isolate_murmur_attenuates_heart_sounds_by_the_requested_amount():
    x = np.random.default_rng(0).standard_normal(int(5.2 * FS))
    y = isolate_murmur(x, FS, _segments(), attenuation_db=30.0)
    # Inside S1 (away from the 10 ms ramps) -30 dB; inside systole unchanged.
    assert _band_db(y, x, 0.22, 0.28) == pytest.approx(-30.0, abs=0.01)
    assert _band_db(y, x, 0.33, 0.47) == pytest.approx(0.0, abs=0.01)
    assert _band_db(y, x, 0.52, 0.56) == pytest.approx(-30.0, abs=0.01)


def test_heart_sounds_only_attenuates_the_silences():
    x = np.random.default_rng(1).standard_normal(int(5.2 * FS))
    y = heart_sounds_only(x, FS, _segments(), attenuation_db=40.0)
    assert _band_db(y, x, 0.22, 0.28) == pytest.approx(0.0, abs=0.01)
    assert _band_db(y, x, 0.33, 0.47) == pytest.approx(-40.0, abs=0.01)
    assert _band_db(y, x, 0.7, 0.9) == pytest.approx(-40.0, abs=0.01)


def test_gain_has_no_step_at_segment_edges():
    g = gain_curve(4000, FS, [(0.25, 0.5)], gain_db=-30.0, ramp_s=0.01)
    # The 30 dB change is spread over the 10 ms (40-sample) ramp: no sample-to-sample step
    # larger than 4 times the mean slope of the ramp (a hard edge would be 40 times).
    full = 1 - 10 ** (-1.5)
    assert np.max(np.abs(np.diff(g))) < 4 * full / 40
    assert g[0] == pytest.approx(1.0) and g[1500] == pytest.approx(10 ** (-1.5))


def test_renders_need_a_segmentation():
    with pytest.raises(QualityError, match="no S1/S2 segments"):
        isolate_murmur(np.zeros(4000), FS, [])


def _beat(index, s1, nxt):
    return SimpleNamespace(index=index, s1_onset_s=s1, next_s1_onset_s=nxt, confidence=0.5)


def test_loop_repeats_one_cycle_without_a_click():
    rng = np.random.default_rng(3)
    n = int(4 * FS)
    t = np.arange(n) / FS
    x = 0.02 * rng.standard_normal(n)
    for onset in (0.3, 1.1, 1.9, 2.7):  # one "S1" burst per 0.8 s cycle
        m = (t >= onset) & (t < onset + 0.08)
        x[m] += np.hanning(m.sum()) * np.sin(2 * np.pi * 60 * t[m])
    beat = _beat(1, 1.1, 1.9)
    y = loop_beat(x, FS, beat, repeats=5)
    period = int(round(0.8 * FS))
    assert len(y) == 5 * period
    # Every copy carries the burst at the same place: correlation of copies near 1.
    copies = y.reshape(5, period)
    for k in range(1, 4):
        assert np.corrcoef(copies[k], copies[k + 1])[0, 1] > 0.95
    # Seams (in late diastole) are no louder than the diastolic noise itself.
    seams = np.abs(np.diff(y))[[k * period - 1 for k in range(1, 5)]]
    assert seams.max() < 6 * np.std(np.diff(x[int(0.5 * FS): int(1.0 * FS)]))


def test_choose_beat_takes_the_most_confident_complete_beat():
    beats = [_beat(0, 0.2, 1.0), _beat(1, 1.0, 1.8), _beat(2, 1.8, None)]
    beats[1].confidence = 0.9
    beats[2].confidence = 1.0  # incomplete: never chosen
    assert choose_beat(beats).index == 1
    assert choose_beat(beats, 0).index == 0
    with pytest.raises(ParameterError, match="beat 2 has no following S1"):
        choose_beat(beats, 2)
    with pytest.raises(ParameterError, match="beat 7 is not in the beats table"):
        choose_beat(beats, 7)


def test_wav_bytes_reads_back_at_eight_kilohertz_and_minus_one_db():
    x = np.sin(2 * np.pi * 100 * np.arange(int(2 * FS)) / FS)
    y, fs = sf.read(io.BytesIO(wav_bytes(x, FS)))
    assert fs == 8000 and len(y) == pytest.approx(2 * len(x), abs=2)
    assert 20 * np.log10(np.max(np.abs(y))) == pytest.approx(-1.0, abs=0.05)
    assert sf.info(io.BytesIO(wav_bytes(x, FS))).subtype == "PCM_16"


def test_teach_command_writes_the_four_renders(tmp_path):
    result = subprocess.run([sys.executable, "-m", "eddyphone.cli", "teach", str(MURMUR_CASE),
                             "--out", str(tmp_path), "--speed", "0.5", "--repeats", "4"],
                            capture_output=True, text=True, timeout=600)
    assert result.returncode == 0, result.stderr
    stem = MURMUR_CASE.stem
    duration = sf.info(str(MURMUR_CASE)).duration
    slowed = sf.info(str(tmp_path / f"{stem}.teach.slowed-0.5x.wav"))
    assert slowed.duration == pytest.approx(2 * duration, abs=0.01)
    for name in ("murmur-only", "heart-sounds-only"):
        assert sf.info(str(tmp_path / f"{stem}.teach.{name}.wav")).duration == \
            pytest.approx(duration, abs=0.01)
    loop = sf.info(str(tmp_path / f"{stem}.teach.beat-loop.wav"))
    assert 4 * 0.3 < loop.duration < 4 * 1.5  # four cycles of a plausible heart rate
    assert len(result.stdout.strip().splitlines()) == 4
    again = subprocess.run([sys.executable, "-m", "eddyphone.cli", "teach", str(MURMUR_CASE),
                            "--out", str(tmp_path)], capture_output=True, text=True, timeout=600)
    assert again.returncode != 0 and "already exists" in again.stderr
    assert len(again.stderr.strip().splitlines()) == 1


def test_teach_on_a_given_segmentation_loops_the_given_beat(tmp_path):
    # An educator's corrected segmentation drives the renders: the loop of beat 2 lasts
    # four of that beat's cycles as the given intervals time it (here the simulator's
    # own S1 onsets, truth.csv of the same recording).
    truth = MURMUR_CASE.with_name(MURMUR_CASE.stem + ".truth.csv")
    onsets = [float(r.split(",")[0]) for r in truth.read_text().splitlines()[1:]
              if r.split(",")[2] == "S1"]
    result = subprocess.run([sys.executable, "-m", "eddyphone.cli", "teach", str(MURMUR_CASE),
                             "--out", str(tmp_path), "--only", "beat-loop", "--beat", "2",
                             "--repeats", "4", "--segments", str(truth)],
                            capture_output=True, text=True, timeout=600)
    assert result.returncode == 0, result.stderr
    loop = sf.info(str(tmp_path / f"{MURMUR_CASE.stem}.teach.beat-loop.wav"))
    assert loop.duration == pytest.approx(4 * (onsets[3] - onsets[2]), abs=0.001)
