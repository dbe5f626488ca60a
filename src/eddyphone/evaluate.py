"""Evaluation of a segmentation against reference annotations.

A detected sound is correct when its centre lies within ``tolerance_ms`` of the
centre of a reference sound of the same label; each reference sound matches at
most one detected sound (one-to-one, closest pairs first). From the matches:
sensitivity ``TP / (TP + FN)``, positive predictive value ``TP / (TP + FP)``
and ``F1 = 2 TP / (2 TP + FP + FN)`` per label, onset and offset errors of the
matched pairs in ms, and the heart-rate error.

Public API
----------
match_events(reference_centres_s, detected_centres_s, tolerance_s) -> list of (i, j)
heart_rate_from_segments(segments) -> float or None
evaluate_events(reference, detected, *, tolerance_ms=60, labels=("S1", "S2"))
read_annotation(path, label_map=None) -> list of (start_s, end_s, label)
parse_label_map(text) -> dict
evaluate_folder(reference_dir, results_dir, tolerance_ms=60, label_map=None)
EventScores, EventEvaluation, RecordEvaluation, FolderEvaluation
"""

from __future__ import annotations

import csv
import json
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from eddyphone.errors import InputError, ParameterError

Interval = tuple[float, float, str]

#: Canonical labels and the spellings understood without a mapping (case-insensitive).
DEFAULT_ALIASES = {
    "s1": "S1", "first sound": "S1", "first_sound": "S1",
    "s2": "S2", "second sound": "S2", "second_sound": "S2",
    "systole": "systole", "sys": "systole", "systolic": "systole",
    "diastole": "diastole", "dia": "diastole", "diastolic": "diastole",
}
_START_NAMES = ("start_s", "start", "onset_s", "onset", "begin", "begin_s", "t0", "from")
_END_NAMES = ("end_s", "end", "offset_s", "offset", "stop", "stop_s", "t1", "to")
_LABEL_NAMES = ("label", "state", "type", "name", "event", "class", "annotation")
_TIME_NAMES = ("time_s", "time", "t", "t_s", "boundary_s")


# --- matching ---------------------------------------------------------------------------

def match_events(reference_centres_s: Sequence[float], detected_centres_s: Sequence[float],
                 tolerance_s: float) -> list[tuple[int, int]]:
    """One-to-one matches of detected to reference events within a tolerance.

    The matching has the largest possible number of pairs closer than
    ``tolerance_s`` (inclusive) and, among those, the smallest total distance
    (an assignment problem, solved per cluster of nearby events).

    Returns
    -------
    list of (reference index, detected index)
        Sorted by reference index.
    """
    from scipy.optimize import linear_sum_assignment

    if not (tolerance_s >= 0 and math.isfinite(tolerance_s)):
        raise ParameterError(f"tolerance_s={tolerance_s!r} must be a non-negative number")
    ref = np.asarray(reference_centres_s, dtype=float)
    det = np.asarray(detected_centres_s, dtype=float)
    if len(ref) == 0 or len(det) == 0:
        return []
    tol = tolerance_s + 1e-9
    # Events further apart than the tolerance cannot be linked: split into clusters.
    pts = np.concatenate([ref, det])
    kind = np.concatenate([np.zeros(len(ref), int), np.ones(len(det), int)])
    index = np.concatenate([np.arange(len(ref)), np.arange(len(det))])
    order = np.argsort(pts, kind="stable")
    breaks = np.flatnonzero(np.diff(pts[order]) > tol) + 1
    out = []
    for group in np.split(order, breaks):
        r = index[group[kind[group] == 0]]
        d = index[group[kind[group] == 1]]
        if len(r) == 0 or len(d) == 0:
            continue
        dist = np.abs(ref[r][:, None] - det[d][None, :])
        ok = dist <= tol
        # Any invalid pair costs more than all valid pairs together.
        big = 1.0 + tol * (min(len(r), len(d)) + 1)
        rows, cols = linear_sum_assignment(np.where(ok, dist, big))
        out.extend((int(r[i]), int(d[j])) for i, j in zip(rows, cols, strict=True) if ok[i, j])
    return sorted(out)


def heart_rate_from_segments(segments: Sequence[Interval]) -> float | None:
    """Heart rate (bpm) from successive S1 onsets: ``60 / mean RR``.

    Intervals longer than 1.8 times the median (gaps in the annotation) are left out.
    """
    onsets = np.sort([s for s, _, lab in segments if lab == "S1"])
    if len(onsets) < 2:
        return None
    rr = np.diff(onsets)
    rr = rr[rr > 0]
    if len(rr) == 0:
        return None
    rr = rr[rr <= 1.8 * np.median(rr)]
    return float(60.0 / rr.mean())


