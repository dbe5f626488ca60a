"""The words of a report, shared by the HTML and the PDF.

Plain functions that turn an :class:`~eddyphone.pipeline.Analysis` into short
sentences and small tables of strings, so both renderings say the same thing.
Stages that have not run (``findings`` or ``explanation`` is None) are named as
missing rather than silently left out.

Public API
----------
headline(analysis) -> list of (label, value)
phase_words(timing, phase) -> str
murmur_lines(analysis) -> list of str
murmur_table(murmur) -> list of (label, value)
extra_sound_lines(analysis) -> list of str
mechanism_blocks(analysis) -> list of MechanismBlock
quality_lines(analysis) -> list of str
quality_rows(analysis) -> (header, rows)
skipped_rows(analysis) -> (header, rows)
beat_rows(analysis) -> (header, rows)
cautions(analysis) -> list of str
rr_variation_words(rhythm) -> str
companion_words(analysis) -> str
patient_line(summary) -> str
context_words(context) -> str
provenance(analysis) -> list of (label, value)
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from datetime import datetime, timezone
from typing import Any

import numpy as np

from eddyphone._version import __version__

MISSING_FINDINGS = "Murmur and extra-sound analysis did not run for this report."
MISSING_EXPLANATION = "Mechanism explanations did not run for this report."


def _fmt(value: Any, unit: str = "", nd: int = 0) -> str:
    if value is None:
        return "—"
    text = f"{value:.{nd}f}" if isinstance(value, float) else str(value)
    return f"{text} {unit}".strip()


def finite_positive(value: Any) -> bool:
    return isinstance(value, (int, float)) and math.isfinite(value) and value > 0


def headline(analysis: Any) -> list[tuple[str, str]]:
    """The facts a reader wants first: rate, rhythm, murmur, extra sounds, mechanism, quality."""
    s = analysis.summary()
    rhythm = getattr(analysis.segmentation, "rhythm", None)
    rows: list[tuple[str, str]] = []
    if finite_positive(s.get("heart_rate_bpm")):
        rows.append(("Heart rate", f"{s['heart_rate_bpm']:.0f} bpm"))
        regular = s.get("rhythm") or "—"
        if rhythm is not None and rhythm.rr_cv is not None:
            regular += f" ({rr_variation_words(rhythm)})"
        rows.append(("Rhythm", regular))
    else:
        rows.append(("Heart rate", "not found"))
    rows.append(("Beats segmented", str(s.get("beats", 0))))
    rows.append(("Murmur", murmur_headline(analysis)))
    extras = extra_sound_lines(analysis)
    if analysis.findings is not None:
        rows.append(("Extra sounds", "; ".join(extras) if extras else "none found"))
    top = analysis.explanation.top() if analysis.explanation is not None else None
    if top is not None:
        rows.append(("Most likely mechanism", mechanism_phrase(top, s.get("murmur"))))
    elif analysis.explanation is None:
        rows.append(("Most likely mechanism", "not assessed"))
    q = analysis.quality
    rows.append(("Recording quality", f"{q.score:.2f} of 1"
                 + ("" if q.usable else " — below the usable threshold")))
    return rows


def rr_variation_words(rhythm: Any) -> str:
    """The RR variation beside the rhythm word, so that a rhythm called regular with
    a large variation says why (sounds the segmentation split or missed, or a few
    intervals far off the rest while successive beats stay alike; see
    :func:`eddyphone.rhythm.rhythm_from_beats`)."""
    from eddyphone.rhythm import IRREGULAR_RR_CV, per_beat_intervals, rr_statistics

    cv = float(rhythm.rr_cv)
    text = f"RR variation {100 * cv:.0f} %"
    rr = np.asarray(getattr(rhythm, "rr_s", ()) or (), dtype=float)
    if rhythm.irregular or cv <= IRREGULAR_RR_CV or len(rr) < 3:
        return text
    per_cv = rr_statistics(per_beat_intervals(rr))[1]
    if per_cv is not None and per_cv <= IRREGULAR_RR_CV:
        return (f"RR variation {100 * per_cv:.0f} % once beats the segmentation split or "
                f"missed are allowed for; {100 * cv:.0f} % as segmented")
    return text + ", from a few intervals far off the rest (misplaced or premature beats)"


def cause_is_hedged(murmur_presence: str | None, mechanism_name: str) -> bool:
    """Whether a ranked cause explains a murmur that is only possible ('uncertain'), so
    it must not be read as settled."""
    return murmur_presence == "uncertain" and mechanism_name != "no_flow_disturbance"


def mechanism_phrase(top: Any, murmur_presence: str | None) -> str:
    """The top mechanism with its score, hedged as :func:`cause_is_hedged` says."""
    text = f"{top.label} (score {top.score:.2f})"
    if cause_is_hedged(murmur_presence, top.name):
        text += ", if the possible murmur is real"
    return text


def murmur_headline(analysis: Any) -> str:
    """One phrase: the main murmur in the trade's words, or why there is none."""
    f = analysis.findings
    if f is None:
        return "not assessed (" + MISSING_FINDINGS.rstrip(".").lower() + ")"
    m = f.main() if hasattr(f, "main") else None
    if f.presence == "absent" or m is None:
        reason = getattr(f, "presence_reason", "")
        return f"{f.presence}" + (f" — {reason}" if reason else "")
    text = m.describe() if hasattr(m, "describe") else f"{m.phase} murmur"
    return f"{f.presence}: {text}"


