"""S2 onsets refined from the recording's own S2 template, for the murmur windows.

A loud ejection murmur that runs up to S2 can pull the segmenter's S2 onset tens of
ms early: the "S2" segment then holds the murmur's fading tail, the systolic window
is cut short and the murmur's shape reads as a late crescendo. The S2 offset is not
affected (diastole after S2 is quiet). So the S2-band envelopes of all beats are
aligned at their S2 offsets and their median is the recording's S2 template. When
the template falls into a clear dip between the segmented onset and its peak (the
gap between the murmur's end and S2 itself), the onset is moved to that dip; when it
rises steadily (a correctly placed onset, or a murmur running into S2), nothing
changes. Onsets only ever move later, and S2 keeps at least the shortest usual S2
duration.

Public functions
----------------
refine_s2_onsets(x, fs, beats) -> (beats, shift_s)
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import is_dataclass, replace

import numpy as np

from eddyphone import physiology as phy
from eddyphone.findings.measures import spectrogram

#: Frame and hop (s) of the S2-band envelope: short enough to place an onset within
#: about 10 ms.
FRAME_S, HOP_S = 0.016, 0.004

#: The template must fall at least this far (dB) below its level at the segmented
#: onset before the onset is moved. Our own setting, checked on the simulator: the gap
#: between an ejection murmur's end and S2 measures 20-30 dB, the dip between the
#: two components of a split S2 (when the second is the louder) 5-10 dB.
MIN_DIP_DB = 12.0

#: The new onset is the last template point within this many dB of the dip's floor.
FLOOR_DB = 3.0

#: Smallest move (s) worth making (two hops).
MIN_SHIFT_S = 0.008


def _template(x: np.ndarray, fs: float, beats: Sequence, lags_s: np.ndarray
              ) -> np.ndarray | None:
    sp = spectrogram(x, fs, frame_s=FRAME_S, hop_s=HOP_S, bands_hz=(phy.S2_BAND_HZ,))
    env = sp.band_power[0]
    rows = []
    for b in beats:
        tt = b.s2_offset_s + lags_s
        if tt[0] < sp.t[0] or tt[-1] > sp.t[-1]:
            continue
        rows.append(np.interp(tt, sp.t, env))
    if len(rows) < 3:
        return None
    tpl = np.median(np.array(rows), axis=0)
    return 10.0 * np.log10(np.maximum(tpl, 1e-30) / max(float(tpl.max()), 1e-30))


def refine_s2_onsets(x: np.ndarray, fs: float, beats: Sequence) -> tuple[list, float]:
    """S2 onsets moved to the recording's S2 template dip where one shows.

    Parameters
    ----------
    x : ndarray
        Conditioned samples.
    fs : float
        Sample rate in Hz.
    beats : sequence of Beat
        From the segmentation (dataclasses with ``s2_onset_s`` and ``s2_offset_s``).

    Returns
    -------
    beats : list
        The beats, with ``s2_onset_s`` moved later where the template shows a dip
        (other fields untouched).
    shift_s : float
        How far the onset moved relative to the S2 offset (0 when unchanged).
    """
    beats = list(beats)
    if len(beats) < 3 or not all(is_dataclass(b) for b in beats):
        return beats, 0.0
    rel = np.array([b.s2_onset_s - b.s2_offset_s for b in beats])
    l0 = float(np.median(rel))
    if l0 >= 0.0:
        return beats, 0.0
    lags = np.arange(int(np.floor(l0 / HOP_S)) - 2, 1) * HOP_S
    tpl = _template(np.asarray(x, dtype=float), fs, beats, lags)
    if tpl is None:
        return beats, 0.0
    i0 = int(np.searchsorted(lags, l0))
    ip = i0 + int(np.argmax(tpl[i0:]))
    if ip - i0 < 2:
        return beats, 0.0
    floor = float(tpl[i0:ip].min())
    if float(tpl[i0]) - floor < MIN_DIP_DB:
        return beats, 0.0
    near = np.flatnonzero(tpl[i0:ip] <= floor + FLOOR_DB)
    new_rel = float(lags[i0 + int(near[-1])])
    # S2 keeps at least the usual shortest duration (mean - 2 sd)
    shortest = phy.S2_DURATION_S[0] - 2.0 * phy.S2_DURATION_S[1]
    new_rel = min(new_rel, -shortest)
    shift = new_rel - l0
    if shift < MIN_SHIFT_S:
        return beats, 0.0
    out = [replace(b, s2_onset_s=float(max(b.s2_onset_s, b.s2_offset_s + new_rel)))
           for b in beats]
    return out, float(shift)
