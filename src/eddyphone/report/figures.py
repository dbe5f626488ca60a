"""The figures of a report, drawn from an :class:`~eddyphone.pipeline.Analysis`.

Every function returns a :class:`matplotlib.figure.Figure` built without pyplot
(no global figure state), sized for an A4 page (7 in wide) and styled by
:mod:`eddyphone.report.palette`. Axes carry their units.

Public API
----------
overview_figure(analysis) -> Figure
    Waveform with the four states as bands, the envelope and numbered beats
    (plus a whole-recording strip with quality and skipped stretches when the
    recording is longer than the detail window).
spectrogram_figure(analysis) -> Figure
    Short-time spectrum of the detail window with the state overlay.
ensemble_figure(analysis) -> Figure
    Every beat aligned on its S1 onset: energy against time-in-cycle and beat
    number, with the median profile beneath.
murmur_figure(analysis, murmur) -> Figure
    Time profile and spectrum of one murmur.
mechanism_figure(analysis) -> Figure or None
    Ranked mechanism scores per finding.
detail_window(analysis, max_s=8.0) -> (t0_s, t1_s)
write_figures(analysis, out_dir, *, stem, dpi=150) -> dict[str, Path]
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import numpy as np

from eddyphone.report import palette
from eddyphone.report.text import phase_words

#: Width in inches of every figure (the text width of an A4 page with margins).
FIGURE_WIDTH_IN = 7.0
#: Longest stretch in seconds drawn sample by sample in the overview and spectrogram.
DETAIL_MAX_S = 8.0
#: Frequency range in Hz of spectra and spectrograms.
SPECTRUM_RANGE_HZ = (20.0, 800.0)
#: Dynamic range in dB of energy images.
ENERGY_RANGE_DB = 40.0

STATE_ORDER = ("S1", "systole", "S2", "diastole")


@contextmanager
def styled() -> Iterator[None]:
    """Context in which figures are created and saved with the eddyphone look."""
    import matplotlib

    with matplotlib.rc_context(palette.figure_style()):
        yield


def _figure(height_in: float):
    from matplotlib.figure import Figure

    return Figure(figsize=(FIGURE_WIDTH_IN, height_in), layout="constrained")


# --- shared helpers -------------------------------------------------------------------

def _segments(analysis: Any) -> list:
    seg = analysis.segmentation
    return list(seg.segments) if seg is not None else []


def _beats(analysis: Any) -> list:
    seg = analysis.segmentation
    return list(seg.beats) if seg is not None else []


def _murmurs(analysis: Any) -> list:
    f = analysis.findings
    return list(getattr(f, "murmurs", ()) or ()) if f is not None else []


def detail_window(analysis: Any, max_s: float = DETAIL_MAX_S) -> tuple[float, float]:
    """The stretch shown in detail: the whole recording if short, else the
    ``max_s`` seconds whose beats have the highest summed confidence."""
    duration = len(analysis.conditioned.x) / analysis.conditioned.fs
    if duration <= max_s + 1.0:
        return 0.0, duration
    beats = _beats(analysis)
    if not beats:
        return 0.0, max_s
    onsets = np.array([b.s1_onset_s for b in beats])
    conf = np.array([b.confidence for b in beats])
    best, best_score = 0.0, -1.0
    for t in onsets:
        start = max(0.0, min(t - 0.15, duration - max_s))
        inside = (onsets >= start) & (onsets < start + max_s - 0.3)
        score = float(conf[inside].sum())
        if score > best_score + 1e-9:
            best, best_score = start, score
    return best, best + max_s


def _minmax(x: np.ndarray, fs: float, t0: float, t1: float, columns: int = 1600
            ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Time, lower and upper trace of ``x`` between ``t0`` and ``t1`` (min/max per column)."""
    a, b = max(0, int(t0 * fs)), min(len(x), int(np.ceil(t1 * fs)))
    seg = x[a:b]
    if len(seg) <= 4 * columns:
        t = (a + np.arange(len(seg))) / fs
        return t, seg, seg
    per = len(seg) // columns
    blocks = seg[: per * columns].reshape(columns, per)
    t = (a + per * (np.arange(columns) + 0.5)) / fs
    return t, blocks.min(axis=1), blocks.max(axis=1)


def _bands(ax, segments: Sequence, t0: float, t1: float, *, alpha: float = palette.BAND_ALPHA
           ) -> None:
    for s in segments:
        if s.end_s < t0 or s.start_s > t1:
            continue
        ax.axvspan(max(s.start_s, t0), min(s.end_s, t1), color=palette.STATE_COLOURS[s.label],
                   alpha=alpha, lw=0, zorder=0)


