"""One flat row per recording (and optionally per beat) from the JSON output contract.

The rows are built from ``Analysis.to_dict()`` only, by rules rather than a
fixed list of keys, so fields the stages add later flow into the table:

=====================  =====================================================
columns                from
=====================  =====================================================
``summary`` keys       ``summary`` as is (``murmur``, ``heart_rate_bpm``,
                       ``top_mechanism``, ...); lists joined with ``"; "``
``recording_*``        ``recording`` scalars (``site``/``posture``/``patient``
                       unprefixed)
``quality_*``          ``quality`` scalars and ``measures`` (unprefixed within
                       ``quality_``); window counts and unusable seconds
``segmentation_*``     ``segmentation`` scalars (``method``: the decoder, or
                       ``given: <file>``)
``rhythm_*``           ``rhythm`` scalars
``beats_*``            count, and mean / sd of every numeric per-beat field
``segments_*``         count, seconds per label, fraction of the recording
                       segmented; ``skipped_n``, ``skipped_s``
``main_murmur_*``      every field of the first murmur finding (nested
                       mappings flattened, ``grade_range`` as ``_lo``/``_hi``,
                       other numeric lists as JSON text)
``<phase>_murmur*``    for each phase (systolic, diastolic, continuous), in
                       every row: presence (``none`` when no murmur of that
                       phase), timing, shape, pitch, grade range, level re
                       S1, consistency
``has_<sound>``        extra sound found, with ``<sound>_timing_ms`` and
                       ``<sound>_confidence``
``mechanism_*``        score of each overall candidate; label and score of
                       the top one
``context_*``          the patient context given
provenance             ``schema_version``, ``eddyphone_version``,
                       ``config_digest``
=====================  =====================================================

Public API
----------
recording_row(data) -> dict
beat_rows(data) -> list[dict]
flatten(mapping, prefix) -> dict
EXTRA_SOUND_KINDS
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping, Sequence
from typing import Any

#: Extra-sound kinds of the output contract; each gets a ``has_<kind>`` column
#: (other kinds a later version reports get one too, in the rows that have them).
EXTRA_SOUND_KINDS = ("S3", "S4", "split_S2", "ejection_click", "opening_snap")

#: Murmur phases of the output contract; each gets its own columns in every row.
PHASES = ("systolic", "diastolic", "continuous")
#: The fields of each phase's murmur kept as ``<phase>_murmur_<field>``.
PHASE_MURMUR_FIELDS = ("timing", "shape", "pitch", "level_db_re_s1", "consistency")

_RECORDING_UNPREFIXED = ("site", "posture", "patient")
_RECORDING_SKIP = ("source", "metadata", "conditioning")


def recording_row(data: Mapping[str, Any]) -> dict[str, Any]:
    """Flatten one ``Analysis.to_dict()`` into a row of scalars.

    Parameters
    ----------
    data : mapping
        The JSON output contract of one recording.

    Returns
    -------
    dict
        Column name -> ``None``, bool, int, float or str.
    """
    row: dict[str, Any] = {
        "schema_version": data.get("schema_version"),
        "eddyphone_version": data.get("eddyphone_version"),
        "config_digest": (data.get("config") or {}).get("digest"),
    }
    recording = data.get("recording") or {}
    for key in _RECORDING_UNPREFIXED:
        row[key] = recording.get(key)
    row.update(flatten({k: v for k, v in recording.items()
                        if k not in _RECORDING_UNPREFIXED + _RECORDING_SKIP}, "recording"))
    duration_s = recording.get("duration_s")

    row.update(flatten(data.get("summary") or {}, ""))
    row.update(_quality_columns(data.get("quality") or {}))
    row.update(flatten(data.get("segmentation") or {}, "segmentation"))
    row.update(flatten({k: v for k, v in (data.get("rhythm") or {}).items() if k != "rr_s"},
                       "rhythm"))
    row.update(_beat_columns(data.get("beats") or []))
    row.update(_segment_columns(data.get("segments") or [], data.get("skipped") or [],
                                duration_s))
    row.update(_finding_columns(data.get("findings") or []))
    row.update(_mechanism_columns(data.get("mechanisms") or []))
    row.update(flatten(data.get("context") or {}, "context"))
    return row


def beat_rows(data: Mapping[str, Any]) -> list[dict[str, Any]]:
    """One row per beat: every per-beat field of the contract, flattened.

    The beat number is in ``beat`` (as in ``<stem>.beats.csv``).
    """
    rows = []
    for beat in data.get("beats") or []:
        row = flatten(beat, "")
        rows.append({"beat": row.pop("index", None), **row})
    return rows


def flatten(mapping: Mapping[str, Any], prefix: str) -> dict[str, Any]:
    """Nested mappings to ``prefix_key_subkey`` scalars.

    Number pairs named ``*_range`` become ``*_range_lo`` and ``*_range_hi``; lists
    of strings are joined with ``"; "``; other lists become JSON text; non-finite
    floats become ``None``.
    """
    out: dict[str, Any] = {}
    for key, value in mapping.items():
        name = f"{prefix}_{key}" if prefix else str(key)
        if isinstance(value, Mapping):
            out.update(flatten(value, name))
        elif (str(key).endswith("_range") and isinstance(value, (list, tuple))
              and len(value) == 2 and all(isinstance(v, (int, float)) for v in value)):
            out[f"{name}_lo"], out[f"{name}_hi"] = scalar(value[0]), scalar(value[1])
        else:
            out[name] = scalar(value)
    return out


def scalar(value: Any) -> Any:
    """A table cell: ``None``, bool, int, float or str."""
    if value is None or isinstance(value, (bool, int, str)):
        return value
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, (list, tuple)):
        if all(isinstance(v, str) for v in value):
            return "; ".join(value)
        return json.dumps(list(value), allow_nan=False, default=str)
    if hasattr(value, "item"):  # numpy scalar
        return scalar(value.item())
    return str(value)


def _quality_columns(quality: Mapping[str, Any]) -> dict[str, Any]:
    windows = quality.get("windows") or []
    unusable = quality.get("unusable_intervals_s") or []
    out = flatten({k: v for k, v in quality.items()
                   if k not in ("windows", "unusable_intervals_s", "measures")}, "quality")
    out.update(flatten(quality.get("measures") or {}, "quality"))
    out["quality_windows_n"] = len(windows)
    out["quality_windows_usable"] = sum(bool(w.get("usable")) for w in windows)
    out["quality_unusable_s"] = round(float(sum(b - a for a, b in unusable)), 4)
    return out


def _beat_columns(beats: Sequence[Mapping[str, Any]]) -> dict[str, Any]:
    out: dict[str, Any] = {"beats_n": len(beats)}
    keys = [k for k in (beats[0] if beats else {}) if k != "index"]
    for key in keys:
        values = [float(b[key]) for b in beats
                  if isinstance(b.get(key), (int, float)) and not isinstance(b.get(key), bool)
                  and math.isfinite(b[key])]
        flags = [b[key] for b in beats if isinstance(b.get(key), bool)]
        if flags and not values:
            out[f"beats_{key}_fraction"] = round(sum(flags) / len(flags), 4)
            continue
        if key.endswith("_s") and key not in ("rr_s",):  # absolute times: no statistic
            continue
        out[f"beats_{key}_mean"] = _round(_mean(values))
        out[f"beats_{key}_sd"] = _round(_sd(values))
    return out


def _segment_columns(segments: Sequence[Mapping[str, Any]],
                     skipped: Sequence[Mapping[str, Any]],
                     duration_s: float | None) -> dict[str, Any]:
    out: dict[str, Any] = {"segments_n": len(segments)}
    totals: dict[str, float] = {}
    for s in segments:
        totals[s["label"]] = totals.get(s["label"], 0.0) + s["end_s"] - s["start_s"]
    for label in ("S1", "systole", "S2", "diastole", *sorted(set(totals) - {
            "S1", "systole", "S2", "diastole"})):
        out[f"segments_{label}_s"] = round(totals.get(label, 0.0), 4)
    covered = sum(totals.values())
    out["segments_fraction"] = round(float(covered / duration_s), 4) if duration_s else None
    out["skipped_n"] = len(skipped)
    out["skipped_s"] = round(float(sum(s["end_s"] - s["start_s"] for s in skipped)), 4)
    return out


def _finding_columns(findings: Sequence[Mapping[str, Any]]) -> dict[str, Any]:
    murmurs = [f for f in findings if f.get("kind") == "murmur"]
    extras = [f for f in findings if f.get("kind") == "extra_sound"]
    out: dict[str, Any] = {"findings_murmurs_n": len(murmurs),
                           "findings_extra_sounds_n": len(extras)}
    if murmurs:
        main = {k: v for k, v in murmurs[0].items() if k not in ("kind", "grade_note")}
        out.update(flatten(main, "main_murmur"))
    for phase in PHASES:
        m = next((f for f in murmurs if f.get("phase") == phase), None)
        grade = list((m or {}).get("grade_range") or (None, None))
        out[f"{phase}_murmur"] = m.get("presence") if m else "none"
        for key in PHASE_MURMUR_FIELDS:
            out[f"{phase}_murmur_{key}"] = scalar(m.get(key)) if m else None
        out[f"{phase}_murmur_grade_lo"], out[f"{phase}_murmur_grade_hi"] = grade
    found: dict[str, Mapping[str, Any]] = {}
    for e in extras:  # the most confident of each kind
        kind = str(e.get("sound"))
        if kind not in found or (e.get("confidence") or 0) > (found[kind].get("confidence") or 0):
            found[kind] = e
    for kind in (*EXTRA_SOUND_KINDS, *sorted(set(found) - set(EXTRA_SOUND_KINDS))):
        e = found.get(kind)
        out[f"has_{kind}"] = e is not None
        out[f"{kind}_timing_ms"] = scalar(e.get("timing_ms")) if e else None
        out[f"{kind}_confidence"] = scalar(e.get("confidence")) if e else None
    return out


def _mechanism_columns(mechanisms: Sequence[Mapping[str, Any]]) -> dict[str, Any]:
    overall = [m for m in mechanisms if m.get("finding_id") is None] or list(mechanisms)
    out: dict[str, Any] = {}
    if not overall:
        return out
    ranked = sorted(overall, key=lambda m: (m.get("rank") or 0, -(m.get("score") or 0)))
    top = ranked[0]
    out["top_mechanism_label"] = scalar(top.get("label"))
    out["top_mechanism_score"] = scalar(top.get("score"))
    for m in ranked:
        name = f"mechanism_{m.get('name')}_score"
        if name not in out:
            out[name] = scalar(m.get("score"))
    return out


def _mean(values: Sequence[float]) -> float | None:
    return sum(values) / len(values) if values else None


def _sd(values: Sequence[float]) -> float | None:
    if len(values) < 2:
        return None
    m = sum(values) / len(values)
    return math.sqrt(sum((v - m) ** 2 for v in values) / (len(values) - 1))


def _round(value: float | None, nd: int = 4) -> float | None:
    return None if value is None else round(value, nd)