def phase_words(timing: str | None, phase: str) -> str:
    """Timing and phase as clinicians write them: 'holosystolic', 'mid-diastolic',
    'continuous' (a continuous murmur has no timing within one window).

    >>> phase_words("holo", "systolic"), phase_words("mid", "diastolic")
    ('holosystolic', 'mid-diastolic')
    """
    if phase == "continuous" or not timing:
        return phase
    return f"holo{phase}" if timing == "holo" else f"{timing}-{phase}"


def murmur_lines(analysis: Any) -> list[str]:
    """One sentence per murmur, or the reason none is listed."""
    f = analysis.findings
    if f is None:
        return [MISSING_FINDINGS]
    if not f.murmurs:
        return [f"No murmur listed ({f.presence}): {f.presence_reason}"]
    return [f"{m.id}: {m.describe()}" for m in f.murmurs]


def murmur_table(murmur: Any) -> list[tuple[str, str]]:
    """Every measure of one murmur with its unit and confidence."""
    m = murmur
    spectrum = getattr(m, "spectrum", {}) or {}
    bands = ", ".join(f"{k.replace('_hz', ' Hz')}: {100 * v:.0f} %"
                      for k, v in spectrum.items() if v is not None)
    rows = [
        ("Phase", f"{m.phase} ({m.presence}, confidence {m.confidence:.2f})"),
        ("Timing", f"{m.timing} (confidence {m.timing_confidence:.2f})"),
        ("Shape", f"{m.shape} (confidence {m.shape_confidence:.2f})"),
        ("Pitch", f"{m.pitch_text}; centroid {m.centroid_hz:.0f} Hz"),
        ("Quality", ", ".join(m.quality_words) or "—"),
        ("Grade range", f"{_grade(m)} of VI"),
        ("Level", f"{m.level_db_re_heart_sounds:+.1f} dB relative to S1/S2"),
        ("Consistency", f"{m.beats_with_murmur} of {m.beats_used} usable beats "
                        f"({100 * m.consistency:.0f} %)"),
        ("Peak", f"at {100 * m.peak_fraction:.0f} % of its window"),
    ]
    if bands:
        rows.append(("Energy by band", bands))
    note = getattr(m, "grade_note", "")
    if note:
        rows.append(("Grade note", note))
    return rows


