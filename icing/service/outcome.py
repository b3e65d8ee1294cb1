"""Each route's outcome against a ``fail_on`` level, failing closed (contracts, 5).

Kept apart on purpose: the route summaries of the library will carry their own
``outcome`` and ``outcome_reason``; once they do, :func:`add_outcomes` keeps
theirs and this module can be replaced by a call to the library.

A route *meets* the condition when it reaches the level anywhere, and also when
any part of it could not be screened (a coverage gap, or the whole route outside
the forecast): unknown is never "below the threshold". With ``accept_gaps`` a
route with gaps that does not reach the level is ``"incomplete"`` instead.
Without a level nothing can be met: a route with gaps is ``"incomplete"``, one
without is ``"not-met"``.

Examples
--------
>>> route_outcome({"worst_severity": "light", "gap_km": 0.0}, "moderate")
('not-met', 'worst severity light is below moderate on the whole route')
>>> route_outcome({"worst_severity": "light", "gap_km": 12.5}, "moderate")[0]
'met'
>>> route_outcome({"worst_severity": "light", "gap_km": 12.5}, "moderate", accept_gaps=True)[0]
'incomplete'
"""

from __future__ import annotations

from icing import codes

__all__ = ["OUTCOMES", "add_outcomes", "route_outcome"]

#: The words of a route's outcome.
OUTCOMES = ("met", "not-met", "incomplete")


def _gaps(summary: dict) -> str | None:
    """Why part of the route is unknown, or None when it was screened whole."""
    worst = summary.get("worst_severity")
    gap_km = summary.get("gap_km") or 0.0
    gap_count = summary.get("gap_count") or 0
    gap_minutes = summary.get("gap_minutes") or 0.0
    if worst is None:
        return "the route could not be screened (no forecast coverage)"
    if gap_km > 0 or gap_count > 0 or gap_minutes > 0:
        return f"{gap_km:g} km of the route are coverage gaps (icing unknown there)"
    return None


def route_outcome(summary: dict, fail_on: str | None, *, accept_gaps: bool = False):
    """Return ``(outcome, reason)`` of one route summary.

    Parameters
    ----------
    summary : dict
        A route summary (``worst_severity``, ``gap_km``, ``gap_count``, ``gap_minutes``).
    fail_on : str or None
        Severity word (``"trace"`` ... ``"severe"``) or None.
    accept_gaps : bool
        Coverage gaps do not meet the condition (the caller screens them otherwise).

    Returns
    -------
    tuple of str
        One of :data:`OUTCOMES` and a one-line reason.
    """
    gaps = _gaps(summary)
    worst = summary.get("worst_severity")
    if fail_on is None:
        if gaps:
            return "incomplete", f"no fail_on level given; {gaps}"
        return "not-met", "no fail_on level given; the route was screened whole"
    level = codes.severity_code(fail_on)
    if worst is not None and codes.severity_code(worst) >= level:
        return "met", f"worst severity {worst} reaches {fail_on}"
    if gaps and not accept_gaps:
        return "met", f"{gaps}; unknown is never below {fail_on} (accept_gaps not set)"
    if gaps:
        shown = "none" if worst is None else worst
        return "incomplete", f"worst severity where screened {shown}; {gaps}; gaps accepted"
    return "not-met", f"worst severity {worst} is below {fail_on} on the whole route"


def add_outcomes(summaries, fail_on, *, accept_gaps=False) -> dict:
    """Set ``outcome`` and ``outcome_reason`` on each summary; return the overall verdict.

    Summaries that already carry an ``outcome`` (computed by the library) keep it.
    The verdict is ``"met"`` when any route met the condition, else
    ``"incomplete"`` when any route is incomplete, else ``"not-met"``.
    """
    for s in summaries:
        if "outcome" not in s:
            s["outcome"], s["outcome_reason"] = route_outcome(s, fail_on, accept_gaps=accept_gaps)
    words = [s["outcome"] for s in summaries]
    verdict = next((w for w in OUTCOMES if w in words and w != "not-met"), "not-met")
    return {
        "fail_on": fail_on,
        "accept_gaps": bool(accept_gaps),
        "result": verdict,
        "routes_met": [s.get("route") for s in summaries if s["outcome"] == "met"],
    }
