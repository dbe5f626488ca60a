"""Draw the segmentation over the waveform, with the reference below when there is one.

Usage::

    python bench/plot_segmentation.py sample_audio/*.wav --out /tmp/seg_plots [--span 8]

For ``<stem>.wav`` a reference ``<stem>.truth.csv`` (or ``<stem>.csv``) beside it is
drawn in the lower panel; the title gives S1/S2 F1 at +/-60 ms.
"""

from __future__ import annotations

import argparse
from pathlib import Path

import numpy as np

from eddyphone.condition import condition
from eddyphone.evaluate import evaluate_events, read_annotation
from eddyphone.io import load
from eddyphone.quality import assess
from eddyphone.segment import segment

COLOURS = {"S1": "tab:red", "S2": "tab:blue"}


def plot_one(path: Path, out_dir: Path, span_s: float, start_s: float = 0.0) -> Path:
    """Segment one file and write ``<stem>.segmentation.png``."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    rec = load(path)
    cond = condition(rec.x, rec.fs)
    quality = assess(rec.x, rec.fs)
    seg = segment(cond.x, cond.fs, quality=quality)
    ref_path = next((p for p in (path.with_suffix(".truth.csv"), path.with_suffix(".csv"))
                     if p.is_file()), None)
    ref = read_annotation(ref_path) if ref_path else None
    t = np.arange(len(cond.x)) / cond.fs
    sel = (t >= start_s) & (t <= start_s + span_s)
    panels = [("eddyphone", seg.segment_rows())] + ([("reference", ref)] if ref else [])
    fig, axes = plt.subplots(len(panels), 1, figsize=(13, 2.4 * len(panels)), sharex=True,
                             squeeze=False)
    for ax, (name, rows) in zip(axes[:, 0], panels, strict=True):
        ax.plot(t[sel], cond.x[sel], lw=0.35, color="0.25")
        for a, b, lab in rows:
            if lab in COLOURS and b > start_s and a < start_s + span_s:
                ax.axvspan(a, b, color=COLOURS[lab], alpha=0.3, lw=0)
        for a, b, _ in seg.skipped:
            if b > start_s and a < start_s + span_s:
                ax.axvspan(max(a, start_s), min(b, start_s + span_s), color="orange",
                           alpha=0.25, lw=0)
        ax.set_ylabel(name)
        ax.set_yticks([])
    title = (f"{path.name}: {seg.rhythm.heart_rate_bpm:.1f} bpm"
             f"{' irregular' if seg.rhythm.irregular else ''}, {len(seg.beats)} beats")
    if ref:
        ev = evaluate_events(ref, seg.segment_rows(), tolerance_ms=60)
        title += (f"; F1 S1 {ev.scores['S1'].f1:.3f}, S2 {ev.scores['S2'].f1:.3f}"
                  f" (red S1, blue S2, orange skipped)")
    axes[0, 0].set_title(title, fontsize=10)
    axes[-1, 0].set_xlabel("time (s)")
    fig.tight_layout()
    out = out_dir / f"{path.stem}.segmentation.png"
    fig.savefig(out, dpi=80)
    plt.close(fig)
    return out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("paths", nargs="+", type=Path)
    parser.add_argument("--out", type=Path, required=True)
    parser.add_argument("--span", type=float, default=8.0, help="seconds drawn")
    parser.add_argument("--start", type=float, default=0.0, help="first second drawn")
    args = parser.parse_args()
    args.out.mkdir(parents=True, exist_ok=True)
    for p in args.paths:
        print(plot_one(p, args.out, args.span, args.start))


if __name__ == "__main__":
    main()
