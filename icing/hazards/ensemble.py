"""Reduce a member axis of severity codes: fractions of members, a stated statistic, the worst.

Plain functions over integer severity codes shaped ``(member, ...)`` (``icing.codes``:
0 none .. 4 severe, ``codes.GAP`` = -1 where a member has no usable data), so that
route samples, curtain rows and grid cells use the same rules.

- ``member_fraction[word]``: the fraction of members at that severity *or worse*,
  among the members that have data there (a member without data is counted
  nowhere: never as "none"); NaN where no member has data.
- The statistic's word (:class:`MemberStatistic`): the ``q``-quantile of the
  members' words, taken on the safe side: the worst word reached or exceeded by
  at least ``1 - q`` of the members with data (at least one). The default, the
  median, is the worst word at least half of the members reach: with four
  members, two at "moderate" make the median "moderate".
- The worst member's word: the worst word of any member with data.

These are fractions of members, and are called that: an ensemble of a handful of
forecasts is not a calibrated probability.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from icing import codes
from icing.errors import InputError

__all__ = [
    "FRACTION_WORDS",
    "FRACTION_MEANING",
    "MemberStatistic",
    "MemberReduction",
    "members_covering",
    "member_fractions",
    "statistic_severity",
    "worst_member_severity",
    "member_ranking",
    "fraction_band",
    "FRACTION_BAND_LABELS",
    "SHOWN_FRACTION_WORDS",
    "reduce_members",
    "fractions_in_words",
]

#: The words whose "or worse" fractions are reported, mildest first.
FRACTION_WORDS = tuple(codes.SEVERITY[codes.SEV_TRACE :])

#: What ``member_fraction`` means, written into the outputs.
FRACTION_MEANING = (
    "member_fraction[word]: the fraction of the members with data here whose word is that "
    "severity or worse (0.75 at 'moderate': 3 of 4 members put moderate or severe icing "
    "here); a fraction of forecasts, not a calibrated probability; a member without data is "
    "counted nowhere (members_covering says how many have data)"
)


@dataclass(frozen=True)
class MemberStatistic:
    """Which member's word stands for the ensemble in ``severity``.

    ``quantile`` q in [0.5, 1]: the word is the worst one reached or exceeded by
    at least a fraction ``1 - q`` of the members with data (at least one member):
    0.5 is the median, 1 the worst member. Statistics below the median are
    refused: they would let most members' icing go unreported in the word.
    """

    name: str
    """The statistic as the user wrote it: ``"median"``, ``"worst"`` or ``"pNN"``."""
    quantile: float
    """The quantile q of the members' words, 0.5 .. 1."""

    @classmethod
    def parse(cls, text) -> MemberStatistic:
        """Read ``"median"``, ``"worst"`` or ``"pNN"`` (NN from 50 to 100).

        >>> MemberStatistic.parse("p90").quantile
        0.9
        """
        if isinstance(text, MemberStatistic):
            return text
        word = str(text or "median").strip().lower()
        if word == "median":
            return cls("median", 0.5)
        if word in ("worst", "max", "p100"):
            return cls("worst", 1.0)
        m = re.fullmatch(r"p(\d{1,3})", word)
        if m and 50 <= int(m.group(1)) <= 100:
            return cls(word, int(m.group(1)) / 100.0)
        raise InputError(
            f"unknown member statistic {text!r}",
            where="--member-statistic",
            fix="give median, worst, or pNN with NN from 50 to 100 (p90: the word at least "
            "10 %% of the members reach)".replace("%%", "%"),
        )

    def rank(self, covering):
        """1-based rank, in ascending order of the members with data, of the word taken.

        ``min(n, floor(q n) + 1)`` for n members with data: for the median of four,
        the third (so two of four at a word or worse give that word); 0 where n is 0.
        """
        n = np.asarray(covering, dtype=np.int64)
        r = np.minimum(n, np.floor(self.quantile * n + 1e-9).astype(np.int64) + 1)
        return np.where(n > 0, r, 0)

    def describe(self) -> str:
        """Return the statistic in words (written into the outputs)."""
        if self.quantile >= 1.0:
            return "worst member: the worst word of any member with data"
        if self.name == "median":
            return (
                "median member: the worst word reached or exceeded by at least half of the "
                "members with data (with an even count, the worse of the two middle members)"
            )
        share = round(100.0 * (1.0 - self.quantile), 1)
        return (
            f"{self.name}: the worst word reached or exceeded by at least {share:g} % of the "
            "members with data (at least one)"
        )


