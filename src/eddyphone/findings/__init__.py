"""Findings: murmurs and extra sounds described in the trade's words.

Per-beat window measures (:mod:`.measures`) are aggregated over the usable beats
into murmur descriptions (:mod:`.murmur`: presence, phase, timing, shape, pitch,
quality words, consistency, grade range) and extra sounds (:mod:`.extra`: S3, S4,
split S2, ejection click, opening snap). :mod:`.patient` combines the recordings
of one patient taken at several sites.

Public API
----------
describe(x, fs, segmentation, *, quality=None, config=FindingsConfig()) -> Findings
FindingsConfig, Findings, Murmur, ExtraSound, BeatMeasures
summarise_patient(analyses) -> PatientSummary
"""

from __future__ import annotations

from eddyphone.findings.config import FindingsConfig
from eddyphone.findings.describe import describe
from eddyphone.findings.records import BeatMeasures, ExtraSound, Findings, Murmur

__all__ = ["BeatMeasures", "ExtraSound", "Findings", "FindingsConfig", "Murmur", "describe",
           "summarise_patient"]


def __getattr__(name: str):
    if name in ("summarise_patient", "PatientSummary"):
        from eddyphone.findings import patient

        return getattr(patient, name)
    raise AttributeError(f"module 'eddyphone.findings' has no attribute {name!r}")
