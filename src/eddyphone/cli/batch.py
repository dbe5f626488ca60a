"""``eddyphone batch``: a study's recordings into one feature table, resumably."""

from __future__ import annotations

import argparse

NAME = "batch"
HELP = "analyse many recordings into a feature table (Parquet/CSV); resumable; all cores"
ORDER = 30


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Register the options of ``batch``."""
    parser.add_argument("inputs", nargs="+", metavar="INPUT",
                        help="recordings, folders (searched recursively), glob patterns "
                        "(quoted), or manifest CSV files with a 'path' column (a 'patient' column "
                        "adds patients.parquet, one row per patient)")
    parser.add_argument("--out", required=True, metavar="DIR",
                        help="output folder; running again into it resumes the batch")
    parser.add_argument("--workers", type=int, metavar="N",
                        help="local worker processes (default: every core)")
    parser.add_argument("--scheduler", metavar="ADDRESS",
                        help="run on the Dask distributed cluster at ADDRESS "
                        "(tcp://host:8786); recordings must be readable by its workers")
    parser.add_argument("--beats", action="store_true",
                        help="also write beats.parquet, one row per beat")
    parser.add_argument("--csv", action="store_true", help="write CSV tables instead of Parquet")
    parser.add_argument("--json", action="store_true",
                        help="also write the full JSON of every recording into DIR/json/")
    parser.add_argument("--config", metavar="FILE",
                        help="JSON file of settings, by stage section")
    parser.add_argument("--retry-failed", action="store_true",
                        help="analyse again files that failed in an earlier run")
    parser.add_argument("--quiet", action="store_true", help="no progress line")
    parser.add_argument("--segment-labels", metavar="MAP",
                        help="how the files of a manifest's 'segments' column spell the "
                        "states, e.g. '1=S1,2=systole,3=S2,4=diastole'")


def run(args: argparse.Namespace) -> int:
    """Run the batch; exit status 1 when any recording failed."""
    import json
    from pathlib import Path

    from eddyphone.batch import run_batch
    from eddyphone.config import Config, config_from_dict
    from eddyphone.errors import InputError

    config = Config()
    if args.config:
        try:
            config = config_from_dict(json.loads(Path(args.config).read_text(encoding="utf-8")))
        except (OSError, ValueError) as exc:
            raise InputError(args.config, f"cannot read the settings file ({exc})",
                             'give a JSON object of sections, e.g. {"quality": {"window_s": 5}}'
                             ) from None
    if args.workers is not None and args.workers < 1:
        raise InputError(None, f"--workers {args.workers} is not allowed",
                         "give 1 or more, or leave it out to use every core")
    table = run_batch(args.inputs, args.out, workers=args.workers, scheduler=args.scheduler,
                      config=config, beats=args.beats, fmt="csv" if args.csv else "parquet",
                      per_recording_json=args.json, retry_failed=args.retry_failed,
                      progress=not args.quiet, segment_labels=args.segment_labels)
    return 1 if table.attrs["counts"]["failed"] else 0