def members_covering(severity, axis=0):
    """Count the members with data (not ``codes.GAP``) along the member axis."""
    return np.sum(np.asarray(severity) != codes.GAP, axis=axis)


def member_fractions(severity, axis=0) -> dict:
    """Fraction of members at each word or worse, among the members with data.

    Parameters
    ----------
    severity : array_like of int, shape (member, ...)
        Severity codes, ``codes.GAP`` where a member has no data.

    Returns
    -------
    dict
        ``{"trace": f, "light": f, "moderate": f, "severe": f}``, arrays shaped like
        ``severity`` without the member axis; NaN where no member has data.

    Examples
    --------
    >>> f = member_fractions(np.array([[0], [0], [0], [2]]))
    >>> [round(float(f[w][0]), 2) for w in FRACTION_WORDS]
    [0.25, 0.25, 0.0, 0.0]
    """
    sev = np.asarray(severity)
    n = members_covering(sev, axis)
    out = {}
    with np.errstate(invalid="ignore", divide="ignore"):
        for word in FRACTION_WORDS:
            count = np.sum(sev >= codes.severity_code(word), axis=axis)
            out[word] = np.where(n > 0, count / np.maximum(n, 1), np.nan)
    return out


def member_ranking(severity, score=None, axis=0):
    """Member indices in ascending order of (data, severity, score) along the member axis.

    Members without data come first, then the members with data from the mildest
    word up; ``score`` (e.g. the accretion rate) orders members of one word.
    """
    sev = np.moveaxis(np.asarray(severity), axis, 0)
    s = (
        np.zeros(sev.shape)
        if score is None
        else np.nan_to_num(np.moveaxis(np.asarray(score, float), axis, 0), nan=0.0)
    )
    key = np.where(sev == codes.GAP, -1e18, sev * 1e9 + np.clip(s, -1e8, 1e8))
    return np.argsort(key, axis=0, kind="stable")


def _pick(severity, score, statistic, axis):
    """Index of the statistic's member and of the worst member, along the member axis."""
    sev = np.moveaxis(np.asarray(severity), axis, 0)
    m = sev.shape[0]
    order = member_ranking(sev, None if score is None else np.moveaxis(score, axis, 0))
    n = members_covering(sev)
    r = statistic.rank(n)
    at = np.clip(m - n + r - 1, 0, m - 1)
    stat = np.take_along_axis(order, at[None], 0)[0]
    worst = order[-1]
    return stat, worst


def statistic_severity(severity, statistic="median", axis=0):
    """Return the statistic's word along the member axis (``codes.GAP`` where no member has data).

    >>> int(statistic_severity(np.array([0, 0, 3, 3])))
    3
    >>> int(statistic_severity(np.array([0, 0, 0, 3])))
    0
    """
    sev = np.asarray(severity)
    stat, _ = _pick(sev, None, MemberStatistic.parse(statistic), axis)
    picked = np.take_along_axis(np.moveaxis(sev, axis, 0), stat[None], 0)[0]
    return np.where(members_covering(sev, axis) > 0, picked, codes.GAP)


def worst_member_severity(severity, axis=0):
    """Return the worst member's word (``codes.GAP`` where no member has data)."""
    return np.max(np.asarray(severity), axis=axis)


#: Edges of the fraction bands: a segment breaks where a fraction moves into another
#: band. None (0), then quarters, then all (1); our choice, so that with four members
#: every change of one member is a change of band.
_BAND_EDGES = (0.25, 0.5, 0.75)


#: What each band of :func:`fraction_band` holds, in words (legends, polygon labels).
FRACTION_BAND_LABELS = ("none", "up to 1/4", "1/4 - 1/2", "1/2 - 3/4", "over 3/4", "all members")
#: The thresholds whose fractions are drawn and outlined (cross-section panels, grid
#: maps and polygons): the fractions of members at light or worse and at moderate or
#: worse (every word's fraction is in the data outputs).
SHOWN_FRACTION_WORDS = ("light", "moderate")