def _grade(m: Any) -> str:
    if hasattr(m, "grade_text"):
        return m.grade_text
    lo, hi = m.grade_range
    return f"{lo}–{hi}"


def extra_sound_lines(analysis: Any) -> list[str]:
    """One phrase per extra sound (S3, S4, split S2, clicks, snaps)."""
    f = analysis.findings
    if f is None:
        return []
    out = []
    for e in f.extra_sounds:
        text = e.describe() if hasattr(e, "describe") else f"{e.kind}, {e.timing_ms:.0f} ms"
        out.append(f"{text} (confidence {e.confidence:.2f})")
    return out


def companion_words(analysis: Any) -> str:
    """'; also S3, opening snap' for a one-line summary, or '' (a split S2 only when
    fixed: a varying one is the normal finding)."""
    from eddyphone.findings.records import SOUND_NAMES

    words = []
    for e in getattr(analysis.findings, "extra_sounds", None) or ():
        if e.kind == "split_S2":
            if e.details.get("varies") is False:
                words.append("fixed split S2")
        else:
            words.append(SOUND_NAMES.get(e.kind, e.kind) + (" (possible)" if e.possible else ""))
    return f"; also {', '.join(words)}" if words else ""


def patient_line(summary: Any) -> str:
    """One line for a patient (a :class:`~eddyphone.findings.PatientSummary`): the main
    murmur and how it spreads over the sites."""
    n = len(summary.sites)
    head = f"patient {summary.patient_id}, {n} recording{'s' if n != 1 else ''}: "
    if not summary.murmurs:
        return head + f"murmur {summary.presence}"
    m = summary.murmurs[0]
    return head + ("possible " if m.possible else "") + f"{m.phase} murmur, {m.spread}"


@dataclass(frozen=True)
class MechanismBlock:
    """One ranked mechanism in words, ready to render."""

    finding: str
    rank: int
    name: str
    label: str
    score: float
    physics: str
    evidence: tuple[str, ...]
    numbers: tuple[tuple[str, str, str], ...]  # (name, value with unit, meaning)
    discriminators: tuple[str, ...]
    cautions: tuple[str, ...]
    assumptions: tuple[str, ...]


def _number_text(value: Any, unit: str) -> str:
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        v = float(value)
        if v != 0 and (abs(v) >= 1e5 or abs(v) < 1e-3):
            text = f"{v:.3g}"
        elif abs(v) >= 100:
            text = f"{v:,.0f}"
        elif abs(v) >= 10:
            text = f"{v:.1f}"
        else:
            text = f"{v:.3g}"
    else:
        text = str(value)
    return f"{text} {unit}".strip() if unit and unit != "1" else text


_UNIT_SUFFIXES = ("_l_min", "_m3_s", "_m_s", "_mmhg", "_pa_s", "_mm", "_ml", "_hz", "_ms",
                  "_m", "_s")


def quantity_name(key: str) -> str:
    """A readable name for a number's key: 'peak_flow_l_min' -> 'peak flow'."""
    name = str(key)
    for suffix in _UNIT_SUFFIXES:
        if name.endswith(suffix) and len(name) > len(suffix):
            name = name[: -len(suffix)]
            break
    return name.replace("_", " ")


def mechanism_blocks(analysis: Any) -> list[MechanismBlock]:
    """Every ranked mechanism of every finding (the whole-recording ranking when no
    finding has its own)."""
    ex = analysis.explanation
    if ex is None:
        return []
    groups: list[tuple[str, Sequence]] = [
        (str(fid), mechs) for fid, mechs in (getattr(ex, "per_finding", {}) or {}).items()
        if mechs]
    if not groups:
        groups = [("overall", getattr(ex, "overall", ()))]
    out = []
    for fid, mechs in groups:
        for m in sorted(mechs, key=lambda m: m.rank):
            numbers = []
            for name, spec in (getattr(m, "numbers", {}) or {}).items():
                if isinstance(spec, Mapping):
                    numbers.append((quantity_name(name), _number_text(spec.get("value"),
                                                            str(spec.get("unit", "") or "")),
                                    str(spec.get("meaning", ""))))
                else:
                    numbers.append((quantity_name(name), _number_text(spec, ""), ""))
            out.append(MechanismBlock(
                finding=fid, rank=int(m.rank), name=m.name, label=m.label,
                score=float(m.score), physics=m.physics, evidence=tuple(m.evidence),
                numbers=tuple(numbers), discriminators=tuple(m.discriminators),
                cautions=tuple(getattr(m, "cautions", ())),
                assumptions=tuple(getattr(m, "assumptions", ()))))
    return out


