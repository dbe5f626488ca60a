"""The recording chain: chest wall, stethoscope response, noise, gain and quantisation.

Public names
------------
DEVICES
    Stethoscope response names and their magnitude responses (dB against Hz).
device_gain_db
    Magnitude response of a named device at given frequencies.
apply_device
    Filter a signal through a device (minimum-phase FIR).
chest_wall
    Low-pass of the tissue between heart and chest surface.
band_power
    Power of a signal in a band (used to set signal-to-noise ratios).
coloured_noise, breath_noise, speech_noise, hum, friction_bursts
    Noise sources.
quantise
    Round to a PCM bit depth.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
from scipy import signal


def _highpass_db(f: np.ndarray, corner_hz: float, order: int) -> np.ndarray:
    r = np.maximum(f, 1e-3) / corner_hz
    return 10 * np.log10(r ** (2 * order) / (1 + r ** (2 * order)))


def _lowpass_db(f: np.ndarray, corner_hz: float, order: int) -> np.ndarray:
    r = np.maximum(f, 0.0) / corner_hz
    return -10 * np.log10(1 + r ** (2 * order))


def _flat(f: np.ndarray) -> np.ndarray:
    return _highpass_db(f, 8.0, 1)


def _diaphragm(f: np.ndarray) -> np.ndarray:
    # a tensioned diaphragm rejects low frequencies and rings broadly near 200 Hz
    bump = 4.0 * np.exp(-0.5 * (np.log2(np.maximum(f, 1.0) / 200.0) / 0.8) ** 2)
    return _highpass_db(f, 90.0, 2) + bump + _lowpass_db(f, 1200.0, 2)


def _bell(f: np.ndarray) -> np.ndarray:
    # the open bell passes the low band and loses the high band
    return _highpass_db(f, 15.0, 1) + _lowpass_db(f, 180.0, 2)


def _steep_tilt(f: np.ndarray) -> np.ndarray:
    # strong low-frequency tilt seen on some electronic stethoscopes: 0 dB at 20 Hz,
    # -35 dB at 200 Hz (-35 dB per decade), -70 dB at 400 Hz (-35 dB per octave above)
    ff = np.maximum(f, 1e-3)
    mid = -35.0 * np.log10(np.clip(ff, 20.0, 200.0) / 20.0)
    high = -35.0 * np.log2(np.maximum(ff, 200.0) / 200.0)
    return np.maximum(mid + high, -110.0) + _highpass_db(f, 6.0, 1)


def _phone(f: np.ndarray) -> np.ndarray:
    # a phone microphone pressed to the chest: little below 100 Hz, flat to 3 kHz
    return _highpass_db(f, 110.0, 3) + _lowpass_db(f, 3400.0, 4)


#: Device responses by name: magnitude in dB as a function of frequency in Hz.
DEVICES: dict[str, Callable[[np.ndarray], np.ndarray]] = {
    "flat": _flat,
    "diaphragm": _diaphragm,
    "bell": _bell,
    "steep_tilt": _steep_tilt,
    "phone": _phone,
}

#: One line per device for truth files and READMEs.
DEVICE_NOTES = {
    "flat": "ideal transducer, DC blocked below 8 Hz",
    "diaphragm": "acoustic diaphragm: high-pass 90 Hz (2nd order), +4 dB near 200 Hz",
    "bell": "acoustic bell: passes 15-180 Hz, 2nd-order roll-off above",
    "steep_tilt": "electronic chest piece with strong low-frequency tilt: "
                  "-35 dB from 20 to 200 Hz, -70 dB by 400 Hz",
    "phone": "phone microphone on the chest: 3rd-order high-pass at 110 Hz",
}


def device_gain_db(device: str, f_hz: np.ndarray) -> np.ndarray:
    """Magnitude response in dB of ``device`` at frequencies ``f_hz``."""
    return DEVICES[device](np.asarray(f_hz, dtype=float))


def _minimum_phase_fir(gain_db: np.ndarray, n_fft: int) -> np.ndarray:
    """Minimum-phase impulse response for a magnitude on an rfft grid (real cepstrum)."""
    mag = 10 ** (gain_db / 20.0)
    full = np.concatenate([mag, mag[-2:0:-1]])
    cep = np.fft.ifft(np.log(np.maximum(full, 1e-8))).real
    fold = np.zeros(n_fft)
    fold[0] = cep[0]
    fold[1: n_fft // 2] = 2 * cep[1: n_fft // 2]
    fold[n_fft // 2] = cep[n_fft // 2]
    h = np.fft.ifft(np.exp(np.fft.fft(fold))).real
    n_keep = n_fft // 2
    window = np.ones(n_keep)
    tail = n_keep // 4
    window[-tail:] = 0.5 * (1 + np.cos(np.linspace(0, np.pi, tail)))
    return h[:n_keep] * window


def _preroll(x: np.ndarray, m: int) -> np.ndarray:
    # mirror image of the start so that a causal filter begins in steady state (a
    # recording has no switch-on step: the body was sounding before it started); an even
    # mirror keeps the mean, so very-low-frequency responses see no step either
    m = min(m, len(x) - 1)
    return np.concatenate([x[m:0:-1], x])


def draw_ripple(amount_db: float, rng: np.random.Generator) -> tuple[tuple[float, float], ...]:
    """Coefficients of a smooth unit-to-unit response ripple of about ``amount_db`` peak.

    Real chest pieces of one model differ by a few dB; the ripple is a sum of four
    cosines over log-frequency (20 Hz-2 kHz), scaled to ``amount_db`` peak.
    """
    if amount_db <= 0:
        return ()
    coef = [(rng.normal(), rng.uniform(0, 2 * np.pi)) for _ in range(4)]
    grid = np.log2(np.geomspace(20, 2000, 200) / 20)
    shape = sum(a * np.cos(np.pi * (k + 1) * grid / grid[-1] + ph)
                for k, (a, ph) in enumerate(coef))
    scale = amount_db / (np.abs(shape).max() + 1e-12)
    return tuple((a * scale, ph) for a, ph in coef)


def ripple_db(ripple: tuple, f_hz: np.ndarray) -> np.ndarray:
    """Ripple in dB at ``f_hz`` from :func:`draw_ripple` coefficients (0 if none)."""
    f = np.asarray(f_hz, dtype=float)
    if not ripple:
        return np.zeros_like(f)
    top = np.log2(2000 / 20)
    u = np.log2(np.clip(f, 20, 2000) / 20)
    return sum(a * np.cos(np.pi * (k + 1) * u / top + ph) for k, (a, ph) in enumerate(ripple))


def apply_device(x: np.ndarray, fs: float, device: str, *, ripple: tuple = ()) -> np.ndarray:
    """Filter ``x`` through the named device response (causal, minimum phase).

    ``ripple`` (from :func:`draw_ripple`) adds this unit's deviation from the model.
    """
    n_fft = int(2 ** np.ceil(np.log2(fs)))  # ~1 Hz resolution
    f = np.fft.rfftfreq(n_fft, 1.0 / fs)
    h = _minimum_phase_fir(device_gain_db(device, f) + ripple_db(ripple, f), n_fft)
    m = len(h)
    y = signal.fftconvolve(_preroll(x, m), h)
    k = min(m, len(x) - 1)
    return y[k: k + len(x)]


def group_delay_ms(fs: float, device: str, f_hz: tuple[float, ...], *, ripple: tuple = ()
                   ) -> dict[str, float]:
    """Group delay in ms of the device filter at the given frequencies.

    Truth times are at the source; sounds in the recording arrive this much later
    (minimum-phase filters delay most where the response changes fastest).
    """
    n_fft = int(2 ** np.ceil(np.log2(fs)))
    f = np.fft.rfftfreq(n_fft, 1.0 / fs)
    h = _minimum_phase_fir(device_gain_db(device, f) + ripple_db(ripple, f), n_fft)
    w, gd = signal.group_delay((h, [1.0]), w=np.asarray(f_hz, dtype=float), fs=fs)
    return {f"{q:g}_hz": float(d / fs * 1000.0) for q, d in zip(w, gd, strict=True)}


def chest_wall(x: np.ndarray, fs: float, cutoff_hz: float) -> np.ndarray:
    """Second-order low-pass standing for the tissue between heart and chest surface."""
    sos = signal.butter(2, min(cutoff_hz, 0.45 * fs), "low", fs=fs, output="sos")
    k = min(int(0.1 * fs), len(x) - 1)
    return signal.sosfilt(sos, _preroll(x, k))[k:]


def band_power(x: np.ndarray, fs: float, band_hz: tuple[float, float] = (25.0, 400.0)
               ) -> float:
    """Mean power of ``x`` in ``band_hz``: 4th-order Butterworth band-pass applied forward
    and backward (zero phase), computed in the frequency domain (Parseval)."""
    hi = min(band_hz[1], 0.45 * fs)
    sos = signal.butter(4, [band_hz[0], hi], "band", fs=fs, output="sos")
    n = len(x)
    spec = np.fft.rfft(x)
    _, h = signal.sosfreqz(sos, worN=np.fft.rfftfreq(n, 1.0 / fs), fs=fs)
    p = np.abs(spec) ** 2 * np.abs(h) ** 4
    p[1:] *= 2.0
    if n % 2 == 0:
        p[-1] /= 2.0
    return float(p.sum() / n**2)


def _shaped_noise(n: int, fs: float, gain: Callable[[np.ndarray], np.ndarray],
                  rng: np.random.Generator) -> np.ndarray:
    w = np.fft.rfft(rng.standard_normal(n))
    f = np.fft.rfftfreq(n, 1.0 / fs)
    y = np.fft.irfft(w * gain(f), n)
    return y / (y.std() + 1e-20)


def coloured_noise(n: int, fs: float, slope: float, rng: np.random.Generator) -> np.ndarray:
    """Unit-sd noise with power falling as ``f**-slope`` above 10 Hz."""
    return _shaped_noise(n, fs, lambda f: (np.maximum(f, 10.0) / 10.0) ** (-slope / 2), rng)


def breath_noise(n: int, fs: float, airflow: np.ndarray, rng: np.random.Generator
                 ) -> np.ndarray:
    """Breath sounds: 100-1000 Hz noise whose loudness follows the airflow.

    ``airflow`` is sampled at ``fs`` (positive breathing in). Breathing in is louder
    than breathing out, as heard over the lungs (common practice).
    """
    def gain(f: np.ndarray) -> np.ndarray:
        return (10 ** (_highpass_db(f, 100.0, 2) / 20) * 10 ** (_lowpass_db(f, 250.0, 1) / 20))

    y = _shaped_noise(n, fs, gain, rng)
    a = np.abs(airflow)
    a = a / (a.max() + 1e-12)
    level = np.where(airflow > 0, a, 0.35 * a) ** 1.5
    return y * level


def adventitious_sounds(n: int, fs: float, kind: str, airflow: np.ndarray, breath_phase:
                        np.ndarray, rng: np.random.Generator
                        ) -> tuple[np.ndarray, list[tuple[float, float, str]]]:
    """Lung sounds that are not breath noise, peak about 1, with their spans.

    ``crackles``: short (3-15 ms) damped transients in runs during inspiration, like
    fine and coarse crackles; ``wheeze``: a musical tone (150-700 Hz, gliding, with a
    few harmonics) through most of each expiration. ``airflow`` and ``breath_phase``
    are sampled at ``fs``.
    """
    y = np.zeros(n)
    events: list[tuple[float, float, str]] = []
    if kind == "none":
        return y, events
    if kind == "crackles":
        inspiring = airflow > 0.3 * airflow.max()
        idx = np.nonzero(inspiring)[0]
        count = int(rng.poisson(max(len(idx) / fs, 0.0) * rng.uniform(3, 12)))
        for i0 in np.sort(rng.choice(idx, size=min(count, len(idx)), replace=False)):
            d = rng.uniform(0.003, 0.015)
            m = max(int(d * fs), 4)
            tt = np.arange(m) / fs
            f = rng.uniform(100, min(900, 0.4 * fs))
            burst = np.sin(2 * np.pi * f * tt + rng.uniform(0, 6)) * np.exp(-tt / (d / 3))
            i1 = min(i0 + m, n)
            y[i0:i1] += rng.uniform(0.3, 1.0) * burst[: i1 - i0]
            events.append((i0 / fs, i1 / fs, "crackle"))
    elif kind == "wheeze":
        expiring = (airflow < -0.2 * np.abs(airflow).max())
        f0 = rng.uniform(150, min(700, 0.3 * fs)) * (1 + 0.15 * np.sin(
            2 * np.pi * breath_phase + rng.uniform(0, 6)))
        ph = 2 * np.pi * np.cumsum(f0) / fs
        tone = np.sin(ph) + 0.4 * np.sin(2 * ph) + 0.15 * np.sin(3 * ph)
        env = signal.sosfiltfilt(signal.butter(1, 3.0, fs=fs, output="sos"),
                                 expiring.astype(float))
        y = tone * np.clip(env, 0, 1)
        edges = np.diff(np.concatenate([[0], expiring.astype(int), [0]]))
        for a, b in zip(np.nonzero(edges == 1)[0], np.nonzero(edges == -1)[0], strict=True):
            if b - a > 0.1 * fs:
                events.append((a / fs, b / fs, "wheeze"))
    return y / (np.abs(y).max() + 1e-20), events


def speech_noise(n: int, fs: float, rng: np.random.Generator, *, n_talkers: int = 2
                 ) -> np.ndarray:
    """Room speech: voiced babble of a few talkers with syllable-rate modulation.

    Built in the short-time Fourier domain: harmonics of a gliding voice pitch under
    two formants drawn per syllable (4-6 syllables/s), with pauses between phrases.
    """
    nper = int(2 ** np.ceil(np.log2(0.032 * fs)))
    hop = nper // 4
    n_frames = n // hop + 2
    f = np.fft.rfftfreq(nper, 1.0 / fs)
    t_frames = np.arange(n_frames) * hop / fs
    total = np.zeros((len(f), n_frames))
    vowels = [(730, 1090), (270, 2290), (530, 1840), (570, 840), (300, 870), (660, 1720),
              (440, 1020), (490, 1350)]
    for _ in range(n_talkers):
        f0 = rng.uniform(95, 230) * (1 + 0.08 * np.sin(2 * np.pi * rng.uniform(0.2, 0.6)
                                                         * t_frames + rng.uniform(0, 6)))
        syl_rate = rng.uniform(4, 6)
        syl = np.floor(t_frames * syl_rate + rng.uniform(0, 1)).astype(int)
        syl_env = np.sin(np.pi * ((t_frames * syl_rate) % 1.0)) ** 2
        phrase = ((t_frames + rng.uniform(0, 3)) % rng.uniform(2.0, 4.0)) < rng.uniform(1.2, 1.8)
        choice = rng.integers(0, len(vowels), syl.max() + 1)
        f1 = np.array([vowels[c][0] for c in choice])[syl]
        f2 = np.array([vowels[c][1] for c in choice])[syl]
        # comb of harmonics of f0: distance of each bin to its nearest harmonic
        k = np.maximum(np.round(f[:, None] / f0[None, :]), 1.0)
        dist = f[:, None] - k * f0[None, :]
        harm = np.exp(-0.5 * (dist / 12.0) ** 2) / np.sqrt(k)
        formant = (np.exp(-0.5 * ((f[:, None] - f1[None, :]) / 90.0) ** 2)
                   + 0.7 * np.exp(-0.5 * ((f[:, None] - f2[None, :]) / 120.0) ** 2) + 0.02)
        total += harm * formant * (syl_env * phrase)[None, :]
    phase = np.exp(2j * np.pi * rng.uniform(size=total.shape))
    _, y = signal.istft(total * phase, fs=fs, nperseg=nper, noverlap=nper - hop)
    y = y[:n] if len(y) >= n else np.pad(y, (0, n - len(y)))
    return y / (y.std() + 1e-20)


def hum(n: int, fs: float, mains_hz: float, rng: np.random.Generator) -> np.ndarray:
    """Unit-sd mains hum: fundamental plus odd harmonics, slowly drifting."""
    t = np.arange(n) / fs
    drift = 1 + 0.001 * np.sin(2 * np.pi * 0.05 * t + rng.uniform(0, 6))
    y = np.zeros(n)
    for k, g in ((1, 1.0), (2, 0.15), (3, rng.uniform(0.3, 0.6)), (5, rng.uniform(0.1, 0.3))):
        if k * mains_hz < 0.45 * fs:
            y += g * np.sin(2 * np.pi * k * mains_hz * np.cumsum(drift) / fs + rng.uniform(0, 6))
    return y / (y.std() + 1e-20)


def friction_bursts(n: int, fs: float, per_min: float, rng: np.random.Generator
                    ) -> tuple[np.ndarray, list[tuple[float, float, str]]]:
    """Friction and handling bursts, peak about 1, and their ``(start_s, end_s, kind)``.

    Kinds: ``rub`` (skin or hair rubbing the chest piece: crackly broadband noise,
    50-400 ms), ``thump`` (handling knock: a large low-frequency transient) and
    ``shift`` (chest piece moved: a slow baseline step with crackle).
    """
    y = np.zeros(n)
    events: list[tuple[float, float, str]] = []
    duration_s = n / fs
    count = rng.poisson(per_min * duration_s / 60.0)
    for _ in range(count):
        kind = rng.choice(["rub", "rub", "thump", "shift"])
        start = rng.uniform(0, duration_s)
        if kind == "rub":
            d = rng.uniform(0.05, 0.4)
            m = int(d * fs)
            w = rng.standard_normal(m) * (rng.uniform(size=m) < rng.uniform(0.05, 0.4))
            w = signal.sosfilt(signal.butter(2, [60, min(1500, 0.45 * fs)], "band", fs=fs,
                                             output="sos"), w)
            env = np.sin(np.pi * np.arange(m) / m) ** 0.5
            burst = w * env
        elif kind == "thump":
            d = rng.uniform(0.05, 0.15)
            m = int(d * fs)
            tt = np.arange(m) / fs
            f = rng.uniform(8, 30)
            burst = np.sin(2 * np.pi * f * tt) * np.exp(-tt / (d / 4))
        else:
            d = rng.uniform(0.2, 0.6)
            m = int(d * fs)
            u = np.arange(m) / m
            step = 0.5 * (1 - np.cos(np.pi * np.clip(u * 3, 0, 1))) * np.exp(-u * 2)
            crackle = 0.3 * rng.standard_normal(m) * (rng.uniform(size=m) < 0.1)
            burst = step + crackle * np.exp(-u * 4)
        burst = burst / (np.abs(burst).max() + 1e-12) * rng.uniform(0.3, 1.0)
        i0 = int(start * fs)
        i1 = min(i0 + len(burst), n)
        y[i0:i1] += burst[: i1 - i0]
        events.append((i0 / fs, i1 / fs, str(kind)))
    events.sort()
    return y, events


def quantise(x: np.ndarray, bit_depth: int) -> np.ndarray:
    """Clip to full scale and round to ``bit_depth`` PCM steps (as a file would hold)."""
    q = 2.0 ** (bit_depth - 1)
    return np.clip(np.round(x * q), -q, q - 1) / q
