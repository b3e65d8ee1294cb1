"""Integer codes for categorical results, shared by every module.

Arrays of categories are stored as small integers so the physics stays
vectorised; these tuples turn codes into the words written to GeoJSON. The
severity and ice-type words are the trade's (FAA AIM); the order matters:
a larger code is always worse.
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "SEVERITY",
    "SEV_NONE",
    "SEV_TRACE",
    "SEV_LIGHT",
    "SEV_MODERATE",
    "SEV_SEVERE",
    "GAP",
    "ICE_TYPES",
    "ICE_NONE",
    "ICE_RIME",
    "ICE_MIXED",
    "ICE_CLEAR",
    "SLD_CLASSES",
    "SLD_NONE",
    "SLD_DRIZZLE",
    "SLD_RAIN",
    "BASIS",
    "BASIS_NONE",
    "BASIS_MODEL",
    "BASIS_DIAGNOSED",
    "PRECIP_TYPES",
    "severity_code",
    "words",
]

#: Severity words, index = code. ``GAP`` (-1) marks a coverage gap, never "none".
SEVERITY = ("none", "trace", "light", "moderate", "severe")
SEV_NONE, SEV_TRACE, SEV_LIGHT, SEV_MODERATE, SEV_SEVERE = range(5)
GAP = -1

#: Ice type words, index = code.
ICE_TYPES = ("none", "rime", "mixed", "clear")
ICE_NONE, ICE_RIME, ICE_MIXED, ICE_CLEAR = range(4)

#: Supercooled-large-drop classes, index = code (14 CFR 25 Appendix O terms).
SLD_CLASSES = ("none", "freezing-drizzle", "freezing-rain")
SLD_NONE, SLD_DRIZZLE, SLD_RAIN = range(3)

#: Where the cloud liquid came from, index = code.
BASIS = ("none", "model-cloud-water", "diagnosed")
BASIS_NONE, BASIS_MODEL, BASIS_DIAGNOSED = range(3)

#: Surface precipitation type per column (Bourgouin 2000 areas; drizzle from the
#: warm-rain process), index = code. Not ordered by hazard; new types are appended.
PRECIP_TYPES = (
    "none",
    "rain",
    "snow",
    "ice-pellets",
    "freezing-rain",
    "freezing-drizzle",
    "drizzle",
)


def severity_code(word: str) -> int:
    """Return the code of a severity word (``"light"`` -> 2).

    >>> severity_code("moderate")
    3
    """
    try:
        return SEVERITY.index(word)
    except ValueError:
        raise ValueError(
            f"unknown severity {word!r}; expected one of {', '.join(SEVERITY[1:])}"
        ) from None


def words(codes, table, *, gap=None):
    """Map an integer code array onto words from ``table`` (``gap`` for -1).

    >>> words(np.array([0, 2, -1]), SEVERITY, gap="coverage-gap").tolist()
    ['none', 'light', 'coverage-gap']
    """
    codes = np.asarray(codes)
    lookup = np.array(list(table) + [gap], dtype=object)
    return lookup[np.where(codes < 0, len(table), codes)]
