"""What the findings stage reports: :class:`Murmur`, :class:`ExtraSound`, :class:`Findings`.

Small frozen dataclasses with ``to_dict``; words are the trade's (phase, timing,
shape, pitch, grade on the six-grade scale), numbers carry their unit in the name.

Public names
------------
Murmur, ExtraSound, BeatMeasures, Findings
GRADE_NAMES
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, fields
from typing import Any

from eddyphone.findings.config import pitch_word

#: Roman numerals of the six-grade intensity scale (Levine scale, common practice).
GRADE_NAMES = ("I", "II", "III", "IV", "V", "VI")

#: Said with every grade: sound alone cannot show a thrill.
GRADE_NOTE = (
    "graded from loudness relative to S1/S2 only; grades IV-VI need a palpable thrill, "
    "which a recording cannot show, so the grade is capped at III"
)


def _r(value: float | None, nd: int = 3) -> float | None:
    return None if value is None else round(float(value), nd)


@dataclass(frozen=True)
class Murmur:
    """One murmur, aggregated over the usable beats of a recording.

    Attributes
    ----------
    id : str
        Finding id, e.g. ``'m1'``; explanations refer to it.
    phase : {'systolic', 'diastolic', 'continuous'}
        Where in the cycle; 'continuous' when it runs through S2.
    presence : {'present', 'uncertain'}
    confidence : float
        0-1 belief that the murmur is real.
    timing : {'early', 'mid', 'late', 'holo'}
        Part of the window it occupies (holo: the whole window).
    timing_confidence : float
    shape : {'crescendo', 'decrescendo', 'crescendo-decrescendo', 'plateau'}
    shape_confidence : float
    pitch : {'low', 'medium', 'high'}
        From where the murmur stands out of the same recording's noise floor
        (``findings.spectrum.noise_relative_centroid_hz`` on
        ``findings.config.PITCH_BOUNDARIES_RE_NOISE_HZ``), which a device tilt
        does not move.
    dominant_frequency_hz, centroid_hz : float
        Peak and centroid of the murmur's excess spectrum (above the noise floor).
    quality_words : tuple of str
        From harsh, blowing, rumbling, musical, machinery.
    consistency : float
        Fraction of usable beats that show it.
    grade_range : (int, int)
        Lowest and highest plausible grade on I-VI, never above III from sound alone.
    grade_note : str
    level_db_re_heart_sounds : float
        Murmur peak level (median over beats) relative to the louder of S1 and S2
        of the same beats.
    peak_fraction : float
        0-1 position of peak energy within its window.
    beats_with_murmur, beats_used : int
    profile : tuple of float
        Mean normalised envelope across the window (peak 1).
    spectrum : mapping str -> float
        Fraction of murmur energy per analysis band (keys like ``'150-300_hz'``).
    tonality : float
        0 (noise-like) to 1 (a pure tone): share of excess energy in its peak.
    snr_db : float
        Peak excess over the quiet parts of the cycle (beat-averaged), dB.
    level_db_re_s1 : float
        Murmur peak level relative to S1 alone (used to compare sites).
    onset_fraction, end_fraction : float
        Start and end of the murmur within its window (0-1), as used for timing.
    presystolic_accent : bool
        A diastolic murmur that swells again just before S1 (atrial contraction
        pushing blood through a narrowed inflow valve).
    uncertain_reason : str
        Why an 'uncertain' murmur is not called present (the rule that decided, with
        its numbers); empty for a present murmur.
    """

    id: str
    phase: str
    presence: str
    confidence: float
    timing: str
    timing_confidence: float
    shape: str
    shape_confidence: float
    pitch: str
    dominant_frequency_hz: float
    centroid_hz: float
    quality_words: tuple[str, ...]
    consistency: float
    grade_range: tuple[int, int]
    grade_note: str
    level_db_re_heart_sounds: float
    peak_fraction: float
    beats_with_murmur: int
    beats_used: int
    profile: tuple[float, ...]
    spectrum: Mapping[str, float] = field(default_factory=dict)
    tonality: float = 0.0
    snr_db: float = 0.0
    level_db_re_s1: float = float("nan")
    onset_fraction: float = float("nan")
    end_fraction: float = float("nan")
    presystolic_accent: bool = False
    uncertain_reason: str = ""

    @property
    def pitch_text(self) -> str:
        """The pitch word with the dominant frequency beside it, e.g. ``'medium-pitched
        (dominant 220 Hz)'``.

        The word comes from where the murmur stands out of the recording's noise
        floor, which the chest piece's response does not shift; the dominant frequency
        is the recorded one, which it does. Where the dominant frequency alone would
        give another word on the common-practice edges
        (:data:`~eddyphone.findings.config.PITCH_BOUNDARIES_HZ`), the text says so
        instead of printing a number that seems to contradict the word.
        """
        f = self.dominant_frequency_hz
        if math.isnan(f):
            return f"{self.pitch}-pitched"
        plain = pitch_word(f)
        if plain == self.pitch:
            return f"{self.pitch}-pitched (dominant {f:.0f} Hz)"
        return (f"{self.pitch}-pitched by its rise over the noise floor (the recorded "
                f"dominant {f:.0f} Hz alone would read {plain})")

    @property
    def grade_text(self) -> str:
        """The grade range in numerals, e.g. ``'II–III'`` or ``'II'``."""
        lo, hi = self.grade_range
        a, b = GRADE_NAMES[lo - 1], GRADE_NAMES[hi - 1]
        return a if lo == hi else f"{a}\u2013{b}"

    def describe(self) -> str:
        """One line in the trade's words, e.g. 'grade II–III/VI harsh mid-systolic ...'."""
        if self.timing == "holo":
            when = f"holo{self.phase}" if self.phase != "continuous" else "continuous"
        else:
            when = f"{self.timing}-{self.phase}" if self.phase != "continuous" else "continuous"
        words = " ".join("machinery-like" if w == "machinery" else w
                         for w in self.quality_words)
        accent = " with presystolic accentuation" if self.presystolic_accent else ""
        text = (f"grade {self.grade_text}/VI {words + ' ' if words else ''}{when} "
                f"{self.shape} murmur{accent}, {self.pitch_text}, "
                f"in {self.beats_with_murmur}/{self.beats_used} beats")
        return text if self.presence == "present" else f"possible {text}"

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> Murmur:
        """The murmur back from its :meth:`to_dict` (JSON nulls read as NaN)."""
        return cls(**_fields_from(cls, d))

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready finding (``kind`` = 'murmur')."""
        return {
            "id": self.id,
            "kind": "murmur",
            "phase": self.phase,
            "presence": self.presence,
            "confidence": _r(self.confidence),
            "timing": self.timing,
            "timing_confidence": _r(self.timing_confidence),
            "shape": self.shape,
            "shape_confidence": _r(self.shape_confidence),
            "pitch": self.pitch,
            "dominant_frequency_hz": _r(self.dominant_frequency_hz, 1),
            "centroid_hz": _r(self.centroid_hz, 1),
            "quality_words": list(self.quality_words),
            "consistency": _r(self.consistency),
            "grade_range": list(self.grade_range),
            "grade": self.grade_text,
            "grade_note": self.grade_note,
            "level_db_re_heart_sounds": _r(self.level_db_re_heart_sounds, 1),
            "snr_db": _r(self.snr_db, 1),
            "level_db_re_s1": _r(self.level_db_re_s1, 1),
            "tonality": _r(self.tonality),
            "peak_fraction": _r(self.peak_fraction),
            "onset_fraction": _r(self.onset_fraction),
            "presystolic_accent": bool(self.presystolic_accent),
            "uncertain_reason": self.uncertain_reason,
            "end_fraction": _r(self.end_fraction),
            "beats_with_murmur": int(self.beats_with_murmur),
            "beats_used": int(self.beats_used),
            "profile": [_r(v) for v in self.profile],
            "spectrum": {k: _r(v) for k, v in self.spectrum.items()},
            "description": self.describe(),
        }


#: Short names of the extra sounds, for summaries that list them.
SOUND_NAMES = {"S3": "S3", "S4": "S4", "split_S2": "split S2",
               "ejection_click": "ejection click", "opening_snap": "opening snap"}


@dataclass(frozen=True)
class ExtraSound:
    """An extra heart sound.

    Attributes
    ----------
    id : str
        e.g. ``'x1'``.
    kind : {'S3', 'S4', 'split_S2', 'ejection_click', 'opening_snap'}
    confidence : float
    timing_ms : float
        Median interval to ``reference`` (for split_S2: the A2-P2 interval).
    reference : str
        What ``timing_ms`` is measured from, e.g. 'after S2 onset'.
    details : mapping
        Window searched (``window_ms``), its source, beats seen, spread, etc.
    """

    id: str
    kind: str
    confidence: float
    timing_ms: float
    reference: str
    details: Mapping[str, Any] = field(default_factory=dict)

    @property
    def possible(self) -> bool:
        """Reported only as possible (``details['caution']`` says why)."""
        return bool(self.details.get("caution"))

    def describe(self) -> str:
        """One line in the trade's words."""
        if self.kind == "split_S2":
            how = self.details.get("variation", "")
            return f"split S2, A2-P2 {self.timing_ms:.0f} ms{', ' + how if how else ''}"
        names = {"S3": "S3 (early-diastolic filling sound)",
                 "S4": "S4 (presystolic atrial sound)",
                 "ejection_click": "early-systolic ejection click",
                 "opening_snap": "early-diastolic opening snap"}
        line = f"{names.get(self.kind, self.kind)}, {self.timing_ms:.0f} ms {self.reference}"
        return f"{line} ({self.details['caution']})" if self.possible else line

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> ExtraSound:
        """The sound back from its :meth:`to_dict`."""
        return cls(**_fields_from(cls, {**d, "kind": d["sound"]}))

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready finding (``kind`` = 'extra_sound', ``sound`` = the kind)."""
        return {"id": self.id, "kind": "extra_sound", "sound": self.kind,
                "confidence": _r(self.confidence), "timing_ms": _r(self.timing_ms, 1),
                "reference": self.reference, "details": _plain(dict(self.details)),
                "description": self.describe()}


@dataclass(frozen=True)
class BeatMeasures:
    """Per-beat window measures (see :mod:`eddyphone.findings.measures`).

    Levels are dB relative to the louder of this beat's S1 and S2; ``*_snr_db`` is
    the loudest bin relative to the beat's quiet level; ``s1_db``/``s2_db`` are in
    dB of the conditioned (unit-RMS) signal; centroids of each window's mean
    spectrum (25-900 Hz); tonality = 1 - spectral flatness. NaN where a window is missing.
    """

    beat: int
    usable: bool
    s1_db: float
    s2_db: float
    sys_db_re_hs: float
    dia_db_re_hs: float
    sys_snr_db: float
    dia_snr_db: float
    sys_centroid_hz: float
    dia_centroid_hz: float
    sys_tonality: float
    dia_tonality: float
    sys_murmur: bool
    dia_murmur: bool

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready values."""
        return {k: (v if isinstance(v, (bool, int, str)) else _r(v, 2))
                for k, v in self.__dict__.items()}