def _strip(ax, segments: Sequence, t0: float, t1: float, *, legend: bool = True,
           extra: Sequence = ()) -> None:
    """A solid band of state colours, named in a legend (plus ``extra`` handles)."""
    from matplotlib.patches import Patch

    for s in segments:
        if s.end_s < t0 or s.start_s > t1:
            continue
        ax.axvspan(max(s.start_s, t0), min(s.end_s, t1),
                   color=palette.STATE_COLOURS[s.label], lw=0)
    ax.set_xlim(t0, t1)
    ax.set_yticks([])
    for side in ("left", "top", "right"):
        ax.spines[side].set_visible(False)
    if legend:
        handles = [Patch(color=palette.STATE_COLOURS[k], label=k) for k in STATE_ORDER]
        handles += list(extra)
        ax.figure.legend(handles=handles, ncol=len(handles), loc="outside lower right",
                         handlelength=1.2, columnspacing=1.2)


def _skipped(analysis: Any) -> list[tuple[float, float, str]]:
    seg = analysis.segmentation
    return [tuple(s) for s in seg.skipped] if seg is not None else []


def _note(ax, text: str) -> None:
    ax.text(0.5, 0.5, text, transform=ax.transAxes, ha="center", va="center",
            color=palette.MUTED, fontsize=9)
    ax.set_xticks([])
    ax.set_yticks([])


# --- overview -------------------------------------------------------------------------

def overview_figure(analysis: Any, *, max_s: float = DETAIL_MAX_S):
    """Waveform, states, envelope and numbered beats of the detail window.

    When the recording is longer than the detail window a strip above shows the
    whole recording, its quality windows and any skipped stretches, with the
    detail window marked.
    """
    from eddyphone.envelope import homomorphic_envelope

    x, fs = analysis.conditioned.x, analysis.conditioned.fs
    duration = len(x) / fs
    t0, t1 = detail_window(analysis, max_s)
    segments = _segments(analysis)
    long = duration > t1 - t0 + 1e-6
    with styled():
        fig = _figure(4.6 if long else 3.6)
        ratios = [1.1, 4.0, 0.28] if long else [4.0, 0.28]
        axes = fig.subplots(len(ratios), 1, height_ratios=ratios)
        if long:
            _whole_strip(axes[0], analysis, t0, t1)
            ax, strip = axes[1], axes[2]
        else:
            ax, strip = axes
        _bands(ax, segments, t0, t1)
        t, lo, hi = _minmax(x, fs, t0, t1)
        if lo is hi:
            ax.plot(t, lo, color=palette.INK, lw=0.45)
        else:
            ax.fill_between(t, lo, hi, color=palette.INK, lw=0.3)
        a, b = int(t0 * fs), int(np.ceil(t1 * fs))
        env_fs = 100.0
        env = homomorphic_envelope(x[a:b], fs, feature_fs=env_fs)
        peak = float(np.percentile(np.abs(x[a:b]), 99.9)) if b > a else 1.0
        env = env / (env.max() or 1.0) * peak
        te = t0 + (np.arange(len(env)) + 0.5) / env_fs
        (env_line,) = ax.plot(te, env, color=palette.ENVELOPE, lw=1.6,
                              label="envelope (homomorphic)")
        lim = 1.18 * peak if peak > 0 else 1.0
        ax.set_ylim(-lim, 1.32 * lim)
        for bt in _beats(analysis):
            if t0 <= bt.s1_onset_s <= t1 - 0.05:
                ax.text(bt.s1_onset_s, 1.12 * lim, str(bt.index), ha="left", va="bottom",
                        fontsize=7.5, color=palette.STATE_COLOURS["S1"], fontweight="bold")
                ax.plot([bt.s1_onset_s] * 2, [lim, 1.1 * lim], color=palette.STATE_COLOURS["S1"],
                        lw=0.8)
        extra = [env_line]
        for s0, s1, _ in _skipped(analysis):
            if s1 > t0 and s0 < t1:
                ax.axvspan(max(s0, t0), min(s1, t1), facecolor="none", hatch="////",
                           edgecolor=palette.MUTED, lw=0, zorder=0.5)
                if len(extra) == 1:
                    from matplotlib.patches import Patch

                    extra.append(Patch(facecolor="none", hatch="////", edgecolor=palette.MUTED,
                                       label="skipped (see the quality section)"))
        if not any(sg.end_s > t0 and sg.start_s < t1 for sg in segments):
            ax.text(0.5, 0.06, "no heart cycle was segmented here", transform=ax.transAxes,
                    ha="center", fontsize=8.5, color=palette.INK,
                    bbox={"facecolor": palette.PAPER, "edgecolor": palette.MUTED})
        ax.set_xlim(t0, t1)
        ax.set_ylabel("amplitude\n(conditioned, RMS = 1)")
        ax.tick_params(labelbottom=False)
        title = "Cycle states, envelope and numbered beats"
        if long:
            title += f", {t0:.1f}–{t1:.1f} s"
        ax.set_title(title, fontsize=9)
        ax.text(1.0, 1.01, "numbers as in the beats table", transform=ax.transAxes,
                ha="right", va="bottom", fontsize=7, color=palette.MUTED)
        _strip(strip, segments, t0, t1, extra=extra)
        strip.set_xlabel("time (s)")
    return fig


