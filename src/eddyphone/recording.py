"""The :class:`Recording` container every stage starts from."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np

#: Internal analysis rate in Hz. Every recording is resampled to it on load:
#: heart sounds and murmurs carry almost all their energy below 1 kHz, so
#: 4 kHz keeps a margin above the highest band analysed (900 Hz) at low cost.
ANALYSIS_FS = 4000.0


@dataclass(frozen=True, eq=False)
class Recording:
    """A mono stethoscope recording at the analysis rate.

    Attributes
    ----------
    x : ndarray of float64
        Samples in full-scale units (±1 is the file's full scale), at ``fs``.
    fs : float
        Sample rate in Hz (``ANALYSIS_FS`` after loading).
    source : str
        Path of the file, or a label such as ``"<array>"``.
    channel : int
        Index of the channel used in the source.
    n_channels : int
        Number of channels the source had.
    original_fs : float
        Sample rate of the source in Hz.
    format, subtype : str
        Container and sample type of the source, e.g. ``"WAV"``, ``"PCM_16"``.
    site, posture, patient : str or None
        Auscultation site, posture and patient identifier where known.
    metadata : mapping
        Any further metadata from options or the sidecar file.
    """

    x: np.ndarray
    fs: float
    source: str = "<array>"
    channel: int = 0
    n_channels: int = 1
    original_fs: float = 0.0
    format: str = "array"
    subtype: str = "float64"
    site: str | None = None
    posture: str | None = None
    patient: str | None = None
    metadata: Mapping[str, object] = field(default_factory=dict)

    @property
    def duration_s(self) -> float:
        """Duration in seconds."""
        return len(self.x) / self.fs

    @property
    def stem(self) -> str:
        """File name without folder and extension, used to name outputs."""
        from pathlib import Path

        return Path(self.source).stem if self.source and not self.source.startswith("<") \
            else "recording"

    def describe(self) -> dict:
        """JSON-ready description without the samples."""
        return {
            "source": self.source,
            "format": self.format,
            "subtype": self.subtype,
            "original_fs_hz": self.original_fs,
            "analysis_fs_hz": self.fs,
            "n_channels": self.n_channels,
            "channel": self.channel,
            "duration_s": round(self.duration_s, 4),
            "site": self.site,
            "posture": self.posture,
            "patient": self.patient,
            "metadata": dict(self.metadata),
        }
