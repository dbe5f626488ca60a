"""Patient-context options shared by the commands that explain findings."""

from __future__ import annotations

import argparse

CONTEXT_FIELDS = ("hematocrit", "heart_rate_bpm", "cardiac_output_l_min", "stroke_volume_ml",
                  "diameter_mm", "age_years", "site")


def add_context_arguments(parser: argparse.ArgumentParser, title: str) -> None:
    """Register ``--hematocrit``, ``--cardiac-output-l-min`` ... ``--state`` in a group."""
    group = parser.add_argument_group(title)
    group.add_argument("--hematocrit", type=float, metavar="FRACTION",
                       help="red-cell volume fraction, e.g. 0.42")
    group.add_argument("--heart-rate-bpm", type=float, metavar="BPM")
    group.add_argument("--cardiac-output-l-min", type=float, metavar="L_MIN")
    group.add_argument("--stroke-volume-ml", type=float, metavar="ML")
    group.add_argument("--diameter-mm", type=float, metavar="MM",
                       help="diameter of the valve orifice or vessel under the stethoscope")
    group.add_argument("--age-years", type=float, metavar="YEARS")
    group.add_argument("--site", help="auscultation site (aortic, pulmonic, tricuspid, mitral, "
                       "carotid, femoral, renal, fistula, other)")
    group.add_argument("--state", action="append", default=[], metavar="STATE",
                       help="known state, repeatable: exercise, pregnancy, fever, anemia, "
                       "thyrotoxicosis, sepsis, arteriovenous_fistula")


def context_values(args: argparse.Namespace) -> dict:
    """The context options as ``PatientContext`` keyword arguments (unset ones as None)."""
    values = {name: getattr(args, name) for name in CONTEXT_FIELDS}
    values["states"] = tuple(args.state)
    return values
