"""Reducing a member axis (icing.hazards.ensemble) and the outcome of an ensemble.

The member arrays are invented severity codes of our own (codes: 0 none .. 4 severe,
-1 a member without data); the expected fractions are counts of those members, so
every check here is arithmetic on the definition (docs/contracts.md, section 8), not
a physics value.
"""

from __future__ import annotations

import numpy as np
import pytest

from icing import codes
from icing.errors import InputError
from icing.hazards.ensemble import (
    FRACTION_WORDS,
    MemberStatistic,
    fraction_band,
    fractions_in_words,
    member_fractions,
    members_covering,
    reduce_members,
    statistic_severity,
    worst_member_severity,
)
from icing.hazards.outcome import Condition, route_outcome

GAP = codes.GAP


def test_one_member_of_four_icing_gives_a_quarter_at_each_level_it_reaches():
    # (member, level): member 2 ices light at level 1 and moderate at level 2
    sev = np.array([[0, 0, 0], [0, 0, 0], [0, 2, 3], [0, 0, 0]])
    f = member_fractions(sev)
    assert f["trace"].tolist() == [0.0, 0.25, 0.25]
    assert f["light"].tolist() == [0.0, 0.25, 0.25]
    assert f["moderate"].tolist() == [0.0, 0.0, 0.25]
    assert f["severe"].tolist() == [0.0, 0.0, 0.0]
    r = reduce_members(sev)
    assert r.severity.tolist() == [0, 0, 0]  # the median member: none
    assert r.severity_worst_member.tolist() == [0, 2, 3]
    assert r.members == 4 and r.members_covering.tolist() == [4, 4, 4]


@pytest.mark.parametrize(
    "words, median",
    [
        ([0, 0, 3, 3], 3),  # two of four reach moderate: at least half do
        ([0, 0, 0, 3], 0),  # one of four: fewer than half
        ([0, 1, 3], 1),  # odd count: the middle member
        ([4, 4, 4, 0, 0], 4),  # three of five
        ([2], 2),  # one member is its own median
    ],
)
def test_median_is_the_worst_word_at_least_half_of_the_members_reach(words, median):
    assert int(statistic_severity(np.array(words))) == median
    f = member_fractions(np.array(words))
    # the statistic reaches a word exactly where at least half the members do
    for w in FRACTION_WORDS:
        assert (median >= codes.severity_code(w)) == bool(f[w] >= 0.5)


def test_other_statistics():
    sev = np.array([0] * 8 + [2, 4])  # ten members, two icing
    assert int(statistic_severity(sev, "worst")) == 4
    assert int(statistic_severity(sev, "p90")) == 4  # at least 10 %: one member of ten
    assert int(statistic_severity(sev, "p80")) == 2  # 20 %: both icing members reach light
    assert int(statistic_severity(sev, "p70")) == 0  # 30 % would need a third
    assert MemberStatistic.parse("p100").name == "worst"
    assert "half" in MemberStatistic.parse("median").describe()


@pytest.mark.parametrize("text", ["p30", "mean", "p101", "best", ""])
def test_statistics_below_the_median_or_unknown_are_refused(text):
    if text == "":  # nothing given: the default
        assert MemberStatistic.parse(text).name == "median"
        return
    with pytest.raises(InputError) as err:
        MemberStatistic.parse(text)
    assert err.value.where == "--member-statistic" and "median" in err.value.fix


def test_a_member_without_data_is_counted_nowhere():
    # member 3 has no data at levels 0 and 1; nobody has data at level 2
    sev = np.array([[0, 2, GAP], [0, 0, GAP], [0, 0, GAP], [GAP, GAP, GAP]])
    assert members_covering(sev).tolist() == [3, 3, 0]
    f = member_fractions(sev)
    assert f["light"][1] == pytest.approx(1 / 3)  # one of the three with data
    assert np.isnan(f["trace"][2])  # unknown, never 0
    r = reduce_members(sev)
    assert r.severity.tolist() == [0, 0, GAP]
    assert r.severity_worst_member.tolist() == [0, 2, GAP]


def test_the_statistics_member_is_picked_by_word_then_score():
    sev = np.array([1, 1, 1, 0])
    score = np.array([0.1, 0.9, 0.5, 0.0])
    r = reduce_members(sev, score=score)
    # ascending (word, score): member 3, 0, 2, 1; the median of four is the third
    assert int(r.statistic_member) == 2 and int(r.worst_member) == 1


def test_member_axis_may_be_anywhere():
    sev = np.array([[0, 0, 2, 0], [1, 1, 1, 1]])  # (sample, member)
    r = reduce_members(sev, axis=-1)
    assert r.member_fraction["light"].tolist() == [0.25, 0.0]
    assert r.severity_worst_member.tolist() == [2, 1]


def test_fraction_bands_and_words():
    assert fraction_band(np.array([0.0, 0.25, 0.26, 1.0, np.nan])).tolist() == [0, 1, 2, 5, -1]
    text = fractions_in_words({"trace": 1.0, "light": 0.5, "moderate": 0.5, "severe": 0.0}, 4)
    assert text == "2 of 4 members put moderate or worse; 4 of 4 trace or worse"
    assert "no member" in fractions_in_words(dict.fromkeys(FRACTION_WORDS, 0.0), 4)


# --------------------------------------------------------------------------- outcome


def _summary(**kw):
    base = {
        "worst_severity": "none",
        "worst_severity_rank": 0,
        "minutes_by_severity": {"trace": 0, "light": 0, "moderate": 0, "severe": 0},
        "gap_km": 0.0,
        "gap_minutes": 0.0,
        "members": 4,
        "member_statistic": "median",
        "member_fraction": {"trace": 0.25, "light": 0.25, "moderate": 0.25, "severe": 0.0},
        "severity_worst_member": "moderate",
        "member_gap_km": 0.0,
        "member_gap_minutes": 0.0,
    }
    return {**base, **kw}


def test_fail_on_applies_to_the_statistics_word_by_default():
    outcome, reason = route_outcome(_summary(), Condition(fail_on="light"))
    assert outcome == "not-met" and "worst member moderate" in reason


def test_fail_on_fraction_applies_to_the_members():
    cond = Condition(fail_on="moderate", fail_on_fraction=0.25)
    outcome, reason = route_outcome(_summary(), cond)
    assert outcome == "met" and "0.25 of the members" in reason
    outcome, _ = route_outcome(_summary(), Condition(fail_on="moderate", fail_on_fraction=0.5))
    assert outcome == "not-met"
    assert "at least 0.25 of the members" in cond.describe()


def test_a_gap_in_any_member_is_a_gap():
    s = _summary(member_gap_km=40.0, member_gap_minutes=6.0)
    outcome, reason = route_outcome(s, Condition(fail_on="severe"))
    assert outcome == "met" and "at least one member has no data" in reason
    outcome, _ = route_outcome(s, Condition(fail_on="severe", accept_gaps=True))
    assert outcome == "incomplete"


@pytest.mark.parametrize("fraction, fail_on", [(0.0, "light"), (1.5, "light"), (0.5, None)])
def test_bad_fail_on_fraction_is_refused(fraction, fail_on):
    with pytest.raises(InputError) as err:
        Condition(fail_on=fail_on, fail_on_fraction=fraction)
    assert err.value.where == "--fail-on-fraction"


def test_worst_member_severity_is_the_maximum():
    assert worst_member_severity(np.array([GAP, 0, 3])).item() == 3