@dataclass(frozen=True)
class EventScores:
    """Detection scores of one label.

    Attributes
    ----------
    label : str
    n_reference, n_detected, true_positives, false_negatives, false_positives : int
    sensitivity, ppv, f1 : float or None
        None when undefined (no reference or no detected events).
    onset_error_ms, offset_error_ms : float or None
        Mean absolute onset/offset error of the matched pairs.
    onset_bias_ms, offset_bias_ms : float or None
        Mean signed error (detected minus reference).
    centre_error_ms : float or None
        Mean absolute distance of the matched centres.
    """

    label: str
    n_reference: int
    n_detected: int
    true_positives: int
    false_negatives: int
    false_positives: int
    sensitivity: float | None
    ppv: float | None
    f1: float | None
    onset_error_ms: float | None
    offset_error_ms: float | None
    onset_bias_ms: float | None
    offset_bias_ms: float | None
    centre_error_ms: float | None

    def to_dict(self) -> dict:
        """JSON-ready values."""
        return {k: (round(v, 4) if isinstance(v, float) else v)
                for k, v in self.__dict__.items()}


def _ratio(a: int, b: int) -> float | None:
    return a / b if b else None


def _scores(label: str, tp: int, fn: int, fp: int, onset: np.ndarray, offset: np.ndarray,
            centre: np.ndarray) -> EventScores:
    def mean_abs(v: np.ndarray) -> float | None:
        return float(np.mean(np.abs(v))) if len(v) else None

    def mean(v: np.ndarray) -> float | None:
        return float(np.mean(v)) if len(v) else None

    f1 = _ratio(2 * tp, 2 * tp + fp + fn)
    return EventScores(label, tp + fn, tp + fp, tp, fn, fp, _ratio(tp, tp + fn),
                       _ratio(tp, tp + fp), f1, mean_abs(onset), mean_abs(offset),
                       mean(onset), mean(offset), mean_abs(centre))


@dataclass(frozen=True)
class EventEvaluation:
    """Scores of one recording.

    Attributes
    ----------
    scores : dict of label -> EventScores
    heart_rate_reference_bpm, heart_rate_detected_bpm : float or None
    heart_rate_error_bpm : float or None
        Detected minus reference.
    tolerance_ms : float
    """

    scores: dict[str, EventScores]
    heart_rate_reference_bpm: float | None
    heart_rate_detected_bpm: float | None
    heart_rate_error_bpm: float | None
    tolerance_ms: float
    # Raw per-pair errors in ms, kept for pooling across recordings.
    _errors: dict[str, tuple[np.ndarray, np.ndarray, np.ndarray]]

    def to_dict(self) -> dict:
        """JSON-ready values."""
        def r(v: float | None) -> float | None:
            return None if v is None else round(v, 3)

        return {
            "tolerance_ms": self.tolerance_ms,
            "scores": {k: v.to_dict() for k, v in self.scores.items()},
            "heart_rate_reference_bpm": r(self.heart_rate_reference_bpm),
            "heart_rate_detected_bpm": r(self.heart_rate_detected_bpm),
            "heart_rate_error_bpm": r(self.heart_rate_error_bpm),
        }


#: The labels of the heart cycle; the annotated span is where they were marked.
_CYCLE_LABELS = frozenset({"S1", "systole", "S2", "diastole"})


