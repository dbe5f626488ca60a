"""``eddyphone explain``: the likely physical mechanism of a murmur, with the physics.

Explain again a saved ``analyze`` result with new patient context, or a murmur
described in the trade's words (for teaching).
"""

from __future__ import annotations

import argparse

from eddyphone.cli._context import add_context_arguments, context_values

NAME = "explain"
HELP = ("rank the physical mechanisms of a murmur: from a saved analysis JSON, or from a "
        "murmur described by hand")
ORDER = 40


#: The quality words of ``findings.words.QUALITY_WORDS``, spelled out here so that
#: ``--help`` does not import the findings (a test keeps the two equal).
QUALITY_CHOICES = ("harsh", "blowing", "rumbling", "musical", "machinery")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Register the options of ``explain``."""
    parser.add_argument("result", nargs="?", metavar="JSON",
                        help="JSON written by 'eddyphone analyze' (omit to describe a murmur)")
    parser.add_argument("--json", action="store_true", help="print the explanation as JSON")
    parser.add_argument("--detail", type=int, default=2, metavar="N",
                        help="candidates per finding shown with physics and numbers (default 2)")
    m = parser.add_argument_group("murmur described by hand (when no JSON is given)")
    m.add_argument("--phase", choices=("systolic", "diastolic", "continuous"))
    m.add_argument("--timing", choices=("early", "mid", "late", "holo"))
    m.add_argument("--shape", choices=("crescendo", "decrescendo", "crescendo-decrescendo",
                                       "plateau"))
    m.add_argument("--frequency-hz", type=float, metavar="HZ",
                   help="dominant frequency of the murmur")
    m.add_argument("--grade", default="II", metavar="GRADE",
                   help="grade or range on I-III, e.g. II or I-II (default II)")
    m.add_argument("--quality", action="append", default=[], metavar="WORD",
                   choices=QUALITY_CHOICES,
                   help="sound quality, repeatable")
    m.add_argument("--peak-fraction", type=float, metavar="0-1",
                   help="where in its window the murmur peaks")
    m.add_argument("--with-sound", action="append", default=[], metavar="KIND",
                   choices=("S3", "S4", "split_S2", "ejection_click", "opening_snap"),
                   help="companion sound, repeatable")
    add_context_arguments(parser, "patient context (all optional)")

_ROMAN = {"I": 1, "II": 2, "III": 3, "IV": 4, "V": 5, "VI": 6}


def _grades(text: str) -> tuple[int, int]:
    from eddyphone.errors import InputError

    parts = [p.strip().upper() for p in text.replace("\u2013", "-").split("-") if p.strip()]
    try:
        values = [_ROMAN[p] if p in _ROMAN else int(p) for p in parts]
    except ValueError:
        raise InputError(None, f"--grade {text!r} is not a grade", "give e.g. II or I-II") from None
    if len(values) not in (1, 2):
        raise InputError(None, f"--grade {text!r} is not a grade", "give e.g. II or I-II")
    return values[0], values[-1]


def run(args: argparse.Namespace) -> int:
    """Explain and print."""
    import json
    from pathlib import Path

    from eddyphone.context import PatientContext
    from eddyphone.errors import InputError
    from eddyphone.explain import explain, render_text
    from eddyphone.explain.inputs import described_murmur, findings_from_list

    given = context_values(args)
    saved_context: dict = {}
    if args.result:
        path = Path(args.result)
        try:
            data = json.loads(path.read_text(encoding="utf-8"))
        except (OSError, ValueError) as exc:
            raise InputError(str(path), f"cannot read the analysis JSON ({exc})",
                             "pass a file written by 'eddyphone analyze --out' or --json") \
                from None
        if not isinstance(data, dict) or "findings" not in data:
            raise InputError(str(path), "has no 'findings' list",
                             "pass a file written by 'eddyphone analyze'")
        findings = findings_from_list(data["findings"],
                                      presence=(data.get("summary") or {}).get("murmur"),
                                      source=str(path))
        saved_context = dict(data.get("context") or {})
        site = (data.get("recording") or {}).get("site")
        if site and not given["site"] and "site" not in saved_context:
            given["site"] = site
        hr = (data.get("rhythm") or {}).get("heart_rate_bpm")
        if hr and not given["heart_rate_bpm"] and "heart_rate_bpm" not in saved_context:
            given["heart_rate_bpm"] = float(hr)
    else:
        missing = [f"--{n.replace('_', '-')}" for n in ("phase", "timing", "shape",
                                                         "frequency_hz")
                   if getattr(args, n) is None]
        if missing:
            raise InputError(None, "no analysis JSON and no murmur described "
                             f"({', '.join(missing)} missing)",
                             "pass a JSON from 'eddyphone analyze', or describe the murmur "
                             "with --phase --timing --shape --frequency-hz")
        findings = described_murmur(phase=args.phase, timing=args.timing, shape=args.shape,
                                    dominant_frequency_hz=args.frequency_hz,
                                    grade_range=_grades(args.grade),
                                    quality_words=args.quality,
                                    peak_fraction=args.peak_fraction,
                                    extra_sounds=args.with_sound)
    values = {**saved_context, **{k: v for k, v in given.items() if v not in (None, ())}}
    context = PatientContext.from_mapping(values) if values else None
    explanation = explain(findings, context=context)
    if args.json:
        print(json.dumps(explanation.to_dict(), indent=2, allow_nan=False))
    else:
        print(render_text(explanation, detail=args.detail))
    return 0
