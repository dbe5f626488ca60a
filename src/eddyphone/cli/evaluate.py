"""``eddyphone evaluate``: score segmentations against reference annotations."""

from __future__ import annotations

import argparse

NAME = "evaluate"
HELP = ("score <stem>.segments.csv results against reference annotations: S1/S2 "
        "sensitivity, PPV, F1, boundary errors and heart-rate error")
ORDER = 60


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Register the options of this command."""
    parser.add_argument("--reference", required=True, metavar="DIR",
                        help="folder of reference annotations (<stem>.csv or <stem>.truth.csv)")
    parser.add_argument("--results", required=True, metavar="DIR",
                        help="folder of <stem>.segments.csv files (from analyze --out)")
    parser.add_argument("--tolerance-ms", type=float, default=60.0, metavar="MS",
                        help="largest centre distance of a correct detection (default 60)")
    parser.add_argument("--label-map", metavar="MAP",
                        help="reference label spellings, e.g. '1=S1,2=systole,3=S2,4=diastole', "
                             "or a JSON/CSV file of raw,canonical pairs")
    parser.add_argument("--count-outside", action="store_true",
                        help="also score detections outside the annotated span as false")
    parser.add_argument("--json", action="store_true", help="print the full result as JSON")
    parser.add_argument("--out", metavar="FILE",
                        help="also write one row per recording to this CSV file")


def _fmt(v: float | None, scale: float = 1.0, digits: int = 3) -> str:
    return "-" if v is None else f"{v * scale:.{digits}f}"


def run(args: argparse.Namespace) -> int:
    """Evaluate and print a summary table."""
    import csv
    import json
    from pathlib import Path

    from eddyphone.evaluate import evaluate_folder, parse_label_map

    result = evaluate_folder(args.reference, args.results, tolerance_ms=args.tolerance_ms,
                             label_map=parse_label_map(args.label_map),
                             within_reference=not args.count_outside)
    if args.out:
        path = Path(args.out)
        with path.open("w", newline="", encoding="utf-8") as fh:
            w = csv.writer(fh)
            w.writerow(["stem", "s1_sensitivity", "s1_ppv", "s1_f1", "s2_sensitivity", "s2_ppv",
                        "s2_f1", "heart_rate_reference_bpm", "heart_rate_detected_bpm",
                        "heart_rate_error_bpm"])
            for r in result.records:
                ev = r.evaluation
                s1, s2 = ev.scores["S1"], ev.scores["S2"]
                w.writerow([r.stem, _fmt(s1.sensitivity), _fmt(s1.ppv), _fmt(s1.f1),
                            _fmt(s2.sensitivity), _fmt(s2.ppv), _fmt(s2.f1),
                            _fmt(ev.heart_rate_reference_bpm, digits=2),
                            _fmt(ev.heart_rate_detected_bpm, digits=2),
                            _fmt(ev.heart_rate_error_bpm, digits=2)])
    if args.json:
        print(json.dumps(result.to_dict(), indent=1))
        return 0
    print(f"{len(result.records)} recordings, tolerance +/-{result.tolerance_ms:g} ms"
          + (f", {len(result.missing)} without results" if result.missing else ""))
    print(f"{'sound':<6}{'ref':>7}{'found':>7}{'sens':>8}{'PPV':>8}{'F1':>8}"
          f"{'onset ms':>10}{'offset ms':>11}")
    for label, s in result.totals.items():
        print(f"{label:<6}{s.n_reference:>7}{s.n_detected:>7}{_fmt(s.sensitivity):>8}"
              f"{_fmt(s.ppv):>8}{_fmt(s.f1):>8}{_fmt(s.onset_error_ms, digits=1):>10}"
              f"{_fmt(s.offset_error_ms, digits=1):>11}")
    if result.heart_rate_abs_error_bpm is not None:
        print(f"heart rate: mean absolute error {result.heart_rate_abs_error_bpm:.2f} bpm, "
              f"{100 * result.heart_rate_within_2bpm:.0f} % of recordings within 2 bpm")
    if result.missing:
        shown = ", ".join(result.missing[:5]) + (" ..." if len(result.missing) > 5 else "")
        print(f"no results for: {shown}")
    return 0
