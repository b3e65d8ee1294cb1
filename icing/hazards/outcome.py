"""The outcome of a route against a stated condition, failing closed.

A dispatcher states a condition (``--fail-on LEVEL``, ``--fail-on-tolerance``,
``--fail-on-gap``); each route then has one outcome:

``"met"``
    the condition is met somewhere on the route, or a part of the route could
    not be screened (a coverage gap) and gaps were not accepted: what is not
    known is never taken as clear;
``"not-met"``
    the whole route was screened and the condition is met nowhere;
``"incomplete"``
    the condition is met nowhere on the screened part, some of the route
    could not be screened, and gaps were accepted (``--accept-gaps``).

With no condition stated the outcome is None and the reason says what was found.

Ensembles and spreads (a summary with ``members``): ``--fail-on LEVEL`` applies to
the stated statistic's word (by default the median member's: met where at least
half of the members reach LEVEL at the same place); with ``fail_on_fraction`` F
it applies to the members instead: met when at least a fraction F of the members
reach LEVEL somewhere on the route (the route's ``member_fraction``, which is
never smaller than any one place's). A stretch where any member has no data is a
coverage gap for the condition (``member_gap_km``), as a gap of a single forecast.
"""

from __future__ import annotations

from dataclasses import dataclass

from icing import codes

__all__ = ["OUTCOMES", "Condition", "route_outcome"]

#: The outcome words, in the order a script would test them.
OUTCOMES = ("met", "not-met", "incomplete")


@dataclass(frozen=True)
class Condition:
    """What makes a route's outcome "met" (the CLI's ``--fail-on`` family)."""

    fail_on: str | None = None
    """Severity word: the condition is met where icing reaches it (or worse)."""
    fail_on_tolerance: bool = False
    """Met where the ice on the reference collector reaches the airframe's tolerance."""
    fail_on_gap: bool = False
    """Met by any coverage gap, even with ``accept_gaps``."""
    accept_gaps: bool = False
    """Coverage gaps do not meet the condition (the outcome is then "incomplete")."""
    fail_on_fraction: float | None = None
    """Ensembles: met when at least this fraction of the members reach ``fail_on``
    somewhere on the route (instead of the statistic's word). (0, 1]."""

    def __post_init__(self):
        if self.fail_on is not None:
            codes.severity_code(self.fail_on)  # raises on an unknown word
        if self.fail_on_fraction is not None:
            from icing.errors import InputError

            f = self.fail_on_fraction
            if self.fail_on is None or not (0.0 < f <= 1.0):
                raise InputError(
                    f"fail_on_fraction {f!r} needs a severity and a fraction in (0, 1]",
                    where="--fail-on-fraction",
                    fix="give --fail-on LEVEL with --fail-on-fraction F, F in (0, 1], e.g. 0.25",
                )

    @property
    def stated(self) -> bool:
        """Whether any condition was stated."""
        return bool(self.fail_on or self.fail_on_tolerance or self.fail_on_gap)

    def describe(self) -> str | None:
        """Return the condition in words (None when none was stated)."""
        if not self.stated:
            return None
        parts = []
        if self.fail_on and self.fail_on_fraction is not None:
            parts.append(
                f"{self.fail_on} icing or worse in at least {self.fail_on_fraction:g} of the "
                "members (ensembles; a single forecast is one member)"
            )
        elif self.fail_on:
            parts.append(f"{self.fail_on} icing or worse")
        if self.fail_on_tolerance:
            parts.append("ice tolerance reached")
        if self.fail_on_gap:
            parts.append("any coverage gap")
        gaps = "gaps accepted" if self.accept_gaps and not self.fail_on_gap else "gaps count"
        return " or ".join(parts) + f" ({gaps})"


