"""An ensemble's band products: the member axis of every grid cell reduced.

A grid run over an ensemble (or a parametric spread) computes every member's band
products (:func:`icing.hazards.bands.band_products`) over the members' columns
folded into one column axis, member-major (column ``j * m + i`` is member ``j`` at
cell ``i``). :func:`reduce_band_members` unfolds the member axis and reduces it
with the route's rules (:mod:`icing.hazards.ensemble`):

- ``severity``: the stated statistic's word (default the median member), among the
  members with data in the band; ``severity_worst_member`` the worst member's;
- ``member_fraction_<word>``: the fraction of the members with data whose word is
  that severity or worse (NaN where no member has data), and ``members_covering``,
  how many members have data (a member without data is counted nowhere);
- ``sld``, ``lwc``, ``mvd`` and ``accretion_rate``: the statistic's member's (as the
  physics fields of an ensemble's route segments);
- ``coverage``: ``complete`` when every member covers the whole band above its
  ground, ``partial`` when some member lacks part or all of it while another has
  data (``members_covering`` says how many have), ``gap`` when no member has data,
  ``below-ground`` when the band is under every member's ground.

A cell no member covers is a gap (``codes.GAP``, NaN fractions), never "none".
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import numpy as np

from icing import codes
from icing.hazards.bands import (
    COVERAGE_BELOW_GROUND,
    COVERAGE_COMPLETE,
    COVERAGE_GAP,
    COVERAGE_PARTIAL,
    PRODUCT_DTYPES,
    BandProducts,
)
from icing.hazards.ensemble import FRACTION_WORDS, reduce_members

__all__ = [
    "MemberBandProducts",
    "MEMBER_PRODUCT_DTYPES",
    "MEMBER_FILL",
    "reduce_band_members",
    "fraction_key",
]


def fraction_key(word) -> str:
    """Name of the product holding the fraction of members at ``word`` or worse.

    >>> fraction_key("moderate")
    'member_fraction_moderate'
    """
    return f"member_fraction_{word}"


#: The products an ensemble adds to a single forecast's, and their types.
MEMBER_PRODUCT_DTYPES = {
    "severity_worst_member": np.int8,
    "members_covering": np.int16,
    **{fraction_key(w): np.float32 for w in FRACTION_WORDS},
}
#: What a cell holds before any block has been written (no member has data).
MEMBER_FILL = {
    "severity_worst_member": codes.GAP,
    "members_covering": 0,
    **{fraction_key(w): np.nan for w in FRACTION_WORDS},
}


@dataclass(frozen=True)
class MemberBandProducts(BandProducts):
    """The band products of an ensemble's cells; arrays (band, column) as BandProducts.

    The inherited products are the ensemble's: ``severity`` is the statistic's word
    among the members with data (``codes.GAP`` where none has); ``sld``, ``lwc``,
    ``mvd`` and ``accretion_rate`` are the statistic's member's; ``coverage`` is over
    the members (see the module docstring).
    """

    severity_worst_member: np.ndarray
    """int8 worst member's word; ``codes.GAP`` where no member has data."""
    members_covering: np.ndarray
    """int16 number of members with data in the band."""
    member_fraction_trace: np.ndarray
    """float32 fraction of the members with data at trace or worse (NaN where none has)."""
    member_fraction_light: np.ndarray
    """float32 the same at light or worse."""
    member_fraction_moderate: np.ndarray
    """float32 the same at moderate or worse."""
    member_fraction_severe: np.ndarray
    """float32 the same at severe."""

    def arrays(self) -> dict:
        """Every product by name (the grid's stores are filled from it)."""
        return {f.name: getattr(self, f.name) for f in fields(self)}


def _coverage(per_member, covering):
    """Coverage of each cell over its members' coverage codes (band, member, m)."""
    below = (per_member == COVERAGE_BELOW_GROUND).all(axis=1)
    complete = (per_member == COVERAGE_COMPLETE).all(axis=1)
    out = np.where(complete, COVERAGE_COMPLETE, COVERAGE_PARTIAL)
    out = np.where(covering == 0, COVERAGE_GAP, out)
    return np.where(below, COVERAGE_BELOW_GROUND, out).astype(np.int8)


def reduce_band_members(products, members: int, statistic="median") -> MemberBandProducts:
    """Reduce the member axis of band products computed over folded member columns.

    Parameters
    ----------
    products : BandProducts
        Arrays (band, members x m), member-major.
    members : int
        Number of members.
    statistic : str or MemberStatistic
        ``"median"`` (default), ``"worst"`` or ``"pNN"``.

    Returns
    -------
    MemberBandProducts
        Arrays (band, m).

    Examples
    --------
    Four members at one cell, one icing lightly: the median says none, a quarter of
    the members are at light or worse.

    >>> from icing.hazards.bands import BandProducts
    >>> sev = np.array([[0, 0, 2, 0]], np.int8)
    >>> z = np.zeros((1, 4), np.float32)
    >>> p = BandProducts(sev, sev * 0, sev * 0, z, z, z)
    >>> r = reduce_band_members(p, 4)
    >>> int(r.severity[0, 0]), int(r.severity_worst_member[0, 0])
    (0, 2)
    >>> float(r.member_fraction_light[0, 0]), int(r.members_covering[0, 0])
    (0.25, 4)
    """
    nb = products.severity.shape[0]

    def unfold(a):
        return np.asarray(a).reshape(nb, members, -1)  # (band, member, m)

    red = reduce_members(
        unfold(products.severity), statistic, score=unfold(products.accretion_rate), axis=1
    )
    pick = red.statistic_member[:, None, :]
    gap = red.members_covering == 0

    def picked(name, fill):
        a = np.take_along_axis(unfold(getattr(products, name)), pick, axis=1)[:, 0]
        return np.where(gap, fill, a).astype(PRODUCT_DTYPES[name])

    out = {
        "severity": red.severity.astype(np.int8),
        "sld": picked("sld", codes.GAP),
        "coverage": _coverage(unfold(products.coverage), red.members_covering),
        "lwc": picked("lwc", np.nan),
        "mvd": picked("mvd", np.nan),
        "accretion_rate": picked("accretion_rate", np.nan),
        "severity_worst_member": red.severity_worst_member.astype(np.int8),
        "members_covering": red.members_covering.astype(np.int16),
    }
    for word in FRACTION_WORDS:
        out[fraction_key(word)] = red.member_fraction[word].astype(np.float32)
    return MemberBandProducts(**out)