def _whole_strip(ax, analysis: Any, t0: float, t1: float) -> None:
    x, fs = analysis.conditioned.x, analysis.conditioned.fs
    duration = len(x) / fs
    t, lo, hi = _minmax(x, fs, 0.0, duration, columns=1400)
    lim = float(np.percentile(np.abs(x), 99.9)) or 1.0
    ax.fill_between(t, np.clip(lo, -lim, lim), np.clip(hi, -lim, lim), color=palette.MUTED,
                    lw=0.2)
    for w in getattr(analysis.quality, "windows", ()):
        if not w.usable:
            ax.axvspan(w.start_s, w.end_s, color=palette.STATE_COLOURS["S2"], alpha=0.15, lw=0)
    for s0, s1, _ in _skipped(analysis):
        ax.axvspan(s0, s1, facecolor="none", hatch="////", edgecolor=palette.STATE_COLOURS["S2"],
                   lw=0)
    ax.axvspan(t0, t1, facecolor="none", edgecolor=palette.INK, lw=1.2)
    ax.set_xlim(0, duration)
    ax.set_ylim(-1.1 * lim, 1.1 * lim)
    ax.set_yticks([])
    ax.spines["left"].set_visible(False)
    ax.set_xlabel("time (s)", labelpad=1)
    n_bad = sum(1 for w in getattr(analysis.quality, "windows", ()) if not w.usable)
    marks = ([f"{n_bad} unusable window{'s' if n_bad > 1 else ''} shaded"] if n_bad else []) \
        + (["skipped stretches hatched"] if _skipped(analysis) else [])
    ax.set_title("; ".join([f"Whole recording ({duration:.0f} s), framed: the detail below",
                            *marks]), fontsize=8.5, fontweight="normal")


# --- spectrogram ----------------------------------------------------------------------

#: Stretch shown in the spectrogram, in seconds (a few beats, wide enough to read).
SPECTROGRAM_MAX_S = 4.0


