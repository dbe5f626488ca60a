"""The given-segmentation options shared by the commands that analyse a recording."""

from __future__ import annotations

import argparse


def add_segments_arguments(parser: argparse.ArgumentParser, *, manifest_note: str = ""
                           ) -> None:
    """Register ``--segments`` and ``--segment-labels`` in their own group."""
    group = parser.add_argument_group("given segmentation (instead of the automatic one)")
    group.add_argument("--segments", metavar="FILE",
                       help="S1/systole/S2/diastole intervals of the recording, e.g. a "
                       "corrected <stem>.segments.csv or a reference annotation"
                       + manifest_note)
    group.add_argument("--segment-labels", metavar="MAP",
                       help="how the segments file spells the states, e.g. "
                       "'1=S1,2=systole,3=S2,4=diastole' (as for 'eddyphone evaluate')")


def given_segmentation(segments: str, recording, label_map: str | None):
    """The segmentation read from ``segments`` (any layout ``eddyphone evaluate`` reads),
    for ``recording``."""
    from eddyphone.errors import InputError, ParameterError
    from eddyphone.evaluate import parse_label_map, read_annotation
    from eddyphone.segment.given import segmentation_from_intervals

    try:
        labels = parse_label_map(label_map)
    except ParameterError as exc:
        raise InputError(label_map, str(exc),
                         "write it as raw=state pairs, e.g. 1=S1,2=systole") from None
    return segmentation_from_intervals(read_annotation(segments, labels),
                                       recording.duration_s, source=segments)