def explanation_assumptions(analysis: Any) -> list[str]:
    """What the explainer assumed for the whole recording."""
    ex = analysis.explanation
    return list(getattr(ex, "assumptions", ())) if ex is not None else []


def quality_lines(analysis: Any) -> list[str]:
    """Quality in sentences: score, reasons, warnings, unusable time."""
    q = analysis.quality
    lines = [f"Quality score {q.score:.2f} (usable from {q.threshold:.2f})."]
    if q.reasons:
        lines.append("Reasons: " + "; ".join(q.reasons) + ".")
    if q.warnings:
        lines.append("Warnings: " + "; ".join(q.warnings) + ".")
    bad = q.unusable_intervals()
    if bad:
        total = sum(b - a for a, b in bad)
        lines.append(f"{len(bad)} stretch(es), {total:.1f} s in all, were too poor to use.")
    else:
        lines.append("Every quality window was usable.")
    skipped = skipped_rows(analysis)[1]
    if skipped:
        lines.append(f"The segmentation skipped {len(skipped)} stretch(es); see the table.")
    return lines


def quality_rows(analysis: Any) -> tuple[list[str], list[list[str]]]:
    """Per-window quality table."""
    header = ["window (s)", "score", "usable", "contrast (dB)", "periodicity", "reasons"]
    rows = []
    for w in analysis.quality.windows:
        m = w.measures
        rows.append([f"{w.start_s:.1f}–{w.end_s:.1f}", f"{w.score:.2f}",
                     "yes" if w.usable else "no", f"{m.contrast_db:.1f}",
                     f"{m.periodicity:.2f}", "; ".join(w.reasons) or "—"])
    return header, rows


def skipped_rows(analysis: Any) -> tuple[list[str], list[list[str]]]:
    """Stretches the segmentation skipped, and why."""
    seg = analysis.segmentation
    rows = [[f"{a:.2f}", f"{b:.2f}", str(r)] for a, b, r in
            (seg.skipped if seg is not None else ())]
    return ["start (s)", "end (s)", "reason"], rows


def rhythm_lines(analysis: Any) -> list[str]:
    """Heart rate, RR statistics and systolic interval."""
    seg = analysis.segmentation
    if seg is None:
        return ["Segmentation did not run."]
    r = seg.rhythm
    if not finite_positive(r.heart_rate_bpm):
        return [f"No heart rate was found ({len(seg.beats)} beats segmented); see the quality "
                "section for why."]
    # from the summary's 0.1-bpm value, so the two never differ by a rounding step
    lines = [f"Heart rate {round(r.heart_rate_bpm, 1):.0f} bpm ({r.method}), "
             f"{'irregular' if r.irregular else 'regular'} rhythm, "
             f"confidence {r.confidence:.2f}."]
    if r.rr_mean_s is not None:
        lines.append(f"Mean RR {1000 * r.rr_mean_s:.0f} ms over {len(r.rr_s)} intervals, "
                     f"variation {100 * (r.rr_cv or 0):.1f} %.")
    if finite_positive(r.systolic_interval_s):
        lines.append(f"Median systolic interval (S1 onset to S2 onset) "
                     f"{1000 * r.systolic_interval_s:.0f} ms.")
    lines.append(f"{len(seg.beats)} beats, {len(seg.segments)} segments; method {seg.method}.")
    return lines


