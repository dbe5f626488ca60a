"""Write synthetic recordings: ``<id>.wav``, ``<id>.truth.csv``, ``<id>.truth.json``.

Public functions
----------------
write
    Write one :class:`~eddyphone.simulate.generator.Simulated`.
truth_rows
    The rows of ``<id>.truth.csv``.
"""

from __future__ import annotations

import csv
import json
import math
from pathlib import Path

import numpy as np

from eddyphone.errors import InputError
from eddyphone.simulate.generator import Simulated
from eddyphone.simulate.truth import CSV_EXTRA_LABELS

_SUBTYPE = {8: "PCM_U8", 16: "PCM_16", 24: "PCM_24", 32: "PCM_32"}


def truth_rows(sim: Simulated) -> list[tuple[float, float, str]]:
    """Segments, then extra sounds and murmur spans, each group in time order."""
    extras = [(a, b, lab) for a, b, lab in sim.events if lab in CSV_EXTRA_LABELS]
    extras += [(a, b, "murmur") for a, b in sim.murmur_spans]
    return list(sim.segments) + sorted(extras)


def _clean(obj):
    """Make floats JSON-safe (NaN and infinities become null) and round them."""
    if isinstance(obj, dict):
        return {k: _clean(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [_clean(v) for v in obj]
    if isinstance(obj, np.generic):
        obj = obj.item()
    if isinstance(obj, float):
        return round(obj, 6) if math.isfinite(obj) else None
    return obj


def write(sim: Simulated, out_dir: str | Path, case_id: str, *, overwrite: bool = False
          ) -> dict[str, Path]:
    """Write the WAV and both truth files of one recording.

    Parameters
    ----------
    sim : Simulated
        From :func:`eddyphone.simulate.generate`.
    out_dir : str or Path
        Folder (created if missing).
    case_id : str
        File stem, e.g. ``"01_resting_adult"``.
    overwrite : bool
        Replace existing files; otherwise an existing file is an error.

    Returns
    -------
    dict of Path
        ``{"wav": ..., "csv": ..., "json": ...}``.
    """
    import soundfile as sf

    out = Path(out_dir)
    paths = {"wav": out / f"{case_id}.wav", "csv": out / f"{case_id}.truth.csv",
             "json": out / f"{case_id}.truth.json"}
    if not overwrite:
        existing = [str(p) for p in paths.values() if p.exists()]
        if existing:
            raise InputError(existing[0], "already exists and would be overwritten",
                             "choose another --out folder or pass --overwrite")
    out.mkdir(parents=True, exist_ok=True)
    bits = int(sim.truth["recording"]["bit_depth"])
    sf.write(str(paths["wav"]), sim.x, int(round(sim.fs)), subtype=_SUBTYPE[bits], format="WAV")
    with open(paths["csv"], "w", newline="") as fh:
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(["start_s", "end_s", "label"])
        for a, b, lab in truth_rows(sim):
            w.writerow([f"{a:.6f}", f"{b:.6f}", lab])
    truth = dict(sim.truth)
    truth["case_id"] = case_id
    truth["files"] = {k: p.name for k, p in paths.items()}
    with open(paths["json"], "w") as fh:
        json.dump(_clean(truth), fh, indent=1)
        fh.write("\n")
    return paths
