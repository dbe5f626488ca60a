"""``eddyphone demo``: the whole job over the bundled synthetic recordings."""

from __future__ import annotations

import argparse

NAME = "demo"
HELP = "analyse the bundled synthetic recordings into a new folder and print where the " \
       "reports are"
ORDER = 5

DEFAULT_FOLDER = "eddyphone-demo"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Register the options of ``demo``."""
    parser.add_argument("--out", metavar="DIR", default=None,
                        help=f"new folder for the results (default: {DEFAULT_FOLDER}/ in the "
                        "current folder, or -2, -3 ... if that exists); never overwritten")
    parser.add_argument("--recordings", metavar="DIR", default=None,
                        help="folder of recordings to use instead of the bundled ones")


def run(args: argparse.Namespace) -> int:
    """Analyse every demo recording, write its outputs, print a line each and the index."""
    import sys
    import time
    from pathlib import Path

    from eddyphone.errors import InputError
    from eddyphone.report.demo import find_sample_audio, new_folder, run_demo

    source = Path(args.recordings) if args.recordings else find_sample_audio()
    if args.out:
        out = Path(args.out)
        if out.exists():
            raise InputError(str(out), "already exists and the demo never overwrites",
                             "pick a new --out folder, or leave --out out for a fresh one")
    else:
        out = new_folder(Path.cwd(), DEFAULT_FOLDER)
    start = time.perf_counter()
    print(f"eddyphone demo: analysing the recordings in {source}/ into {out}/", flush=True)
    result = run_demo(source, out, progress=lambda line: print("  " + line, flush=True))
    for failure in result.failures:
        print(f"eddyphone: {failure}", file=sys.stderr)
    patients = (f" and {len(result.patient_reports)} patient report(s)"
                if result.patient_reports else "")
    print(f"done in {time.perf_counter() - start:.0f} s: {len(result.reports)} reports{patients}")
    print(f"open the index:   {result.index}")
    for path in result.reports + result.patient_reports:
        print(f"  {path}")
    return 1 if result.failures else 0
