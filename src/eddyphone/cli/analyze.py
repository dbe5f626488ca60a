"""``eddyphone analyze``: the full analysis of recordings, written to the output contract."""

from __future__ import annotations

import argparse

from eddyphone.cli._context import add_context_arguments, context_values
from eddyphone.cli._segments import add_segments_arguments, given_segmentation

NAME = "analyze"
HELP = "segment, describe and explain recordings; write JSON, CSV and reports"
ORDER = 10

AUDIO_SUFFIXES = (".wav", ".flac", ".ogg", ".mp3", ".m4a", ".hea", ".aiff", ".aif")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Register the options of ``analyze``."""
    parser.add_argument("recordings", nargs="*", metavar="REC",
                        help="recordings (audio files, .hea headers, or folders of them)")
    parser.add_argument("--out", metavar="DIR", help="folder for the per-recording outputs")
    parser.add_argument("--json", action="store_true",
                        help="print the JSON of a single recording to stdout")
    parser.add_argument("--no-report", action="store_true",
                        help="skip the HTML/PDF reports and figures (JSON and CSV only)")
    parser.add_argument("--overwrite", action="store_true",
                        help="replace outputs that already exist in --out")
    parser.add_argument("--config", metavar="FILE",
                        help="JSON file of settings, by stage section (see docs/configuration.md)")
    parser.add_argument("--channel", type=int,
                        help="channel to analyse (default: the loudest in the heart band)")
    add_context_arguments(parser, "patient context (all optional; used by the explanations)")
    parser.add_argument("--posture", help="posture during the recording (e.g. supine, sitting)")
    parser.add_argument("--explain", action="store_true",
                        help="print the ranked mechanisms with their physics for each recording")
    add_segments_arguments(parser, manifest_note=" (for one recording; a manifest takes "
                           "a 'segments' column instead)")
    patient = parser.add_argument_group("patient view")
    patient.add_argument("--patient", metavar="ID",
                         help="treat all recordings as one patient's sites; adds a patient summary")
    patient.add_argument("--manifest", metavar="CSV",
                         help="CSV with columns path, patient, site, posture (one patient view "
                         "per patient)")


def run(args: argparse.Namespace) -> int:
    """Analyse each recording; one line per result, one line per failure."""
    import json
    import sys
    from pathlib import Path

    from eddyphone.errors import EddyphoneError, InputError

    if not args.out and not args.json:
        raise InputError(None, "no output chosen", "pass --out DIR, or --json for one recording")
    jobs = _jobs(args)
    if not jobs:
        raise InputError(None, "no recordings given", "pass recordings, folders or --manifest CSV")
    if args.json and len(jobs) != 1:
        raise InputError(None, f"--json prints one recording but {len(jobs)} were given",
                         "pass a single recording, or use --out DIR")
    config = _config(args.config)
    out_dir = Path(args.out) if args.out else None
    analyses, failures, stems = [], 0, {}
    for path, load, manifest_context, segments in jobs:
        try:
            analysis = _analyse_one(path, load, manifest_context, segments, args, config)
            if out_dir is not None:
                from eddyphone.export import write_analysis

                stem = analysis.recording.stem
                if stem in stems:
                    raise InputError(path, f"has the same name as {stems[stem]}, so its outputs "
                                     "would overwrite those", "rename one of them, or analyse "
                                     "them into separate --out folders")
                stems[stem] = path
                write_analysis(analysis, out_dir, overwrite=args.overwrite,
                               report=not args.no_report)
        except EddyphoneError as exc:
            failures += 1
            print(f"eddyphone: {exc}", file=sys.stderr)
            continue
        analyses.append(analysis)
        if args.json:
            print(json.dumps(analysis.to_dict(), indent=2, allow_nan=False))
        else:
            print(_one_line(analysis))
            if args.explain and analysis.explanation is not None:
                from eddyphone.explain import render_text

                print(render_text(analysis.explanation))
    if out_dir is not None and analyses and (args.patient or args.manifest):
        _patient_views(analyses, out_dir, args)
    if out_dir is not None and analyses:
        print(f"outputs in {out_dir}/")
    return 1 if failures else 0


def _jobs(args: argparse.Namespace) -> list[tuple[str, dict, dict, str | None]]:
    """Expand folders and read the manifest: ``(path, load options, manifest context,
    given segments file or None)``."""
    from pathlib import Path

    from eddyphone.errors import InputError

    jobs: list[tuple[str, dict, dict, str | None]] = []
    if args.manifest:
        from eddyphone.io.manifest import read_manifest, split_row

        for row in read_manifest(args.manifest):
            path, load, context, extra = split_row(row, args.manifest)
            segments = extra.pop("segments", None)
            jobs.append((path, {**load, "metadata": extra}, context, segments))
    for item in args.recordings:
        path = Path(item)
        if path.is_dir():
            files = sorted(p for p in path.iterdir()
                           if p.suffix.lower() in AUDIO_SUFFIXES and not p.name.startswith("."))
            jobs.extend((str(p), {}, {}, None) for p in files)
        else:
            jobs.append((item, {}, {}, None))
    if args.segments:
        if len(jobs) != 1:
            raise InputError(args.segments, f"--segments belongs to one recording but "
                             f"{len(jobs)} were given", "pass a single recording, or give "
                             "each its segments in a manifest's 'segments' column")
        jobs = [(*jobs[0][:3], args.segments)]
    for _, load, _, _ in jobs:
        if args.patient:
            load.setdefault("patient", args.patient)
        if args.posture:
            load.setdefault("posture", args.posture)
    return jobs


def _config(path: str | None):
    from eddyphone.config import Config, config_from_dict

    if not path:
        return Config()
    import json
    from pathlib import Path

    from eddyphone.errors import InputError

    try:
        return config_from_dict(json.loads(Path(path).read_text(encoding="utf-8")))
    except (OSError, ValueError) as exc:
        raise InputError(path, f"cannot read the settings file ({exc})",
                         "give a JSON object of sections, e.g. {\"quality\": {\"window_s\": 5}}"
                         ) from None


def _analyse_one(path: str, load_options: dict, manifest_context: dict,
                 segments: str | None, args: argparse.Namespace, config):
    from eddyphone.context import PatientContext
    from eddyphone.errors import InputError, ParameterError
    from eddyphone.io import load
    from eddyphone.pipeline import analyze

    options = {**load_options, "site": load_options.get("site") or args.site}
    rec = load(path, channel=args.channel, **options)
    given = {k: v for k, v in context_values(args).items() if v not in (None, ())}
    try:
        context = PatientContext(**{**given, **manifest_context, "site": _known_site(rec.site)})
    except ParameterError as exc:
        raise InputError(path, str(exc), "correct the option or manifest value") from None
    segmentation = (given_segmentation(segments, rec, args.segment_labels)
                    if segments else None)
    return analyze(rec, context=context, config=config, segmentation=segmentation)


def _known_site(site: str | None) -> str | None:
    from eddyphone.context import KNOWN_SITES

    return site if site in KNOWN_SITES else (None if site is None else "other")


def _one_line(analysis) -> str:
    s = analysis.summary()
    rate = f"{s['heart_rate_bpm']:.0f} bpm {s['rhythm']}" if s.get("heart_rate_bpm") else \
        "rate not found"
    from eddyphone.report.text import cause_is_hedged, companion_words, phase_words

    murmur = s.get("murmur", "uncertain")
    if murmur == "present":
        words = [phase_words(s.get("murmur_timing"), s.get("murmur_phase") or ""),
                 s.get("murmur_shape")]
        murmur = " ".join(w for w in words if w) + " murmur"
        if s.get("murmur_grade_range"):
            murmur += f", grade {s['murmur_grade_range']}"
    else:
        murmur = f"murmur {murmur}"
    top = s.get("top_mechanism")
    if not s.get("beats"):
        # nothing was heard to rank causes on: say so rather than name a cause
        tail = "; no usable beats, causes not ranked (record again)"
    elif top:
        hedge = "if the possible murmur is real, " if cause_is_hedged(s.get("murmur"), top) else ""
        tail = f"; {hedge}most likely: {top.replace('_', ' ')} ({s['top_mechanism_score']:.2f})"
    else:
        tail = ""
    return (f"{analysis.recording.source}: {rate}; quality {s['quality_score']:.2f}; {murmur}"
            f"{companion_words(analysis)}{tail}")


def _patient_views(analyses, out_dir, args) -> None:
    """Per patient: ``patient-<id>.json`` (summary and mechanisms) and, unless
    ``--no-report``, the patient report with the sites side by side."""
    import json

    from eddyphone.explain import explain_patient
    from eddyphone.export import atomic_write_text, check_free
    from eddyphone.findings import summarise_patient
    from eddyphone.pipeline import SCHEMA_VERSION
    from eddyphone.report.text import patient_line

    groups: dict[str, list] = {}
    for a in analyses:
        if a.recording.patient:  # manifest rows without a patient stay single recordings
            groups.setdefault(a.recording.patient, []).append(a)
    for patient, group in groups.items():
        summary = summarise_patient(group, patient_id=patient)
        explanation = explain_patient(group, context=group[0].context)
        path = out_dir / f"patient-{patient}.json"
        check_free([path], source=f"patient {patient}", overwrite=args.overwrite)
        data = {"schema_version": SCHEMA_VERSION, "patient": summary.to_dict(),
                "recordings": [a.recording.source for a in group],
                "mechanisms": explanation.to_list(),
                "assumptions": list(explanation.assumptions),
                "cautions": list(dict.fromkeys([*group[0].to_dict()["cautions"],
                                                *explanation.cautions]))}
        atomic_write_text(path, json.dumps(data, indent=2, allow_nan=False) + "\n")
        print(patient_line(summary))
        line = f"  summary {path}"
        if not args.no_report:
            from eddyphone.report import write_patient_report

            paths = write_patient_report(summary, group, out_dir, overwrite=args.overwrite)
            line += f"; report {paths.get('html')}"
        print(line)