def evaluate_events(reference: Sequence[Interval], detected: Sequence[Interval], *,
                    tolerance_ms: float = 60.0, labels: Sequence[str] = ("S1", "S2"),
                    within_reference: bool = True) -> EventEvaluation:
    """Score detected sounds against reference sounds.

    Parameters
    ----------
    reference, detected : sequence of (start_s, end_s, label)
        Intervals; labels other than ``labels`` (and the cycle labels) are ignored.
    tolerance_ms : float
        Largest centre distance of a correct detection.
    labels : sequence of str
        Labels scored.
    within_reference : bool
        Score only detections whose centre lies inside the annotated span (first
        reference start to last reference end of the cycle labels S1, systole, S2,
        diastole, or of every interval when there are none): sounds outside what an
        annotator marked are neither right nor wrong. Murmur or extra-sound rows that
        run past the annotated cycles do not widen it.

    Returns
    -------
    EventEvaluation

    Examples
    --------
    >>> ref = [(1.0, 1.1, "S1"), (1.3, 1.4, "S2")]
    >>> det = [(1.02, 1.12, "S1"), (1.6, 1.7, "S2")]
    >>> ev = evaluate_events(ref, det, tolerance_ms=60)
    >>> ev.scores["S1"].f1, ev.scores["S2"].f1
    (1.0, 0.0)
    """
    if not (tolerance_ms >= 0 and math.isfinite(tolerance_ms)):
        raise ParameterError(f"tolerance_ms={tolerance_ms!r} must be a non-negative number")
    tol = tolerance_ms / 1000.0
    if within_reference and reference:
        cycle = [r for r in reference if r[2] in _CYCLE_LABELS] or list(reference)
        lo = min(s for s, _, _ in cycle)
        hi = max(e for _, e, _ in cycle)
        detected = [d for d in detected if lo <= 0.5 * (d[0] + d[1]) <= hi]
    scores: dict[str, EventScores] = {}
    errors = {}
    for label in labels:
        ref = sorted((s, e) for s, e, lab in reference if lab == label)
        det = sorted((s, e) for s, e, lab in detected if lab == label)
        rc = [0.5 * (s + e) for s, e in ref]
        dc = [0.5 * (s + e) for s, e in det]
        pairs = match_events(rc, dc, tol)
        tp = len(pairs)
        onset = np.array([1000.0 * (det[j][0] - ref[i][0]) for i, j in pairs])
        offset = np.array([1000.0 * (det[j][1] - ref[i][1]) for i, j in pairs])
        centre = np.array([1000.0 * (dc[j] - rc[i]) for i, j in pairs])
        scores[label] = _scores(label, tp, len(ref) - tp, len(det) - tp, onset, offset, centre)
        errors[label] = (onset, offset, centre)
    hr_ref = heart_rate_from_segments(reference)
    hr_det = heart_rate_from_segments(detected)
    err = None if hr_ref is None or hr_det is None else hr_det - hr_ref
    return EventEvaluation(scores, hr_ref, hr_det, err, float(tolerance_ms), errors)


# --- reading annotations -----------------------------------------------------------------

def parse_label_map(text: str | Mapping[str, str] | None) -> dict[str, str]:
    """Parse a label mapping: ``"1=S1,2=systole"``, a JSON object, or a JSON/CSV file path.

    Raises
    ------
    ParameterError
        When the text is none of these.
    """
    if text is None:
        return {}
    if isinstance(text, Mapping):
        return {str(k): str(v) for k, v in text.items()}
    text = text.strip()
    path = Path(text)
    if text and not text.startswith("{") and "=" not in text and path.is_file():
        content = path.read_text(encoding="utf-8").strip()
        if content.startswith("{"):
            return parse_label_map(content)
        rows = [r for r in csv.reader(content.splitlines()) if len(r) >= 2]
        return {r[0].strip(): r[1].strip() for r in rows
                if r[0].strip().lower() not in ("from", "source", "raw")}
    if text.startswith("{"):
        try:
            data = json.loads(text)
        except ValueError as exc:
            raise ParameterError(f"label map {text!r} is not valid JSON ({exc})") from None
        return {str(k): str(v) for k, v in data.items()}
    out = {}
    for part in text.split(","):
        if not part.strip():
            continue
        if "=" not in part:
            raise ParameterError(
                f"label map entry {part!r} has no '='; write e.g. '1=S1,2=systole,3=S2,4=diastole'")
        k, v = part.split("=", 1)
        out[k.strip()] = v.strip()
    return out


def _canonical(raw: str, label_map: Mapping[str, str]) -> str | None:
    raw = raw.strip()
    if raw in label_map:
        raw = label_map[raw]
    else:
        lowered = {k.lower(): v for k, v in label_map.items()}
        raw = lowered.get(raw.lower(), raw)
    return DEFAULT_ALIASES.get(raw.strip().lower(), raw.strip()) or None


def _find(header: list[str], names: Sequence[str]) -> int | None:
    low = [h.strip().lower() for h in header]
    for name in names:
        if name in low:
            return low.index(name)
    return None


def _is_number(v: str) -> bool:
    try:
        float(v)
    except ValueError:
        return False
    return True