def fraction_band(fraction):
    """Return the band of a member fraction.

    0 none, 1 (0, 1/4], 2 (1/4, 1/2], 3 (1/2, 3/4], 4 (3/4, 1), 5 all; -1 where
    unknown (NaN).

    >>> fraction_band(np.array([0.0, 0.02, 0.25, 0.3, 0.5, 0.75, 0.9, 1.0, np.nan])).tolist()
    [0, 1, 1, 2, 2, 3, 4, 5, -1]
    """
    f = np.asarray(fraction, float)
    band = 1 + np.searchsorted(np.asarray(_BAND_EDGES), f, side="left")
    band = np.where(f <= 0.0, 0, np.where(f >= 1.0, 5, band))
    return np.where(np.isfinite(f), band, -1)


@dataclass(frozen=True)
class MemberReduction:
    """A member axis reduced: the statistic's word, the worst member's, the fractions."""

    members: int
    """Number of members."""
    statistic: MemberStatistic
    """The statistic whose word is ``severity``."""
    severity: np.ndarray
    """The statistic's word (codes; ``codes.GAP`` where no member has data)."""
    severity_worst_member: np.ndarray
    """The worst member's word (codes; ``codes.GAP`` where no member has data)."""
    member_fraction: dict
    """``{word: fraction}`` of members at that word or worse (NaN where none has data)."""
    members_covering: np.ndarray
    """Number of members with data."""
    statistic_member: np.ndarray
    """Index of the member whose word and values stand for the statistic."""
    worst_member: np.ndarray
    """Index of the worst member (severity, then score)."""


def reduce_members(severity, statistic="median", *, score=None, axis=0) -> MemberReduction:
    """Reduce a member axis of severity codes (see the module docstring).

    Parameters
    ----------
    severity : array_like of int, shape (member, ...)
        Severity codes per member (``codes.GAP`` where a member has no data).
    statistic : str or MemberStatistic
        ``"median"`` (default), ``"worst"`` or ``"pNN"``.
    score : array_like, optional
        Orders members of the same word (e.g. the accretion rate): the statistic's
        member is the one at its rank in (word, score) order.
    axis : int
        The member axis.

    Returns
    -------
    MemberReduction
        Arrays shaped like ``severity`` without the member axis.

    Examples
    --------
    Four members, one icing lightly: the median is "none", the worst "light", and
    a quarter of the members are at trace or worse and at light or worse.

    >>> r = reduce_members(np.array([0, 0, 2, 0]))
    >>> int(r.severity), int(r.severity_worst_member), float(r.member_fraction["light"])
    (0, 2, 0.25)
    """
    statistic = MemberStatistic.parse(statistic)
    sev = np.moveaxis(np.asarray(severity), axis, 0)
    sc = None if score is None else np.moveaxis(np.asarray(score, float), axis, 0)
    stat, worst = _pick(sev, sc, statistic, 0)
    n = members_covering(sev)
    picked = np.take_along_axis(sev, stat[None], 0)[0]
    return MemberReduction(
        members=int(sev.shape[0]),
        statistic=statistic,
        severity=np.where(n > 0, picked, codes.GAP),
        severity_worst_member=worst_member_severity(sev),
        member_fraction=member_fractions(sev),
        members_covering=n,
        statistic_member=stat,
        worst_member=worst,
    )


def fractions_in_words(fractions: dict, members: int) -> str:
    """Plain words for member fractions: "3 of 4 members put moderate or worse".

    The most severe word any member reaches is named, then the milder ones with
    more members.

    >>> fractions_in_words({"trace": 0.75, "light": 0.75, "moderate": 0.25, "severe": 0.0}, 4)
    '1 of 4 members put moderate or worse; 3 of 4 light or worse'
    """
    parts = []
    last = None
    for word in reversed(FRACTION_WORDS):
        f = fractions.get(word)
        if f is None or not np.isfinite(f) or f <= 0:
            continue
        count = int(round(f * members))
        if count == last:
            continue
        last = count
        lead = "members put " if not parts else ""
        parts.append(f"{count} of {members} {lead}{word} or worse")
    return "; ".join(parts) if parts else f"no member of {members} puts icing here"
