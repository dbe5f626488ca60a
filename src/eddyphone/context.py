"""Optional patient context: what the clinician knows beyond the sound."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import asdict, dataclass, fields

from eddyphone.errors import ParameterError

#: High-output and related states the explainer understands.
KNOWN_STATES = ("exercise", "pregnancy", "fever", "anemia", "thyrotoxicosis", "sepsis",
                "arteriovenous_fistula")
#: Auscultation sites and vessels the explainer understands.
KNOWN_SITES = ("aortic", "pulmonic", "tricuspid", "mitral", "carotid", "femoral", "renal",
               "fistula", "other")


@dataclass(frozen=True)
class PatientContext:
    """Patient facts supplied by the user; every field is optional.

    Attributes
    ----------
    hematocrit : float, optional
        Volume fraction of red cells, 0–0.8 (0.45 is 45 %).
    heart_rate_bpm : float, optional
        Measured heart rate, overriding nothing but used by the physics.
    cardiac_output_l_min, stroke_volume_ml : float, optional
        Flow through the heart.
    diameter_mm : float, optional
        Diameter of the valve orifice or vessel under the stethoscope.
    age_years : float, optional
    site : str, optional
        Auscultation site (one of ``KNOWN_SITES``).
    states : tuple of str
        High-output and related states (``KNOWN_STATES``).
    """

    hematocrit: float | None = None
    heart_rate_bpm: float | None = None
    cardiac_output_l_min: float | None = None
    stroke_volume_ml: float | None = None
    diameter_mm: float | None = None
    age_years: float | None = None
    site: str | None = None
    states: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        _range("hematocrit", self.hematocrit, 0.0, 0.8,
               "give it as a fraction, e.g. 0.38 for 38 %")
        _range("heart_rate_bpm", self.heart_rate_bpm, 20.0, 300.0, "")
        _range("cardiac_output_l_min", self.cardiac_output_l_min, 0.5, 40.0, "")
        _range("stroke_volume_ml", self.stroke_volume_ml, 5.0, 300.0, "")
        _range("diameter_mm", self.diameter_mm, 0.01, 60.0, "")
        _range("age_years", self.age_years, 0.0, 130.0, "")
        if self.site is not None and self.site not in KNOWN_SITES:
            raise ParameterError(f"site {self.site!r} is not one of {', '.join(KNOWN_SITES)}")
        unknown = [s for s in self.states if s not in KNOWN_STATES]
        if unknown:
            raise ParameterError(f"unknown states {unknown}; known: {', '.join(KNOWN_STATES)}")

    def to_dict(self) -> dict:
        """JSON-ready form, only the fields that were given."""
        return {k: (list(v) if isinstance(v, tuple) else v)
                for k, v in asdict(self).items() if v not in (None, ())}

    @classmethod
    def from_mapping(cls, data: Mapping[str, object]) -> PatientContext:
        """Build from a mapping, ignoring ``None`` values; unknown keys are an error."""
        names = {f.name for f in fields(cls)}
        unknown = set(data) - names
        if unknown:
            raise ParameterError(f"unknown context fields {sorted(unknown)}; "
                                 f"known: {', '.join(sorted(names))}")
        values = {k: v for k, v in data.items() if v is not None}
        if "states" in values:
            values["states"] = tuple(values["states"])  # type: ignore[arg-type]
        return cls(**values)  # type: ignore[arg-type]


def _range(name: str, value: float | None, low: float, high: float, hint: str) -> None:
    if value is None:
        return
    if not isinstance(value, (int, float)) or not low <= float(value) <= high:
        extra = f"; {hint}" if hint else ""
        raise ParameterError(f"{name} = {value!r} is outside {low:g}–{high:g}{extra}")