@dataclass(frozen=True)
class Findings:
    """Everything the findings stage found in one recording.

    Attributes
    ----------
    murmurs : tuple of Murmur
        Loudest-confidence first.
    extra_sounds : tuple of ExtraSound
    beat_measures : tuple of BeatMeasures
    presence : {'present', 'absent', 'uncertain'}
        Recording-level murmur call.
    presence_reason : str
        Why, in a sentence (evidence or what stopped a decision).
    """

    murmurs: tuple[Murmur, ...]
    extra_sounds: tuple[ExtraSound, ...]
    beat_measures: tuple[BeatMeasures, ...]
    presence: str
    presence_reason: str
    noise_floor_db_re_hs: float | None = None

    @classmethod
    def from_json(cls, findings: Sequence[Mapping[str, Any]], presence: str,
                  presence_reason: str = "") -> Findings:
        """Findings back from the output contract's ``findings`` list and the
        recording-level presence (``summary.murmur``); the per-beat measures are not in
        that list and stay empty."""
        return cls(murmurs=tuple(Murmur.from_dict(d) for d in findings
                                 if d.get("kind") == "murmur"),
                   extra_sounds=tuple(ExtraSound.from_dict(d) for d in findings
                                      if d.get("kind") == "extra_sound"),
                   beat_measures=(), presence=presence, presence_reason=presence_reason)

    def main(self) -> Murmur | None:
        """The main murmur (first listed), or None."""
        return self.murmurs[0] if self.murmurs else None

    def to_list(self) -> list[dict[str, Any]]:
        """JSON list of finding dicts (murmurs first, then extra sounds)."""
        return [m.to_dict() for m in self.murmurs] + [e.to_dict() for e in self.extra_sounds]

    def summary_dict(self) -> dict[str, Any]:
        """Headline keys for ``Analysis.summary()``."""
        m = self.main()
        return {
            "murmur": self.presence,
            "murmur_phase": m.phase if m else None,
            "murmur_timing": m.timing if m else None,
            "murmur_shape": m.shape if m else None,
            "murmur_pitch": m.pitch if m else None,
            "murmur_grade_range": m.grade_text if m else None,
            "murmur_dominant_frequency_hz": _r(m.dominant_frequency_hz, 1) if m else None,
            "murmur_consistency": _r(m.consistency) if m else None,
            "murmur_quality": list(m.quality_words) if m else [],
            "murmur_description": m.describe() if m else None,
            "extra_sounds": [e.kind for e in self.extra_sounds],
            "murmur_reason": self.presence_reason,
        }


def _fields_from(cls: type, d: Mapping[str, Any]) -> dict[str, Any]:
    """The dataclass fields of ``cls`` found in ``d``: JSON lists as tuples, nulls of
    float fields as NaN."""
    out: dict[str, Any] = {}
    for f in fields(cls):
        if f.name not in d:
            continue
        v = d[f.name]
        if isinstance(v, list):
            v = tuple(v)
        elif v is None and f.type in ("float", float):
            v = float("nan")
        out[f.name] = v
    return out


def _plain(value: Any) -> Any:
    if isinstance(value, Mapping):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if isinstance(value, float):
        return round(value, 4)
    if hasattr(value, "item"):
        return _plain(value.item())
    return value
