"""``eddyphone inspect``: format, duration, rate, channels and quality of recordings."""

from __future__ import annotations

import argparse

NAME = "inspect"
HELP = "describe recordings and score their quality (no analysis)"
ORDER = 20


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Register the options of ``inspect``."""
    parser.add_argument("recordings", nargs="+", metavar="REC", help="audio files or .hea headers")
    parser.add_argument("--channel", type=int, default=None,
                        help="channel to use (default: the one with most heart-band energy)")
    parser.add_argument("--json", action="store_true", help="print JSON instead of a table")


def run(args: argparse.Namespace) -> int:
    """Inspect each file; report bad ones in one line each; non-zero if any failed."""
    import json
    import sys

    from eddyphone.errors import EddyphoneError
    from eddyphone.io import load
    from eddyphone.quality import assess

    rows, failures = [], []
    for path in args.recordings:
        try:
            rec = load(path, channel=args.channel)
            quality = assess(rec.x, rec.fs)
        except EddyphoneError as exc:
            failures.append((path, str(exc)))
            continue
        rows.append({**rec.describe(), "quality": quality.to_dict()})
    if args.json:
        payload = rows[0] if len(rows) == 1 and not failures else rows
        print(json.dumps(payload, indent=2))
    elif rows:
        print(_table(rows))
    for _, message in failures:
        print(f"eddyphone: {message}", file=sys.stderr)
    return 1 if failures else 0


def _table(rows: list[dict]) -> str:
    header = ("file", "format", "duration", "rate", "ch", "quality", "notes")
    body = []
    for r in rows:
        q = r["quality"]
        notes = "; ".join(list(q["reasons"]) + list(q["warnings"])) or "-"
        bad = sum(not w["usable"] for w in q["windows"])
        if bad:
            notes += f" [{bad}/{len(q['windows'])} windows unusable]"
        body.append((
            r["source"], f"{r['format']} {r['subtype']}", f"{r['duration_s']:.1f} s",
            f"{r['original_fs_hz']:g} Hz", f"{r['channel'] + 1}/{r['n_channels']}",
            f"{q['score']:.2f}", notes,
        ))
    widths = [max(len(h), *(len(row[i]) for row in body)) for i, h in enumerate(header[:-1])]
    lines = ["  ".join(h.ljust(w) for h, w in zip(header[:-1], widths)) + "  " + header[-1]]
    for row in body:
        lines.append("  ".join(c.ljust(w) for c, w in zip(row[:-1], widths)) + "  " + row[-1])
    return "\n".join(lines)
