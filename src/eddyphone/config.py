"""The one configuration object, echoed into every output.

``Config`` composes each stage's own frozen settings dataclass; every field has
a documented default in the module of its stage.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import asdict, dataclass, field, fields, is_dataclass, replace

from eddyphone.condition import ConditionConfig
from eddyphone.explain import ExplainConfig
from eddyphone.findings import FindingsConfig
from eddyphone.quality import QualityConfig
from eddyphone.segment import SegmentConfig


@dataclass(frozen=True)
class Config:
    """All analysis settings (see each stage's config class for the fields)."""

    condition: ConditionConfig = field(default_factory=ConditionConfig)
    quality: QualityConfig = field(default_factory=QualityConfig)
    segment: SegmentConfig = field(default_factory=SegmentConfig)
    findings: FindingsConfig = field(default_factory=FindingsConfig)
    explain: ExplainConfig = field(default_factory=ExplainConfig)

    def to_dict(self) -> dict:
        """JSON-ready nested dictionary."""
        return _plain(asdict(self))

    def digest(self) -> str:
        """Short stable hash of the settings, for resumable runs and provenance."""
        text = json.dumps(self.to_dict(), sort_keys=True)
        return hashlib.sha256(text.encode()).hexdigest()[:16]

    def with_section(self, name: str, **changes: object) -> Config:
        """Return a copy with fields of one section changed."""
        return replace(self, **{name: replace(getattr(self, name), **changes)})


def config_from_dict(data: dict) -> Config:
    """Build a :class:`Config` from a (possibly partial) nested dictionary."""
    sections = {}
    for f in fields(Config):
        default = f.default_factory()  # type: ignore[misc]
        values = data.get(f.name, {})
        if is_dataclass(default) and values:
            names = {g.name for g in fields(default)}
            unknown = set(values) - names
            if unknown:
                from eddyphone.errors import ParameterError

                raise ParameterError(f"unknown settings {sorted(unknown)} in section {f.name!r}")
            values = {k: tuple(v) if isinstance(v, list) else v for k, v in values.items()}
            default = replace(default, **values)
        sections[f.name] = default
    return Config(**sections)


def _plain(value: object) -> object:
    if isinstance(value, dict):
        return {k: _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    return value
