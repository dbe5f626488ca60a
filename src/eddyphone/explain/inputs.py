"""Findings from outside a live analysis: a saved JSON result, or a murmur described by hand.

Public functions: :func:`findings_from_list`, :func:`described_murmur`.

Both return real :class:`eddyphone.findings.Findings`, so a saved result can be
explained again with new patient context (a blood count that came back later) and an
educator can ask what a textbook murmur would imply.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import fields

from eddyphone.errors import InputError, ParameterError
from eddyphone.findings.words import QUALITY_WORDS

_PHASES = ("systolic", "diastolic", "continuous")
_TIMINGS = ("early", "mid", "late", "holo")
_SHAPES = ("crescendo", "decrescendo", "crescendo-decrescendo", "plateau")


def findings_from_list(items: Sequence[Mapping[str, object]], *, presence: str | None = None,
                       source: str | None = None):
    """Rebuild :class:`~eddyphone.findings.Findings` from the ``findings`` list of the JSON.

    Parameters
    ----------
    items : sequence of mapping
        The ``findings`` entries of an ``analyze`` JSON (each with ``kind``).
    presence : str, optional
        The recording-level murmur call (``summary.murmur``); derived when omitted.
    source : str, optional
        File name for error messages.
    """
    from eddyphone.findings import ExtraSound, Findings, Murmur

    m_names = {f.name for f in fields(Murmur)}
    e_names = {f.name for f in fields(ExtraSound)}
    murmurs, extras = [], []
    for i, item in enumerate(items):
        kind = item.get("kind")
        try:
            if kind == "murmur":
                values = {k: v for k, v in item.items() if k in m_names}
                values["grade_range"] = tuple(values.get("grade_range", (1, 1)))
                values["quality_words"] = tuple(values.get("quality_words", ()))
                values["profile"] = tuple(values.get("profile", ()))
                murmurs.append(Murmur(**values))
            elif kind == "extra_sound":
                values = {k: v for k, v in item.items() if k in e_names}
                values["kind"] = item.get("sound")  # the JSON keeps the kind as 'sound'
                extras.append(ExtraSound(**values))
        except TypeError as exc:
            raise InputError(source, f"finding {i} ({kind}) is incomplete ({exc})",
                             "pass the JSON written by 'eddyphone analyze'") from None
    if presence is None:
        presence = ("present" if any(m.presence == "present" for m in murmurs)
                    else "uncertain" if murmurs else "absent")
    return Findings(tuple(murmurs), tuple(extras), (), presence, "read from saved findings")


def described_murmur(*, phase: str, timing: str, shape: str, dominant_frequency_hz: float,
                     grade_range: tuple[int, int] = (2, 2),
                     quality_words: Iterable[str] = (), peak_fraction: float | None = None,
                     extra_sounds: Iterable[str] = ()):
    """Findings holding one murmur described in the trade's words (for teaching).

    Parameters
    ----------
    phase, timing, shape : str
        As in :class:`~eddyphone.findings.Murmur`.
    dominant_frequency_hz : float
        Dominant frequency in Hz (25-900).
    grade_range : (int, int)
        Grade range on I-VI; values above III are refused (a recording cannot show a
        thrill).
    quality_words : iterable of str
        From harsh, blowing, rumbling, musical, machinery.
    peak_fraction : float, optional
        Position of the peak in its window, 0-1 (defaults by shape).
    extra_sounds : iterable of str
        Kinds of companion sounds (S3, S4, split_S2, ejection_click, opening_snap).
    """
    from eddyphone.findings import ExtraSound, Findings, Murmur
    from eddyphone.findings.config import pitch_word
    from eddyphone.findings.records import GRADE_NOTE

    for name, value, allowed in (("phase", phase, _PHASES), ("timing", timing, _TIMINGS),
                                 ("shape", shape, _SHAPES)):
        if value not in allowed:
            raise ParameterError(f"{name} {value!r} is not one of {', '.join(allowed)}")
    words = tuple(quality_words)
    bad = [w for w in words if w not in QUALITY_WORDS]
    if bad:
        raise ParameterError(f"quality words {bad} are not among {', '.join(QUALITY_WORDS)}")
    if not 25.0 <= float(dominant_frequency_hz) <= 900.0:
        raise ParameterError(f"dominant frequency {dominant_frequency_hz!r} Hz is outside "
                             "25-900 Hz, the band the analysis keeps")
    lo, hi = (int(g) for g in grade_range)
    if not 1 <= lo <= hi <= 3:
        raise ParameterError(f"grade range {lo}-{hi} must lie within I-III (grades IV-VI need "
                             "a palpable thrill, which sound cannot show)")
    if peak_fraction is None:
        peak_fraction = {"crescendo": 0.9, "decrescendo": 0.1, "plateau": 0.5}.get(shape, 0.45)
    if not 0.0 <= peak_fraction <= 1.0:
        raise ParameterError(f"peak fraction {peak_fraction!r} must lie in 0-1")
    f = float(dominant_frequency_hz)
    pitch = pitch_word(f)
    m = Murmur(id="m1", phase=phase, presence="present", confidence=1.0, timing=timing,
               timing_confidence=1.0, shape=shape, shape_confidence=1.0, pitch=pitch,
               dominant_frequency_hz=f, centroid_hz=f, quality_words=words, consistency=1.0,
               grade_range=(lo, hi), grade_note=GRADE_NOTE, level_db_re_heart_sounds=0.0,
               peak_fraction=float(peak_fraction), beats_with_murmur=1, beats_used=1,
               profile=())
    extras = tuple(ExtraSound(f"x{i + 1}", k, 1.0, 0.0, "described")
                   for i, k in enumerate(extra_sounds))
    return Findings((m,), extras, (), "present", "described by hand")
