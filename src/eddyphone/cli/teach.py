"""``eddyphone teach``: audio renders for teaching (slowed, murmur only, heart sounds only,
one beat looped)."""

from __future__ import annotations

import argparse

from eddyphone.cli._segments import add_segments_arguments, given_segmentation

NAME = "teach"
HELP = "write teaching renders of a recording: slowed with pitch kept, murmur only, " \
       "heart sounds only, one beat looped"
ORDER = 40

_RENDERS = {"slowed": "slowed", "murmur-only": "murmur_only",
            "heart-sounds-only": "heart_sounds_only", "beat-loop": "beat_loop"}


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Register the options of ``teach``."""
    parser.add_argument("recording", metavar="REC", help="audio file or .hea header")
    parser.add_argument("--out", metavar="DIR", required=True,
                        help="folder for the WAV files (created if missing)")
    parser.add_argument("--speed", type=float, default=0.5, metavar="FACTOR",
                        help="playback speed of the slowed render, pitch kept (default 0.5 = "
                        "half speed, twice as long)")
    parser.add_argument("--attenuation-db", type=float, default=30.0, metavar="DB",
                        help="how far the parts left out are turned down (default 30 dB)")
    parser.add_argument("--beat", type=int, default=None, metavar="N",
                        help="beat to loop, numbered as in the beats table (default: the "
                        "most confident complete beat)")
    parser.add_argument("--repeats", type=int, default=8, metavar="N",
                        help="how many times the beat is played in the loop (default 8)")
    parser.add_argument("--only", action="append", choices=sorted(_RENDERS), default=None,
                        metavar="RENDER", help="write only this render (repeatable): "
                        + ", ".join(sorted(_RENDERS)))
    parser.add_argument("--channel", type=int, default=None,
                        help="channel to use (default: the one with most heart-band energy)")
    parser.add_argument("--overwrite", action="store_true",
                        help="replace renders that already exist in --out")
    add_segments_arguments(parser)


def run(args: argparse.Namespace) -> int:
    """Analyse the recording, write the renders, print one line per file."""
    from pathlib import Path

    from eddyphone.errors import InputError
    from eddyphone.io import load
    from eddyphone.pipeline import analyze
    from eddyphone.teach import render_names, render_signals, write_wav

    rec = load(args.recording, channel=args.channel)
    only = [_RENDERS[k] for k in (args.only or sorted(_RENDERS, key=list(_RENDERS).index))]
    out = Path(args.out)
    names = render_names(rec.stem, speed=args.speed)
    taken = [out / names[k] for k in only if (out / names[k]).exists()]
    if taken and not args.overwrite:
        raise InputError(args.recording, f"{taken[0]} already exists",
                         "choose another --out folder or pass --overwrite")
    segmentation = (given_segmentation(args.segments, rec, args.segment_labels)
                    if args.segments else None)
    analysis = analyze(rec, segmentation=segmentation)
    signals, skipped = render_signals(analysis, speed=args.speed,
                                      attenuation_db=args.attenuation_db,
                                      repeats=args.repeats, beat=args.beat, only=only)
    fs = analysis.conditioned.fs
    for name, x in signals.items():
        path = write_wav(out / names[name], x, fs)
        print(f"{path}  ({len(x) / fs:.1f} s)")
    for name, reason in skipped.items():
        print(f"eddyphone: {args.recording}: {name.replace('_', '-')} not written: {reason}",
              file=__import__("sys").stderr)
    return 1 if skipped else 0