def read_annotation(path: str | Path, label_map: Mapping[str, str] | None = None
                    ) -> list[Interval]:
    """Read reference or result annotations as ``(start_s, end_s, label)`` intervals.

    Understood layouts (comma, tab, semicolon or space separated, with or without a
    header): interval rows ``start, end, label`` (header names such as
    ``start_s``/``onset``, ``end_s``/``offset``, ``label``/``state``/``type``), and
    state-change rows ``time, label`` where each state lasts until the next row.

    Parameters
    ----------
    path : str or Path
    label_map : mapping, optional
        Raw label -> canonical label (``S1``, ``systole``, ``S2``, ``diastole``);
        applied before the built-in spellings (:data:`DEFAULT_ALIASES`).

    Returns
    -------
    list of (start_s, end_s, label)
        Sorted by start; labels outside the map are kept as written.
    """
    path = Path(path)
    lmap = dict(label_map or {})
    try:
        text = path.read_text(encoding="utf-8-sig")
    except OSError as exc:
        raise InputError(str(path), f"cannot read ({exc.strerror})", "check the path") from None
    lines = [ln for ln in text.splitlines() if ln.strip() and not ln.lstrip().startswith("#")]
    if not lines:
        raise InputError(str(path), "the annotation file is empty",
                         "give rows of start,end,label or time,label")
    try:
        dialect = csv.Sniffer().sniff(lines[0], delimiters=",\t; ")
        delim = dialect.delimiter
    except csv.Error:
        delim = ","
    rows = [[c.strip() for c in r] for r in csv.reader(lines, delimiter=delim,
                                                       skipinitialspace=True)]
    rows = [[c for c in r if c != ""] if delim == " " else r for r in rows]
    header = None
    if rows and not any(_is_number(c) for c in rows[0]):
        header, rows = rows[0], rows[1:]
    if header is not None:
        i_s, i_e, i_l = _find(header, _START_NAMES), _find(header, _END_NAMES), \
            _find(header, _LABEL_NAMES)
        i_t = _find(header, _TIME_NAMES)
        if i_l is None:
            raise InputError(str(path), f"no label column among {header}",
                             "name it label, state or type")
        if i_s is not None and i_e is not None:
            layout = ("intervals", i_s, i_e, i_l)
        elif i_t is not None or i_s is not None:
            layout = ("changes", i_t if i_t is not None else i_s, None, i_l)
        else:
            raise InputError(str(path), f"no time columns among {header}",
                             "use start_s,end_s,label or time,label")
    else:
        width = min(len(r) for r in rows) if rows else 0
        if width >= 3 and all(_is_number(r[0]) and _is_number(r[1]) for r in rows):
            layout = ("intervals", 0, 1, 2)
        elif width >= 2 and all(_is_number(r[0]) for r in rows):
            layout = ("changes", 0, None, 1)
        else:
            raise InputError(str(path), "rows are neither start,end,label nor time,label",
                             "write one interval or one state change per row")
    kind, a, b, lab = layout
    out: list[Interval] = []
    try:
        if kind == "intervals":
            for r in rows:
                label = _canonical(r[lab], lmap)
                if label:
                    out.append((float(r[a]), float(r[b]), label))
        else:
            marks = sorted((float(r[a]), r[lab]) for r in rows)
            for (t0, raw), (t1, _) in zip(marks[:-1], marks[1:], strict=True):
                label = _canonical(raw, lmap)
                if label and t1 > t0:
                    out.append((t0, t1, label))
    except (ValueError, IndexError) as exc:
        raise InputError(str(path), f"a row cannot be read ({exc})",
                         "check that every row has numeric times and a label") from None
    return sorted(out)


# --- folders ------------------------------------------------------------------------------

@dataclass(frozen=True)
class RecordEvaluation:
    """Evaluation of one recording: its stem, files and scores."""

    stem: str
    reference_path: str
    results_path: str
    evaluation: EventEvaluation

    def to_dict(self) -> dict:
        """JSON-ready values."""
        return {"stem": self.stem, "reference": self.reference_path,
                "results": self.results_path, **self.evaluation.to_dict()}


