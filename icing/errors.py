"""One exception hierarchy for the whole package.

Every error caused by the user's input subclasses :class:`ValueError` so that
library callers can catch it generically, and carries the file, the place in
the file and the likely fix, so that the CLI can print one actionable line.

>>> err = RouteError("altitude missing", path="plan.csv", where="line 4", fix="add altitude_ft")
>>> str(err)
'plan.csv: line 4: altitude missing (fix: add altitude_ft)'
"""

from __future__ import annotations

import os
import sys
import warnings

__all__ = [
    "warn_plausibility",
    "IcingError",
    "InputError",
    "RouteError",
    "ForecastError",
    "AirframeError",
    "IcingWarning",
    "PlausibilityWarning",
]


class IcingError(Exception):
    """Base class of every error raised on purpose by ``icing``."""


class InputError(IcingError, ValueError):
    """Input that cannot be used; names the file, the place and the fix.

    Parameters
    ----------
    message : str
        What was expected and what was given.
    path : str, optional
        The file the input came from.
    where : str, optional
        The place in the file (line, feature index, variable, key).
    fix : str, optional
        The most likely fix, phrased as an instruction.
    """

    def __init__(self, message: str, *, path=None, where=None, fix=None):
        self.message = message
        self.path = None if path is None else str(path)
        self.where = where
        self.fix = fix
        super().__init__(self.one_line())

    def one_line(self) -> str:
        """Return the message as a single line: ``file: place: message (fix: ...)``."""
        parts = [p for p in (self.path, self.where) if p]
        text = ": ".join(parts + [self.message])
        if self.fix:
            text += f" (fix: {self.fix})"
        return " ".join(text.split())


class RouteError(InputError):
    """A route file or route argument cannot be used."""


class ForecastError(InputError):
    """A forecast file cannot be used."""


class AirframeError(InputError):
    """An airframe preset name or airframe file cannot be used."""


class IcingWarning(UserWarning):
    """Base class of warnings issued by ``icing``."""


class PlausibilityWarning(IcingWarning):
    """A value is allowed but implausible (e.g. LWC above the 14 CFR 25 App. C maxima)."""


def warn_plausibility(message):
    """Warn with :class:`PlausibilityWarning` at the first caller outside ``icing``."""
    package = os.path.dirname(os.path.abspath(__file__)) + os.sep
    frame, level = sys._getframe(1), 2
    while frame is not None and os.path.abspath(frame.f_code.co_filename).startswith(package):
        frame, level = frame.f_back, level + 1
    warnings.warn(message, PlausibilityWarning, stacklevel=level)
