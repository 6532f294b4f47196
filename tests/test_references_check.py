"""The checker on games with published or derived answers (see ../shared/references.md)."""

from __future__ import annotations

from fractions import Fraction

from pactlang.check import check_model
from pactlang.load import load_text


def results(text: str):
    return check_model(load_text(text).model)


THREE = """agreement "three partners"
shares value
party a
party b
party c
worth S = if count(S) >= 2 then 1 else 0
payout by equal split
require stable within 0.3333
require stable within 0.33334
require stable
"""


def test_three_party_equal_split_is_stable_within_one_third_and_no_less():
    # Three parties, any two earn 1: least-core value 1/3 at (1/3, 1/3, 1/3)
    # [practice; also a standard textbook example].
    low, high, core = results(THREE)
    assert low.status == "fails" and high.status == "holds" and core.status == "fails"
    assert low.worst_excess == high.worst_excess == Fraction(1, 3)
    assert {c.coalition for c in low.counterexamples} == {("a", "b"), ("a", "c"), ("b", "c")}


def test_glove_market_core_point_holds_and_a_nearby_split_fails():
    # Glove market: core = {(0, 0, 1)} [derived in references.md from the
    # Shapley-value encyclopedia example].
    text = """agreement "gloves"
shares value
party right1: right 1, left 0
party right2: right 1, left 0
party left1: right 0, left 1
worth S = min(sum(right in S), sum(left in S))
payout right1 = 0
payout right2 = 0
payout left1 = 1
require stable
"""
    (core,) = results(text)
    assert core.status == "holds" and core.worst_excess == 0
    moved = text.replace("payout right1 = 0\npayout right2 = 0\npayout left1 = 1",
                         "payout right1 = 0.1\npayout right2 = 0.1\npayout left1 = 0.8")
    (off,) = results(moved)
    # {right_k, left1} is worth 1 and gets 0.9: excess 0.1 [derived]
    assert off.status == "fails" and off.worst_excess == Fraction(1, 10)
    assert {c.coalition for c in off.counterexamples} == {("right1", "left1"), ("right2", "left1")}


def test_four_party_game_core_point():
    # Myerson (1991) ch. 9 four-party game [memory]: core = nucleolus = (0, 1, 1, 0).
    text = """agreement "four"
shares value
party p1
party p2
party p3
party p4
worth {p1, p2} = 1
worth {p1, p3} = 1
worth {p2, p4} = 1
worth {p3, p4} = 1
worth {p1, p2, p3} = 2
worth all = 2
worth otherwise = 0
payout p1 = 0
payout p2 = 1
payout p3 = 1
payout p4 = 0
require stable
"""
    text = text.replace("worth otherwise = 0", "worth {p1, p2, p4} = 1\nworth {p1, p3, p4} = 1\n"
                        "worth {p2, p3, p4} = 1\nworth otherwise = 0")
    (core,) = results(text)
    assert core.status == "holds"
    # {p1, p2, p3} is worth 2 and receives 2 [derived]
    assert core.worst_excess == 0


def test_runway_shapley_split_is_in_the_core():
    # Littlechild & Owen (1973) [read]: needs 8, 11, 13, 18 -> Shapley (2, 3, 4, 9).
    # Runway games are concave, so the Shapley value is in the core [practice];
    # the worst coalition is {b, c, d}: pays 16, alone 18 -> excess -2 [derived].
    text = """agreement "runway"
shares cost
party a: need 8
party b: need 11
party c: need 13
party d: need 18
worth S = max(need in S)
payout a = 2
payout b = 3
payout c = 4
payout d = 9
require stable
require individually rational
"""
    core, rational = results(text)
    assert core.status == "holds" and core.worst_excess == -2
    assert core.worst_coalition == ("b", "c", "d")
    assert rational.status == "holds" and rational.worst_excess == -6  # a: pays 2, alone 8


def test_bankruptcy_nucleolus_at_estate_200_is_stable():
    # Aumann & Maschler (1985) [read]: claims 100, 200, 300, estate 200 ->
    # nucleolus (50, 75, 75). v(S) = max(0, E - claims outside S); bankruptcy
    # games are convex, so the nucleolus lies in the core [practice].
    text = """agreement "estate"
shares value
party c1: claim 100
party c2: claim 200
party c3: claim 300
param estate = 200
worth S = max(0, estate - (600 - sum(claim in S)))
payout c1 = 50
payout c2 = 75
payout c3 = 75
require stable
require balanced budget
"""
    core, budget = results(text)
    assert core.status == "holds" and budget.status == "holds"
    # worst: {c1} (worth 0, receives 50) and {c2, c3} (worth 200 - 100 = 100,
    # receives 150), both excess -50 [derived]
    assert core.worst_excess == -50
