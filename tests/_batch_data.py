"""Small simulated study folders for the batch tests and the batch notebook."""

from __future__ import annotations

import csv
from pathlib import Path


def write_study(folder: Path, n: int, *, duration_s: float = 6.0, seed: int = 0) -> Path:
    """Write ``n`` short simulated recordings in two sub-folders and a manifest.

    The demo cases are cycled (shortened to ``duration_s``, seeds varied); the
    manifest ``manifest.csv`` lists every file with its patient, site, posture
    and a free study column ``arm``. Returns the manifest path.
    """
    from eddyphone.simulate import demo_specs, generate, write

    specs = list(demo_specs().values())
    rows = []
    for i in range(n):
        spec = specs[i % len(specs)].with_(duration_s=duration_s, seed=seed * 1000 + i)
        sub = folder / ("ward_a" if i % 2 == 0 else "ward_b")
        case_id = f"rec_{i:03d}"
        write(generate(spec), sub, case_id, overwrite=True)
        rows.append({"path": f"{sub.name}/{case_id}.wav", "patient": f"p{i // 4:02d}",
                     "site": spec.site, "posture": "supine" if i % 3 else "sitting",
                     "arm": "control" if i % 2 else "treated"})
    manifest = folder / "manifest.csv"
    with manifest.open("w", newline="") as fh:
        writer = csv.DictWriter(fh, fieldnames=list(rows[0]), lineterminator="\n")
        writer.writeheader()
        writer.writerows(rows)
    return manifest


def write_broken(folder: Path) -> list[Path]:
    """Files a study folder meets in practice: not audio, empty, truncated, too short."""
    import numpy as np
    import soundfile as sf

    folder.mkdir(parents=True, exist_ok=True)
    not_audio = folder / "notes_saved_as.wav"
    not_audio.write_text("this is a text file, not a recording\n")
    empty = folder / "empty.wav"
    empty.write_bytes(b"")
    short = folder / "too_short.wav"
    sf.write(str(short), 0.1 * np.sin(np.arange(2000) / 10.0), 4000)
    truncated = folder / "truncated.wav"
    good = np.random.default_rng(0).standard_normal(4000 * 5) * 0.1
    sf.write(str(truncated), good, 4000, subtype="PCM_16")
    truncated.write_bytes(truncated.read_bytes()[:30])
    return [not_audio, empty, short, truncated]