def spectrogram_figure(analysis: Any, *, max_s: float = SPECTROGRAM_MAX_S):
    """Short-time spectrum (dB) of the best ``max_s`` seconds with the states above it."""
    from scipy.signal import spectrogram

    x, fs = analysis.conditioned.x, analysis.conditioned.fs
    t0, t1 = detail_window(analysis, max_s)
    a, b = int(t0 * fs), int(np.ceil(t1 * fs))
    nper = int(round(0.032 * fs))
    f, tt, p = spectrogram(x[a:b], fs=fs, window="hann", nperseg=nper,
                           noverlap=nper - max(1, nper // 8), nfft=4 * nper, mode="psd")
    keep = (f >= SPECTRUM_RANGE_HZ[0]) & (f <= SPECTRUM_RANGE_HZ[1])
    db = 10 * np.log10(p[keep] + 1e-20)
    top = float(np.percentile(db, 99.5))
    segments = _segments(analysis)
    with styled():
        fig = _figure(3.5)
        strip, ax = fig.subplots(2, 1, height_ratios=[0.22, 4.0], sharex=True)
        _strip(strip, segments, t0, t1, legend=False)
        strip.spines["bottom"].set_visible(False)
        strip.tick_params(bottom=False, labelbottom=False)
        strip.set_title("Spectrogram with the cycle states above", fontsize=9)
        strip.text(1.0, 1.15, "dotted lines: S1 and S2 onsets", transform=strip.transAxes,
                   ha="right", va="bottom", fontsize=7, color=palette.MUTED)
        mesh = ax.pcolormesh(t0 + tt, f[keep], db, cmap=palette.energy_colormap(),
                             vmin=top - ENERGY_RANGE_DB, vmax=top, shading="gouraud",
                             rasterized=True)
        for s in segments:
            if s.label in ("S1", "S2") and t0 <= s.start_s <= t1:
                ax.axvline(s.start_s, color=palette.STATE_COLOURS[s.label], lw=0.6,
                           ls=(0, (1, 3)), alpha=0.8)
        ax.set_yscale("log")
        ax.set_ylim(float(f[keep][0]), float(f[keep][-1]))
        ticks = [25, 50, 100, 200, 400, 800]
        ax.set_yticks(ticks, [str(v) for v in ticks])
        ax.minorticks_off()
        ax.set_ylabel("frequency (Hz)")
        ax.set_xlabel("time (s)")
        ax.set_xlim(t0, t1)
        bar = fig.colorbar(mesh, ax=[strip, ax], pad=0.01, aspect=30)
        bar.set_label(f"power (dB re loudest; {ENERGY_RANGE_DB:.0f} dB shown)")
        bar.ax.tick_params(labelsize=7)
    return fig


# --- ensemble -------------------------------------------------------------------------

_FRAME_S = 0.010
_HOP_S = 0.005


def _energy_db(x: np.ndarray, fs: float) -> tuple[np.ndarray, float]:
    """Short-time RMS in dB (10 ms frames every 5 ms) and the frame rate in Hz."""
    frame, hop = int(round(_FRAME_S * fs)), int(round(_HOP_S * fs))
    n = max(0, (len(x) - frame) // hop + 1)
    idx = np.arange(frame)[None, :] + hop * np.arange(n)[:, None]
    rms = np.sqrt(np.mean(x[idx] ** 2, axis=1) + 1e-20)
    return 20 * np.log10(rms), fs / hop


def ensemble_matrix(analysis: Any, *, before_s: float = 0.1, max_cycle_s: float = 2.0
                    ) -> tuple[np.ndarray, np.ndarray, list]:
    """Energy (dB re the median S1 peak) of each full beat against time from its S1 onset.

    Returns
    -------
    image : ndarray, shape (n_beats, n_times)
        NaN past the next S1 onset.
    t_s : ndarray
        Time from S1 onset of each column, in seconds.
    beats : list of Beat
        The rows, in order.
    """
    x, fs = analysis.conditioned.x, analysis.conditioned.fs
    beats = [b for b in _beats(analysis)]
    if not beats:
        return np.zeros((0, 0)), np.zeros(0), []
    db, efs = _energy_db(x, fs)
    cycles = [b.rr_s if b.rr_s is not None else (b.s2_offset_s - b.s1_onset_s + 0.3)
              for b in beats]
    span = min(max_cycle_s, float(np.max(cycles)) * 1.02)
    t = np.arange(-before_s, span, 1.0 / efs)
    img = np.full((len(beats), len(t)), np.nan)
    centres = (np.arange(len(db)) * (1.0 / efs)) + _FRAME_S / 2
    s1_peaks = []
    for i, (bt, cyc) in enumerate(zip(beats, cycles)):
        tt = bt.s1_onset_s + t
        vals = np.interp(tt, centres, db, left=np.nan, right=np.nan)
        vals[t > cyc] = np.nan
        img[i] = vals
        in_s1 = (centres >= bt.s1_onset_s) & (centres <= bt.s1_offset_s)
        if in_s1.any():
            s1_peaks.append(float(db[in_s1].max()))
    ref = float(np.median(s1_peaks)) if s1_peaks else float(np.nanmax(img))
    return img - ref, t, beats


def ensemble_figure(analysis: Any):
    """All beats aligned on S1: an energy image (time in cycle x beat) and the median profile.

    A murmur shows as a band of energy between the sound columns; its consistency
    is how many rows carry it.
    """
    img, t, beats = ensemble_matrix(analysis)
    with styled():
        n = len(beats)
        fig = _figure(min(5.2, 2.6 + 0.045 * n))
        ax, prof = fig.subplots(2, 1, height_ratios=[max(2.0, 0.12 * n), 1.3], sharex=True)
        if n == 0:
            _note(ax, "no beats were found, so there is nothing to align")
            prof.set_visible(False)
            return fig
        cmap = palette.energy_colormap().with_extremes(bad="#efece3")
        t_ms = 1000 * t
        extent = (t_ms[0], t_ms[-1], n - 0.5, -0.5)
        mesh = ax.imshow(np.ma.masked_invalid(img), aspect="auto", extent=extent, cmap=cmap,
                         vmin=-ENERGY_RANGE_DB, vmax=0.0, interpolation="nearest")
        rows = np.arange(n)
        s2 = np.array([1000 * (b.s2_onset_s - b.s1_onset_s) for b in beats])
        ax.scatter(s2, rows, marker="|", s=36, color=palette.STATE_COLOURS["S2"], lw=1.8)
        ax.set_ylabel("beat (table number)")
        labels = [b.index for b in beats]
        step = max(1, int(np.ceil(n / 12)))
        ax.set_yticks(rows[::step], [str(v) for v in labels[::step]])
        ax.set_title(f"{n} beats aligned on S1 onset", fontsize=9)
        ax.text(1.0, 1.01, "blank: after the next S1", transform=ax.transAxes, ha="right",
                va="bottom", fontsize=7, color=palette.MUTED)
        bar = fig.colorbar(mesh, ax=[ax, prof], pad=0.045, aspect=30)
        bar.set_label("energy (dB re median S1 peak)")
        bar.ax.tick_params(labelsize=7)
        # median profile with its spread and the median state boundaries
        with np.errstate(all="ignore"):
            import warnings

            with warnings.catch_warnings():
                warnings.simplefilter("ignore", RuntimeWarning)
                med = np.nanmedian(img, axis=0)
                q1, q3 = np.nanpercentile(img, [25, 75], axis=0)
        bounds = _median_bounds(beats)
        for label, a, b in bounds:
            prof.axvspan(1000 * a, 1000 * b, color=palette.STATE_COLOURS[label],
                         alpha=palette.BAND_ALPHA, lw=0)
            prof.text(1000 * (a + b) / 2, 1.0, label, transform=prof.get_xaxis_transform(),
                      ha="center", va="top", fontsize=7, color=palette.MUTED)
        prof.fill_between(t_ms, q1, q3, color=palette.STATE_COLOURS["S1"], alpha=0.25, lw=0,
                          label="middle half of beats")
        (med_line,) = prof.plot(t_ms, med, color=palette.INK, lw=1.1, label="median beat")
        prof.set_ylim(-ENERGY_RANGE_DB - 3 - 3 * max(1, len(_murmurs(analysis))), 8)
        prof.set_ylabel("energy (dB)")
        prof.set_xlabel("time from S1 onset (ms)")
        prof.set_xlim(t_ms[0], t_ms[-1])
        from matplotlib.lines import Line2D
        from matplotlib.patches import Patch

        keys = [med_line, Patch(color=palette.STATE_COLOURS["S1"], alpha=0.25,
                                label="middle half of beats"),
                Line2D([], [], ls="none", marker="|", ms=7, mew=1.8,
                       color=palette.STATE_COLOURS["S2"], label="S2 onset")]
        keys += _murmur_marks(ax, prof, analysis, beats)
        fig.legend(handles=keys, loc="outside lower center",
                   ncol=len(keys) if len(keys) <= 6 else int(np.ceil(len(keys) / 2)),
                   handletextpad=0.3, columnspacing=1.0)
        prof.grid(axis="y")
    return fig


def _median_bounds(beats: Sequence) -> list[tuple[str, float, float]]:
    """Median state intervals (s from S1 onset) across beats."""
    def med(vals):
        vals = [v for v in vals if v is not None]
        return float(np.median(vals)) if vals else None

    s1e = med([b.s1_offset_s - b.s1_onset_s for b in beats])
    s2s = med([b.s2_onset_s - b.s1_onset_s for b in beats])
    s2e = med([b.s2_offset_s - b.s1_onset_s for b in beats])
    rr = med([b.rr_s for b in beats])
    out = [("S1", 0.0, s1e), ("systole", s1e, s2s), ("S2", s2s, s2e)]
    if rr is not None:
        out.append(("diastole", s2e, rr))
    return out


def _murmur_marks(ax, prof, analysis: Any, beats: Sequence) -> list:
    """Mark the median window of each murmur under the profile, and, beside the image,
    the beats in which the findings stage heard it."""
    bounds = {k: (a, b) for k, a, b in _median_bounds(beats)}
    murmurs = _murmurs(analysis)
    handles: list = []
    for k, m in enumerate(murmurs):
        if m.phase == "systolic":
            a, b = bounds["S1"][1], bounds["S2"][0]
        elif m.phase == "diastolic" and "diastole" in bounds:
            a, b = bounds["diastole"]
        elif "diastole" in bounds:
            a, b = 0.0, bounds["diastole"][1]
        else:
            continue
        y = -ENERGY_RANGE_DB - 2 - 3 * k
        (bar,) = prof.plot([1000 * a, 1000 * b], [y, y], color=palette.ACCENT, lw=3.0,
                           solid_capstyle="butt", label=f"{m.id} window")
        handles.append(bar)
    measures = {bm.beat: bm for bm in getattr(analysis.findings, "beat_measures", ())} \
        if analysis.findings is not None else {}
    if not measures:
        return handles
    ms = float(np.clip(90.0 / max(1, len(beats)), 1.5, 3.8))
    side = ax.inset_axes([1.006, 0.0, 0.022, 1.0])
    side.set_xlim(0, 1)
    side.set_ylim(len(beats) - 0.5, -0.5)
    side.set_axis_off()
    phases = {m.phase for m in murmurs} or {"systolic"}
    for row, b in enumerate(beats):
        bm = measures.get(b.index)
        if bm is None:
            continue
        heard = ("systolic" in phases and bm.sys_murmur) or \
                ("diastolic" in phases and bm.dia_murmur) or \
                ("continuous" in phases and bm.sys_murmur and bm.dia_murmur)
        if not bm.usable:
            side.plot(0.5, row, marker="x", ms=ms, color=palette.MUTED, mew=0.7)
        else:
            side.plot(0.5, row, marker="s", ms=ms, mew=0.7, color=palette.ACCENT,
                      mfc=palette.ACCENT if heard else palette.PAPER)
    side.text(0.5, -0.6, "murmur", rotation=90, ha="center", va="bottom", fontsize=6.5,
              color=palette.ACCENT, transform=side.transData)
    from matplotlib.lines import Line2D

    return handles + [Line2D([], [], ls="none", marker="s", ms=4.5, color=palette.ACCENT,
                             label="murmur heard"),
            Line2D([], [], ls="none", marker="s", ms=4.5, color=palette.ACCENT,
                   mfc=palette.PAPER, label="not heard"),
            Line2D([], [], ls="none", marker="x", ms=4.5, color=palette.MUTED,
                   label="beat not usable")]


# --- murmur profile -------------------------------------------------------------------

def murmur_windows(analysis: Any, phase: str) -> list[tuple[float, float]]:
    """The per-beat windows (start_s, end_s) of a murmur of ``phase``."""
    out = []
    for b in _beats(analysis):
        if phase == "systolic":
            out.append((b.s1_offset_s, b.s2_onset_s))
        elif phase == "diastolic" and b.next_s1_onset_s is not None:
            out.append((b.s2_offset_s, b.next_s1_onset_s))
        elif phase == "continuous":
            out.append((b.s1_onset_s, b.next_s1_onset_s or b.s2_offset_s))
    return [(a, b) for a, b in out if b - a > 0.04]


def window_spectrum(x: np.ndarray, fs: float, windows: Sequence[tuple[float, float]], *,
                    trim_s: float = 0.01) -> tuple[np.ndarray, np.ndarray]:
    """Mean power spectral density (Welch, 64 ms Hann segments) over a set of windows.

    Returns
    -------
    f_hz, psd : ndarray
        PSD in units of ``x`` squared per Hz; empty arrays when no window is long enough.
    """
    from scipy.signal import welch

    nper = int(round(0.064 * fs))
    acc, weight, f = None, 0, np.zeros(0)
    for a, b in windows:
        i, j = int((a + trim_s) * fs), int((b - trim_s) * fs)
        if j - i < nper // 2:
            continue
        seg = x[i:j]
        f, p = welch(seg, fs=fs, window="hann", nperseg=min(nper, len(seg)), nfft=nper * 2)
        acc = p * len(seg) if acc is None else acc + p * len(seg)
        weight += len(seg)
    if acc is None:
        return np.zeros(0), np.zeros(0)
    return f, acc / weight


def _guard_s(analysis: Any) -> float:
    findings_cfg = getattr(analysis.config, "findings", None)
    return float(getattr(findings_cfg, "guard_s", 0.0) or 0.0)


def profile_positions(n_bins: int, phase: str, window_ms: float | None,
                      guard_s: float = 0.0) -> np.ndarray:
    """Position (% of the full window) of each profile bin's centre.

    The findings stage measures the profile over the window less a guard of
    ``guard_s`` at each end and states ``peak_fraction`` on the full window; the
    bins are placed the same way so the peak marker falls on the profile's peak
    within the murmur's extent.
    """
    centres = (np.arange(n_bins) + 0.5) / n_bins
    if phase == "continuous" or not window_ms or guard_s <= 0:
        return 100 * centres
    w = window_ms / 1000.0
    inner = max(w - 2 * guard_s, 1e-6)
    return 100 * (guard_s + centres * inner) / w


def murmur_figure(analysis: Any, murmur: Any):
    """Time profile (across its window) and spectrum of one murmur."""
    x, fs = analysis.conditioned.x, analysis.conditioned.fs
    with styled():
        fig = _figure(2.9)
        ax, sp = fig.subplots(1, 2, width_ratios=[1.0, 1.15])
        profile = np.asarray(getattr(murmur, "profile", ()) or (), dtype=float)
        windows = murmur_windows(analysis, murmur.phase)
        mean_ms = 1000 * float(np.mean([b - a for a, b in windows])) if windows else None
        if profile.size:
            pos = profile_positions(profile.size, murmur.phase, mean_ms,
                                    _guard_s(analysis))
            top = float(profile.max()) or 1.0
            # shaded: the murmur's own extent; the line runs across the whole window,
            # where another sound (an S2 tail, an S4) can stand higher than the murmur
            on = 100 * float(getattr(murmur, "onset_fraction", 0.0) or 0.0)
            off = 100 * float(getattr(murmur, "end_fraction", 1.0) or 1.0)
            inside = (pos >= on - 1e-9) & (pos <= off + 1e-9)
            if murmur.phase == "continuous" or inside.sum() < 2:
                inside = np.ones_like(pos, dtype=bool)
            ax.fill_between(pos, 0, profile / top, where=inside, color=palette.ACCENT,
                            alpha=0.25, lw=0)
            ax.plot(pos, profile / top, color=palette.ACCENT, lw=1.6)
            pk = getattr(murmur, "peak_fraction", None)
            if pk is not None:
                ax.axvline(100 * pk, color=palette.INK, lw=0.8, ls=(0, (3, 2)))
                side = "left" if pk < 0.1 else ("right" if pk > 0.9 else "center")
                ax.text(100 * pk, 1.04, " peak ", ha=side,
                        va="bottom", fontsize=7)
            _window_parts(ax, analysis, murmur.phase)
            ax.set_ylim(0, 1.15)
            ax.set_xlim(0, 100)
        else:
            _note(ax, "no profile available")
        start, end = {"systolic": ("S1 end", "S2 start"), "diastolic": ("S2 end", "next S1"),
                      "continuous": ("S1", "next S1")}.get(murmur.phase, ("start", "end"))
        label = f"position in window, % ({start} → {end})"
        ax.set_ylabel("murmur profile (1 = its peak)")
        ax.set_title(f"{murmur.id}: {timing_phase(murmur)} {getattr(murmur, 'shape', '')}",
                     fontsize=9, pad=12)
        if mean_ms:
            used = getattr(murmur, "beats_used", None)
            count = (f"in {murmur.beats_with_murmur} of {used} beats" if used
                     else f"{len(windows)} beats")
            # under the axis label: inside the plot the note ran into the profile and
            # the peak label, beside the title into the title
            label += f"\nmean window {mean_ms:.0f} ms, {count}"
        ax.set_xlabel(label)
        _murmur_spectrum(sp, x, fs, analysis, murmur, windows)
    return fig


def _window_parts(ax, analysis: Any, phase: str) -> None:
    """Mark the parts of a murmur's window on its profile: the thirds (early, mid,
    late) of a systolic or diastolic window; S2 (its mean position) splitting a
    continuous murmur's whole-cycle window into systole and diastole."""
    if phase == "continuous":
        parts = [(b.s2_onset_s - b.s1_onset_s) / (b.next_s1_onset_s - b.s1_onset_s)
                 for b in _beats(analysis) if b.next_s1_onset_s is not None]
        if not parts:
            return
        s2 = 100 * float(np.mean(parts))
        edges, words = (s2,), (("systole", s2 / 2), ("diastole", (s2 + 100) / 2))
        ax.text(s2, 1.005, "S2", ha="center", va="bottom", fontsize=7, color=palette.INK,
                transform=ax.get_xaxis_transform())
    else:
        edges = (100 / 3, 200 / 3)
        words = tuple((w, (k + 0.5) * 100 / 3) for k, w in enumerate(("early", "mid", "late")))
    for edge in edges:
        ax.axvline(edge, color=palette.GRID, lw=0.8, zorder=0)
    for word, at in words:
        ax.text(at, 1.005, word, ha="center", va="bottom", fontsize=7, color=palette.MUTED,
                transform=ax.get_xaxis_transform())


def _murmur_spectrum(ax, x, fs, analysis, murmur, windows) -> None:
    f, p = window_spectrum(x, fs, windows)
    if not f.size:
        _note(ax, "windows too short for a spectrum")
        return
    keep = (f >= SPECTRUM_RANGE_HZ[0]) & (f <= SPECTRUM_RANGE_HZ[1])
    ref = float(p[keep].max())
    ax.plot(f[keep], 10 * np.log10(p[keep] / ref + 1e-20), color=palette.ACCENT, lw=1.5,
            label=murmur.phase)
    other = {"systolic": "diastolic", "diastolic": "systolic"}.get(murmur.phase)
    if other:
        of, op = window_spectrum(x, fs, murmur_windows(analysis, other))
        if of.size:
            k2 = (of >= SPECTRUM_RANGE_HZ[0]) & (of <= SPECTRUM_RANGE_HZ[1])
            ax.plot(of[k2], 10 * np.log10(op[k2] / ref + 1e-20), color=palette.MUTED, lw=1.0,
                    ls=(0, (4, 2)), label=f"{other} (reference)")
    marks = (("dominant_frequency_hz", "dominant", palette.INK),
             ("centroid_hz", "centroid", palette.STATE_COLOURS["S1"]))
    for attr, word, colour in marks:
        v = getattr(murmur, attr, None)
        if v:
            ax.axvline(v, color=colour, lw=0.9, ls=(0, (3, 2)))
            ax.text(v, 0.03, f" {word} {v:.0f} Hz ", transform=ax.get_xaxis_transform(),
                    rotation=90, ha="right", va="bottom", fontsize=7, color=colour,
                    bbox={"facecolor": palette.PAPER, "edgecolor": "none", "pad": 0.5})
    ax.set_xscale("log")
    ticks = [25, 50, 100, 200, 400, 800]
    ax.set_xticks(ticks, [str(v) for v in ticks])
    ax.minorticks_off()
    ax.set_xlim(*SPECTRUM_RANGE_HZ)
    ax.set_ylim(-58, 5)
    ax.set_xlabel("frequency (Hz)")
    ax.set_ylabel("power (dB re peak)")
    pitch = getattr(murmur, "pitch", None)
    ax.set_title("Spectrum" + (f" — {pitch} pitch" if pitch else ""), fontsize=9)
    ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.2), ncol=2)
    ax.grid(True, which="major")


# --- mechanisms -----------------------------------------------------------------------

def _mechanism_groups(explanation: Any, *, overall_only: bool = False) -> list[tuple[str, list]]:
    if explanation is None:
        return []
    groups = []
    per = {} if overall_only else (getattr(explanation, "per_finding", {}) or {})
    for fid, mechs in per.items():
        if mechs:
            groups.append((str(fid), sorted(mechs, key=lambda m: m.rank)))
    if not groups and getattr(explanation, "overall", ()):
        groups.append(("overall", sorted(explanation.overall, key=lambda m: m.rank)))
    return groups


def mechanism_chart(explanation: Any, titles: dict[str, str] | None = None, *,
                    overall_only: bool = False):
    """Bars of mechanism scores, one panel per finding (or the overall ranking);
    None when there is nothing to show."""
    groups = _mechanism_groups(explanation, overall_only=overall_only)
    if not groups:
        return None
    titles = titles or {}
    with styled():
        rows = sum(len(m) for _, m in groups)
        fig = _figure(0.75 + 0.4 * rows + 0.35 * len(groups))
        axes = fig.subplots(len(groups), 1, squeeze=False,
                            height_ratios=[len(m) for _, m in groups])[:, 0]
        for ax, (fid, mechs) in zip(axes, groups):
            y = np.arange(len(mechs))[::-1]
            scores = [float(m.score) for m in mechs]
            ax.barh(y, scores, height=0.62 if len(mechs) > 1 else 0.3,
                    color=[palette.mechanism_colour(m.name) for m in mechs])
            for yy, s in zip(y, scores):
                ax.text(s + 0.01, yy, f"{s:.2f}", va="center", ha="left", fontsize=7.5)
            ax.set_yticks(y, [_wrap(m.label, 42) for m in mechs])
            ax.set_xlim(0, 1.08)
            ax.set_ylim(*((-0.6, len(mechs) - 0.4) if len(mechs) > 1 else (-0.8, 0.8)))
            ax.set_title(_wrap(titles.get(fid, fid), 90), fontsize=9)
            ax.grid(axis="x")
            ax.set_axisbelow(True)
        axes[-1].set_xlabel("score (0 = not supported, 1 = fully supported)")
    return fig


def mechanism_figure(analysis: Any):
    """Ranked scores of the candidate mechanisms for each finding (None without any)."""
    return mechanism_chart(analysis.explanation, _finding_titles(analysis))


def _finding_titles(analysis: Any) -> dict[str, str]:
    out = {"overall": "Whole recording"}
    f = analysis.findings
    if f is None:
        return out
    for m in getattr(f, "murmurs", ()):
        out[m.id] = f"{m.id}: {timing_phase(m)} murmur"
    for e in getattr(f, "extra_sounds", ()):
        out[e.id] = f"{e.id}: {e.kind}"
    return out


def timing_phase(murmur: Any) -> str:
    """Timing and phase in one word as clinicians write them: 'holosystolic', 'mid-diastolic'."""
    return phase_words(getattr(murmur, "timing", None), murmur.phase)


def _wrap(text: str, width: int) -> str:
    import textwrap

    return "\n".join(textwrap.wrap(str(text), width)) or str(text)


# --- writing --------------------------------------------------------------------------

def all_figures(analysis: Any) -> dict[str, Any]:
    """Every figure of the report, keyed by a short name (murmurs as ``murmur-<id>``)."""
    figs: dict[str, Any] = {
        "overview": overview_figure(analysis),
        "spectrogram": spectrogram_figure(analysis),
        "ensemble": ensemble_figure(analysis),
    }
    for m in _murmurs(analysis):
        figs[f"murmur-{m.id}"] = murmur_figure(analysis, m)
    mech = mechanism_figure(analysis)
    if mech is not None:
        figs["mechanisms"] = mech
    return figs


def save_png(fig: Any, path: Path, *, dpi: int = 150) -> Path:
    """Save ``fig`` as PNG at ``dpi`` through a temporary file (atomic)."""
    import io

    from eddyphone.export import atomic_write_bytes

    buffer = io.BytesIO()
    with styled():
        fig.savefig(buffer, format="png", dpi=dpi)
    return atomic_write_bytes(Path(path), buffer.getvalue())


def write_figures(analysis: Any, out_dir: str | Path, *, stem: str, dpi: int = 150,
                  figures: dict[str, Any] | None = None) -> dict[str, Path]:
    """Write every figure as ``<stem>.<name>.png`` in ``out_dir``; returns name -> path."""
    out_dir = Path(out_dir)
    figures = figures if figures is not None else all_figures(analysis)
    return {name: save_png(fig, out_dir / f"{stem}.{name}.png", dpi=dpi)
            for name, fig in figures.items()}
