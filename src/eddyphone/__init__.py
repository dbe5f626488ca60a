"""eddyphone: digital stethoscope recordings turned into documented, physically explained findings.

Decision support only, not a diagnosis: findings need confirmation by a
licensed clinician and local protocols.

Main entry points
-----------------
load(path, ...)                          -> Recording
analyze(path_or_recording, context, config) -> Analysis
"""

from __future__ import annotations

from typing import Any

from eddyphone._version import __version__

__all__ = ["__version__", "load", "analyze"]


def __getattr__(name: str) -> Any:  # lazy: keep `import eddyphone` and `--help` fast
    if name == "load":
        from eddyphone.io import load

        return load
    if name == "analyze":
        from eddyphone.pipeline import analyze

        return analyze
    raise AttributeError(f"module 'eddyphone' has no attribute {name!r}")