def _gap_text(summary) -> str | None:
    km, minutes = summary.get("gap_km") or 0.0, summary.get("gap_minutes") or 0.0
    if summary.get("worst_severity_rank") is None:
        return "no part of the route could be screened (no forecast coverage)"
    member_km = summary.get("member_gap_km") or 0.0
    if member_km > km:  # a gap of one member is a gap
        member_min = summary.get("member_gap_minutes") or 0.0
        return (
            f"{member_km:g} km ({member_min:g} min) where at least one member has no data "
            f"(coverage gap; {km:g} km where no member has)"
        )
    if km > 0 or minutes > 0:
        return f"{km:g} km ({minutes:g} min) could not be screened (coverage gap)"
    return None


def _fraction_reason(summary, condition):
    """Ensembles with ``fail_on_fraction``: the members reaching the level on the route."""
    fractions = summary.get("member_fraction") or {}
    f = fractions.get(condition.fail_on)
    if f is None or f < condition.fail_on_fraction - 1e-9:
        return None
    return (
        f"{f:g} of the members reach {condition.fail_on} icing or worse on the route "
        f"(condition: {condition.fail_on} in at least {condition.fail_on_fraction:g} of them)"
    )


def _met_reasons(summary, condition):
    reasons = []
    rank = summary.get("worst_severity_rank")
    if condition.fail_on_fraction is not None and "members" in summary:
        fraction = _fraction_reason(summary, condition)
        reasons += [fraction] if fraction else []
    elif condition.fail_on and rank is not None and rank >= codes.severity_code(condition.fail_on):
        by = summary.get("minutes_by_severity") or {}
        at_least = sum(
            v
            for k, v in by.items()
            if codes.severity_code(k) >= codes.severity_code(condition.fail_on)
        )
        stat = summary.get("member_statistic")
        whose = f" ({stat} of {summary['members']} members)" if stat else ""
        reasons.append(
            f"{summary['worst_severity']} icing{whose} (condition: {condition.fail_on} or "
            f"worse) for {at_least:g} min"
        )
    if condition.fail_on_tolerance and summary.get("tolerance_reached"):
        reasons.append(
            f"ice tolerance of {summary.get('ice_tolerance_mm'):g} mm reached after "
            f"{summary.get('minutes_to_ice_tolerance'):g} min "
            f"({summary.get('accretion_mm'):g} mm on the {summary.get('reference_collector')})"
        )
    return reasons


def route_outcome(summary: dict, condition: Condition | None) -> tuple[str | None, str]:
    """Return ``(outcome, reason)`` of one route summary against a condition.

    Parameters
    ----------
    summary : dict
        A route summary (:func:`icing.hazards.segments.route_summary`).
    condition : Condition or None

    Returns
    -------
    (str or None, str)
        One of :data:`OUTCOMES` (None without a condition) and a plain-language reason.

    Examples
    --------
    >>> s = {"worst_severity": None, "worst_severity_rank": None, "gap_km": 12.0}
    >>> route_outcome(s, Condition(fail_on="light"))[0]
    'met'
    >>> route_outcome(s, Condition(fail_on="light", accept_gaps=True))[0]
    'incomplete'
    """
    condition = condition or Condition()
    gap = _gap_text(summary)
    if not condition.stated:
        worst = summary.get("worst_severity")
        found = "worst icing unknown" if worst is None else f"worst icing {worst}"
        return None, f"no condition stated; {found}" + (f"; {gap}" if gap else "")
    reasons = _met_reasons(summary, condition)
    if gap and (condition.fail_on_gap or not condition.accept_gaps):
        fix = "" if condition.fail_on_gap else "; --accept-gaps to accept gaps"
        reasons.append(f"{gap}: counts as meeting the condition{fix}")
    if reasons:
        return "met", "; ".join(reasons)
    if gap:
        return "incomplete", f"condition not met on the screened part; {gap} (gaps accepted)"
    worst = summary.get("worst_severity")
    if summary.get("member_statistic"):
        worst = (
            f"{worst} by the {summary['member_statistic']} of {summary.get('members')} "
            f"members; worst member {summary.get('severity_worst_member')}"
        )
    return "not-met", f"condition not met anywhere on the route (worst icing {worst})"
