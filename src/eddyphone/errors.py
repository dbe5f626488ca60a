"""One exception family whose messages a user can act on.

Every message names the file (when there is one), what is wrong and what to do.
"""

from __future__ import annotations


class EddyphoneError(Exception):
    """Root of every error eddyphone raises on purpose."""


class _SourcedError(EddyphoneError):
    """An error about one input: ``"<source>: <problem>; <remedy>"`` on one line."""

    def __init__(self, source: str | None, problem: str, remedy: str) -> None:
        self.source = source
        self.problem = problem
        self.remedy = remedy
        where = f"{source}: " if source else ""
        super().__init__(f"{where}{problem}; {remedy}")


class InputError(_SourcedError, ValueError):
    """The input (file, array or option) cannot be used as given."""


class QualityError(_SourcedError):
    """The recording is readable but too poor for the requested analysis."""


class ParameterError(EddyphoneError, ValueError):
    """A numeric parameter is outside the range a function accepts."""
