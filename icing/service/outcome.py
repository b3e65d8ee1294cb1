"""The verdict of a screening request over its routes (contracts, 5).

Each route's ``outcome`` and ``outcome_reason`` come from the library
(:func:`icing.hazards.outcome.route_outcome`, failing closed on coverage gaps);
this module only sums them up for the response's ``outcome`` member.

Examples
--------
>>> verdict([{"route": "a", "outcome": "not-met"}, {"route": "b", "outcome": "met"}],
...         fail_on="severe")["result"]
'met'
"""

from __future__ import annotations

from icing.hazards.outcome import OUTCOMES

__all__ = ["verdict"]


def verdict(summaries, *, fail_on=None, accept_gaps=False) -> dict:
    """Return the request's verdict over its routes' outcomes.

    "met" when any route met the condition, else "incomplete" when any route is
    incomplete, else "not-met"; None without a ``fail_on`` level.
    """
    words = [s.get("outcome") for s in summaries]
    if fail_on is None:
        result = None
    else:
        result = next((w for w in OUTCOMES if w in words and w != "not-met"), "not-met")
    return {
        "fail_on": fail_on,
        "accept_gaps": bool(accept_gaps),
        "result": result,
        "routes_met": [s.get("route") for s in summaries if s.get("outcome") == "met"],
    }