@dataclass(frozen=True)
class FolderEvaluation:
    """Evaluation of a folder of recordings.

    Attributes
    ----------
    records : tuple of RecordEvaluation
    totals : dict of label -> EventScores
        Pooled over all recordings (counts summed, errors over all matched pairs).
    missing : tuple of str
        Reference stems without a results file.
    tolerance_ms : float
    heart_rate_abs_error_bpm : float or None
        Mean absolute heart-rate error over recordings.
    heart_rate_within_2bpm : float or None
        Fraction of recordings with the heart rate within 2 bpm.
    """

    records: tuple[RecordEvaluation, ...]
    totals: dict[str, EventScores]
    missing: tuple[str, ...]
    tolerance_ms: float
    heart_rate_abs_error_bpm: float | None
    heart_rate_within_2bpm: float | None

    def to_dict(self) -> dict:
        """JSON-ready values."""
        return {
            "tolerance_ms": self.tolerance_ms,
            "n_records": len(self.records),
            "totals": {k: v.to_dict() for k, v in self.totals.items()},
            "heart_rate_abs_error_bpm": None if self.heart_rate_abs_error_bpm is None
            else round(self.heart_rate_abs_error_bpm, 3),
            "heart_rate_within_2bpm": self.heart_rate_within_2bpm,
            "missing": list(self.missing),
            "records": [r.to_dict() for r in self.records],
        }


def pool(evaluations: Sequence[EventEvaluation], labels: Sequence[str] = ("S1", "S2")
         ) -> dict[str, EventScores]:
    """Pool the scores of several recordings: summed counts, errors over all pairs."""
    out = {}
    for label in labels:
        tp = sum(ev.scores[label].true_positives for ev in evaluations if label in ev.scores)
        fn = sum(ev.scores[label].false_negatives for ev in evaluations if label in ev.scores)
        fp = sum(ev.scores[label].false_positives for ev in evaluations if label in ev.scores)
        parts = [ev._errors[label] for ev in evaluations if label in ev._errors]
        cat = [np.concatenate([p[k] for p in parts]) if parts else np.array([])
               for k in range(3)]
        out[label] = _scores(label, tp, fn, fp, *cat)
    return out


def _reference_files(reference_dir: Path) -> dict[str, Path]:
    truth = sorted(reference_dir.glob("*.truth.csv"))
    if truth:
        return {p.name[: -len(".truth.csv")]: p for p in truth}
    out = {}
    for p in sorted(reference_dir.glob("*.csv")):
        if p.name.endswith((".segments.csv", ".beats.csv")) or p.name == "index.csv":
            continue
        out[p.stem] = p
    return out


def evaluate_folder(reference_dir: str | Path, results_dir: str | Path,
                    tolerance_ms: float = 60.0,
                    label_map: Mapping[str, str] | str | None = None, *,
                    within_reference: bool = True) -> FolderEvaluation:
    """Evaluate every ``<stem>.segments.csv`` in ``results_dir`` against its reference.

    References are ``<stem>.truth.csv`` files when the folder has any, else every
    ``<stem>.csv`` (except ``index.csv`` and our own output tables).

    Parameters
    ----------
    reference_dir, results_dir : str or Path
    tolerance_ms : float
        Centre tolerance of a correct detection.
    label_map : mapping or str, optional
        Raw reference label -> canonical label (see :func:`parse_label_map`).
    within_reference : bool
        See :func:`evaluate_events`.

    Returns
    -------
    FolderEvaluation
    """
    ref_dir, res_dir = Path(reference_dir), Path(results_dir)
    for d, what in ((ref_dir, "reference"), (res_dir, "results")):
        if not d.is_dir():
            raise InputError(str(d), f"the {what} folder does not exist",
                             f"give the folder of {what} CSV files")
    lmap = parse_label_map(label_map) if not isinstance(label_map, Mapping) else dict(label_map)
    refs = _reference_files(ref_dir)
    if not refs:
        raise InputError(str(ref_dir), "no reference CSV files found",
                         "give a folder of <stem>.csv or <stem>.truth.csv annotations")
    records, missing = [], []
    for stem, ref_path in refs.items():
        res_path = res_dir / f"{stem}.segments.csv"
        if not res_path.is_file():
            missing.append(stem)
            continue
        ev = evaluate_events(read_annotation(ref_path, lmap), read_annotation(res_path),
                             tolerance_ms=tolerance_ms, within_reference=within_reference)
        records.append(RecordEvaluation(stem, str(ref_path), str(res_path), ev))
    if not records:
        raise InputError(str(res_dir), f"no <stem>.segments.csv matches the {len(refs)} "
                         "reference files", "run eddyphone analyze --out on the recordings first")
    errs = [r.evaluation.heart_rate_error_bpm for r in records
            if r.evaluation.heart_rate_error_bpm is not None]
    return FolderEvaluation(
        tuple(records), pool([r.evaluation for r in records]), tuple(missing),
        float(tolerance_ms),
        float(np.mean(np.abs(errs))) if errs else None,
        float(np.mean(np.abs(errs) <= 2.0)) if errs else None,
    )
