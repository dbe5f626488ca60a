"""``analyze``: the stages composed, and the :class:`Analysis` they produce.

load -> condition -> quality -> segment (envelopes, rhythm, HSMM) -> findings
-> explain. The JSON form of an :class:`Analysis` is the output contract
documented in ``docs/output-contract.md``.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from eddyphone._version import __version__
from eddyphone.cautions import GENERAL_CAUTIONS
from eddyphone.condition import Conditioned, condition
from eddyphone.config import Config
from eddyphone.context import PatientContext
from eddyphone.quality import Quality, assess
from eddyphone.recording import Recording

if TYPE_CHECKING:
    from eddyphone.segment import Segmentation

#: Version of the JSON output contract. Bump the minor number when keys are
#: added, the major number when a key changes meaning or disappears.
SCHEMA_VERSION = "1.2"


@dataclass(frozen=True, eq=False)
class Analysis:
    """Everything ``analyze`` found for one recording."""

    recording: Recording
    conditioned: Conditioned
    quality: Quality
    segmentation: Any
    findings: Any
    explanation: Any
    context: PatientContext | None
    config: Config

    def summary(self) -> dict:
        """The headline: rhythm, murmur presence/phase/description, top mechanism."""
        out: dict[str, Any] = {"quality_score": round(self.quality.score, 3)}
        rhythm = getattr(self.segmentation, "rhythm", None)
        if rhythm is not None and math.isfinite(rhythm.heart_rate_bpm):
            out["heart_rate_bpm"] = round(rhythm.heart_rate_bpm, 1)
            out["rhythm"] = "irregular" if rhythm.irregular else "regular"
            out["beats"] = len(self.segmentation.beats)
        else:
            out.update(heart_rate_bpm=None, rhythm=None, beats=0)
        if self.findings is not None:
            out.update(self.findings.summary_dict())
        else:
            out.update(murmur="uncertain", murmur_phase=None, murmur_timing=None,
                       murmur_shape=None, murmur_pitch=None, murmur_grade_range=None,
                       extra_sounds=[], murmur_reason="murmur analysis is not available yet")
        top = self.explanation.top() if self.explanation is not None else None
        out["top_mechanism"] = top.name if top is not None else None
        out["top_mechanism_score"] = round(top.score, 3) if top is not None else None
        return out

    def to_dict(self) -> dict:
        """The JSON output contract (see ``docs/output-contract.md``).

        Numbers that could not be measured (NaN, infinite) are written as ``null``.
        """
        seg = self.segmentation
        return _finite_or_null({
            "schema_version": SCHEMA_VERSION,
            "eddyphone_version": __version__,
            "recording": {**self.recording.describe(), "conditioning":
                          self.conditioned.describe()},
            "context": self.context.to_dict() if self.context else {},
            "quality": self.quality.to_dict(),
            "segmentation": {"method": seg.method, "feature_fs_hz": seg.feature_fs}
            if seg is not None else {},
            "rhythm": seg.rhythm.to_dict() if seg is not None else {},
            "segments": [s.to_dict() for s in seg.segments] if seg is not None else [],
            "beats": [b.to_dict() for b in seg.beats] if seg is not None else [],
            "skipped": [{"start_s": a, "end_s": b, "reason": r} for a, b, r in seg.skipped]
            if seg is not None else [],
            "findings": self.findings.to_list() if self.findings is not None else [],
            "summary": self.summary(),
            "mechanisms": self.explanation.to_list() if self.explanation is not None else [],
            "assumptions": list(self.explanation.assumptions)
            if self.explanation is not None else [],
            "explanation_inputs": self.explanation.to_dict()["inputs"]
            if self.explanation is not None else {},
            "cautions": list(GENERAL_CAUTIONS)
            + (list(self.explanation.cautions) if self.explanation is not None else []),
            "config": {**self.config.to_dict(), "digest": self.config.digest()},
        })


def _finite_or_null(value: Any) -> Any:
    """Replace non-finite floats by None, recursively (JSON has no NaN)."""
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {k: _finite_or_null(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_finite_or_null(v) for v in value]
    return value


def analyze(
    recording: str | Path | Recording,
    context: PatientContext | Mapping[str, object] | None = None,
    config: Config | None = None,
    *,
    segmentation: Segmentation | None = None,
) -> Analysis:
    """Analyse one recording: segmentation, findings and their physical explanation.

    Parameters
    ----------
    recording : path or Recording
        A file :func:`eddyphone.io.load` accepts, or a loaded recording.
    context : PatientContext or mapping, optional
        What is known about the patient (hematocrit, cardiac output, diameters...).
    config : Config, optional
        Settings; the defaults are documented with each stage.
    segmentation : Segmentation, optional
        S1, systole, S2 and diastole to use instead of decoding them, e.g. a corrected
        ``segments.csv`` through
        :func:`eddyphone.segment.given.segmentation_from_intervals`.

    Returns
    -------
    Analysis
        ``to_dict()`` gives the JSON output contract.
    """
    from eddyphone.explain import explain
    from eddyphone.findings import describe
    from eddyphone.io import load
    from eddyphone.segment import segment

    config = config or Config()
    rec = recording if isinstance(recording, Recording) else load(recording)
    if isinstance(context, Mapping):
        context = PatientContext.from_mapping(context)
    conditioned = condition(rec.x, rec.fs, config.condition)
    known_hum = conditioned.hum_hz if config.condition.remove_hum else "detect"
    quality = assess(rec.x, rec.fs, config.quality, hum_hz=known_hum)
    if segmentation is None:
        segmentation = segment(conditioned.x, conditioned.fs, quality=quality,
                               config=config.segment)
    findings = describe(conditioned.x, conditioned.fs, segmentation, quality=quality,
                        config=config.findings)
    explanation = explain(findings, context=context, recording=rec, segmentation=segmentation,
                          config=config.explain)
    return Analysis(rec, conditioned, quality, segmentation, findings, explanation, context,
                    config)