def beat_rows(analysis: Any) -> tuple[list[str], list[list[str]]]:
    """The beats table (numbers as in ``beats.csv``), with murmur flags where known."""
    seg = analysis.segmentation
    measures = {}
    f = analysis.findings
    if f is not None:
        measures = {bm.beat: bm for bm in getattr(f, "beat_measures", ())}
    header = ["beat", "S1 onset (s)", "S2 onset (s)", "systole (ms)", "diastole (ms)",
              "RR (ms)", "confidence"]
    if measures:
        header.append("murmur in")
    rows = []
    for b in (seg.beats if seg is not None else ()):
        row = [str(b.index), f"{b.s1_onset_s:.3f}", f"{b.s2_onset_s:.3f}",
               f"{b.systole_ms:.0f}", _fmt(b.diastole_ms, nd=0),
               _fmt(None if b.rr_s is None else 1000 * b.rr_s, nd=0), f"{b.confidence:.2f}"]
        if measures:
            bm = measures.get(b.index)
            flags = []
            if bm is not None and bm.sys_murmur:
                flags.append("systole")
            if bm is not None and bm.dia_murmur:
                flags.append("diastole")
            row.append(", ".join(flags) or ("not usable" if bm is not None and not bm.usable
                                            else "—"))
        rows.append(row)
    return header, rows


def cautions(analysis: Any) -> list[str]:
    """General cautions, then those of the explanation (no repeats)."""
    data = analysis.to_dict()
    seen, out = set(), []
    for c in data.get("cautions", []):
        if c not in seen:
            seen.add(c)
            out.append(c)
    return out


#: What the reports say when no patient context was given.
NO_CONTEXT_WORDS = "none given (the explanations state their defaults)"
#: Context fields in words: label and unit.
_CONTEXT_WORDS = {"age_years": ("age", ""), "hematocrit": ("hematocrit", ""),
                  "heart_rate_bpm": ("heart rate", "/min"),
                  "cardiac_output_l_min": ("cardiac output", " L/min"),
                  "stroke_volume_ml": ("stroke volume", " mL"),
                  "diameter_mm": ("diameter", " mm"), "site": ("site", "")}


def context_words(context: Any) -> str:
    """The patient context given, in words ('age 41, hematocrit 0.19, exercise'); ''
    when none was given."""
    given = context.to_dict() if context is not None else {}
    words = []
    for key, value in given.items():
        if key == "states":
            words += [state.replace("_", " ") for state in value]
        else:
            label, unit = _CONTEXT_WORDS.get(key, (quantity_name(key), ""))
            words.append(f"{label} {value:g}{unit}" if isinstance(value, float)
                         else f"{label} {value}{unit}")
    return ", ".join(words)


def provenance(analysis: Any) -> list[tuple[str, str]]:
    """Where the report came from: file, version, configuration digest, time."""
    rec = analysis.recording
    info = [("Recording", rec.source),
            ("Duration", f"{rec.duration_s:.1f} s"),
            ("Source format", f"{rec.format} {rec.subtype}, {rec.original_fs:g} Hz, "
                              f"channel {rec.channel + 1} of {rec.n_channels}")]
    for label, value in (("Site", rec.site), ("Posture", rec.posture),
                         ("Patient", rec.patient)):
        if value:
            info.append((label, str(value)))
    info.append(("Patient context", context_words(analysis.context)
                 or NO_CONTEXT_WORDS))
    info += [("eddyphone version", __version__),
             ("Configuration digest", analysis.config.digest()),
             ("Report written", datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M UTC"))]
    return info


def config_json(analysis: Any, *, indent: int | None = 2) -> str:
    """The configuration that produced the analysis, as JSON (one line with ``indent=None``)."""
    return json.dumps(analysis.to_dict()["config"], indent=indent)
