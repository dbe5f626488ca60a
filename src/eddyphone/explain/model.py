"""What the explainer returns: :class:`Mechanism` and :class:`Explanation`."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any


def _plain(value: Any) -> Any:
    if isinstance(value, Mapping):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if isinstance(value, float):
        return float(f"{value:.4g}") if abs(value) < 1e4 else round(value, 1)
    if hasattr(value, "item"):
        return _plain(value.item())
    return value


@dataclass(frozen=True)
class Mechanism:
    """One candidate physical cause of a finding (or of the recording as a whole).

    Attributes
    ----------
    name : str
        'high_flow', 'narrowed_orifice', 'low_viscosity', 'wall_irregularity' or
        'no_flow_disturbance'.
    label : str
        Plain words, e.g. 'a jet through a narrowed outflow valve'.
    score : float
        0-1 relative support; the scores of one finding's candidates sum to 1.
    rank : int
        1 for the best-supported candidate.
    finding_id : str or None
        The finding explained, ``None`` for the recording (or patient) as a whole.
    evidence : tuple of str
        The observations used, each with the log-odds it added (``+1.0``).
    physics : str
        Two or three sentences of flow physics with the numbers.
    numbers : mapping
        Name -> ``{"value", "unit", "meaning"}``, every value from :mod:`eddyphone.physics`.
    discriminators : tuple of str
        Further measurements that would tell this candidate from the others.
    cautions, assumptions : tuple of str
    """

    name: str
    label: str
    score: float
    rank: int
    finding_id: str | None
    evidence: tuple[str, ...]
    physics: str
    numbers: Mapping[str, Mapping[str, Any]]
    discriminators: tuple[str, ...]
    cautions: tuple[str, ...] = ()
    assumptions: tuple[str, ...] = ()
    logit: float = 0.0

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready form."""
        return {
            "name": self.name,
            "label": self.label,
            "score": round(float(self.score), 4),
            "rank": self.rank,
            "finding_id": self.finding_id,
            "evidence": list(self.evidence),
            "physics": self.physics,
            "numbers": _plain(dict(self.numbers)),
            "discriminators": list(self.discriminators),
            "cautions": list(self.cautions),
            "assumptions": list(self.assumptions),
        }


@dataclass(frozen=True)
class Explanation:
    """Ranked mechanisms for every finding and for the whole recording.

    Attributes
    ----------
    per_finding : mapping str -> tuple of Mechanism
        Finding id -> candidates, best first.
    overall : tuple of Mechanism
        Candidates for the recording (or patient) as a whole, best first.
    assumptions : tuple of str
        Defaults assumed in place of missing context, and how they limit the answer.
    cautions : tuple of str
        Cautions specific to this explanation (the general ones travel separately).
    inputs : mapping
        Each physical input used, its value and source ('context', 'recording', 'default').
    subjects : mapping str -> str
        Finding id -> one-line description of the finding explained.
    """

    per_finding: Mapping[str, tuple[Mechanism, ...]]
    overall: tuple[Mechanism, ...]
    assumptions: tuple[str, ...] = ()
    cautions: tuple[str, ...] = ()
    inputs: Mapping[str, Any] = field(default_factory=dict)
    subjects: Mapping[str, str] = field(default_factory=dict)

    def top(self) -> Mechanism | None:
        """The best-supported mechanism for the whole recording, or ``None``."""
        return self.overall[0] if self.overall else None

    def for_finding(self, finding_id: str) -> tuple[Mechanism, ...]:
        """Candidates for one finding (empty when it has none)."""
        return tuple(self.per_finding.get(finding_id, ()))

    def to_list(self) -> list[dict[str, Any]]:
        """JSON list: the overall candidates (``scope`` 'overall'), then each finding's."""
        out = [{"scope": "overall", **m.to_dict()} for m in self.overall]
        for fid, mechs in self.per_finding.items():
            out += [{"scope": "finding", **m.to_dict(), "finding_id": fid} for m in mechs]
        return out

    def to_dict(self) -> dict[str, Any]:
        """Everything, JSON-ready (mechanisms, assumptions, cautions, inputs)."""
        return {
            "mechanisms": self.to_list(),
            "assumptions": list(self.assumptions),
            "cautions": list(self.cautions),
            "inputs": _plain(dict(self.inputs)),
            "subjects": dict(self.subjects),
        }
