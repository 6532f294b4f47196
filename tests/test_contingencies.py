"""Contingencies: fixed values and withdrawals against agreements written out by hand,
ranges against exact answers worked out beside each test."""

from __future__ import annotations

import io
import json
from fractions import Fraction
from itertools import combinations, permutations, product
from math import factorial

import pytest

from pactlang.check import CheckOptions, Checker, check_model
from pactlang.contingencies import check_contingency, scenario_of
from pactlang.load import load_text
from pactlang.progress import Progress
from pactlang.render_json import render_json
from pactlang.render_text import render_text
from pactlang.results import FAILS, HOLDS, UNKNOWN, FileReport, RunReport
from pactlang.worths import Worths, excess, paid_by, payout

F = Fraction

HARBOUR = """\
agreement "Harbour tugs"
shares cost in kEUR

party north_quay: draft 12.5, calls 340
party south_quay: draft 11.0, calls 210
party ferry_coop: draft 6.5, calls 900
party marina:     draft 3.0, calls 60

param overrun = 1

worth S = overrun * 40 * max(draft in S) + 0.05 * sum(calls in S)
worth {marina} = 9
worth {ferry_coop, marina} = 300
worth {south_quay, ferry_coop} = 560

payout marina = 9
payout north_quay = 35%
payout rest by proportional to calls

contingency "marina leaves" { without marina }
contingency "marina leaves, deep ships" { without marina; draft of north_quay = 14; overrun = 1.1 }
contingency "pinned worth" { worth {south_quay, ferry_coop} in 400 .. 400 }
contingency "deep range" { draft of north_quay in 12.5 .. 14 }
contingency "marina leaves, ranged" { without marina; draft of south_quay in 9 .. 13; calls of marina in 0 .. 100 }

require stable within 15
require stable within 2%
require individually rational
require balanced budget
"""

# the same agreement read without the marina, written out by hand: its table
# entries naming the marina and its payout line are gone, the others stay
HARBOUR_WITHOUT_MARINA = """\
agreement "Harbour tugs"
shares cost in kEUR

party north_quay: draft {north}, calls 340
party south_quay: draft 11.0, calls 210
party ferry_coop: draft 6.5, calls 900

param overrun = {overrun}

worth S = overrun * 40 * max(draft in S) + 0.05 * sum(calls in S)
worth {{south_quay, ferry_coop}} = 560

payout north_quay = 35%
payout rest by proportional to calls

contingency "ranged" {{ draft of south_quay in 9 .. 13 }}

require stable within 15
require stable within 2%
require individually rational
require balanced budget
"""


def model_of(text: str):
    return load_text(text).model


def by_name(model, name):
    return next(c for c in model.contingencies if c.name == name)


def summary(results):
    """What a result says, without where it was written."""
    return [(r.requirement, r.status, r.worst_excess, r.method,
             [(c.coalition, c.worth, c.payout, c.excess) for c in r.counterexamples]) for r in results]


def exact_excess_at(model, mask, attrs=None, params=None, worths=None):
    """Excess and worth of a coalition, evaluated from the model at given values."""
    m = model.with_values(attributes=attrs, params=params, worths=worths)
    w = Worths(m)
    pay = payout(w)
    worth = w.exact(mask)
    return excess(m, worth, paid_by(pay, mask)), worth


# ---------------------------------------------------------------- fixed values and withdrawal


def test_withdrawal_equals_the_smaller_agreement_written_by_hand():
    model = model_of(HARBOUR)
    got = check_contingency(model, by_name(model, "marina leaves"), CheckOptions())
    small = model_of(HARBOUR_WITHOUT_MARINA.format(north="12.5", overrun="1"))
    want = Checker(small, CheckOptions()).run()
    assert summary(got) == summary(want)
    assert all(r.contingency == "marina leaves" for r in got)
    # without the marina: c(N) = 40 * 12.5 + 0.05 * 1450 = 572.5, north_quay pays 35%,
    # ferry_coop 900/1110 of the rest = 301.72..., against 40 * 6.5 + 45 = 305 alone:
    # its excess -485/148 is the largest [derived]
    assert [r.status for r in got] == [HOLDS] * 4
    assert got[0].worst_excess == F(572_5, 10) * F(65, 100) * F(900, 1110) - 305 == F(-485, 148)


def test_withdrawal_with_fixed_values_equals_the_smaller_agreement():
    model = model_of(HARBOUR)
    got = check_contingency(model, by_name(model, "marina leaves, deep ships"), CheckOptions())
    small = model_of(HARBOUR_WITHOUT_MARINA.format(north="14", overrun="1.1"))
    want = Checker(small, CheckOptions()).run()
    assert summary(got) == summary(want)
    for r in got:
        for c in r.counterexamples:
            assert c.parameters == {"draft of north_quay": F(14), "overrun": F(11, 10)}


def test_withdrawal_with_ranges_equals_the_smaller_agreement_with_the_same_range():
    # the marina's ranged calls no longer matter once it has left
    model = model_of(HARBOUR)
    scenario = scenario_of(model, by_name(model, "marina leaves, ranged"))
    assert [r.key for r in scenario.ranged] == ["draft of south_quay"]
    assert scenario.notes == ["`calls of marina` is ignored: the party has withdrawn"]
    got = check_contingency(model, by_name(model, "marina leaves, ranged"), CheckOptions())
    small = model_of(HARBOUR_WITHOUT_MARINA.format(north="12.5", overrun="1"))
    want = check_contingency(small, small.contingencies[0], CheckOptions())
    assert summary(got) == summary(want)


def test_a_range_with_equal_ends_pins_the_worth():
    model = model_of(HARBOUR)
    got = check_contingency(model, by_name(model, "pinned worth"), CheckOptions())
    mask = model.mask_of(["south_quay", "ferry_coop"])
    want = Checker(model.with_values(worths={mask: F(400)}), CheckOptions()).run()
    assert summary(got) == summary(want)
    assert all(r.method in ("enumeration", "singletons", "exact sum") for r in got)


def test_deep_range_worst_case_is_the_deepest_draft():
    # everything grows with north_quay's draft; its payout share is fixed at 35%,
    # the others pay in proportion to calls: the worst excess is at draft 14
    model = model_of(HARBOUR)
    got = check_contingency(model, by_name(model, "deep range"), CheckOptions())
    at_14 = Checker(model.with_values(attributes={("draft", "north_quay"): F(14)}), CheckOptions()).run()
    at_low = Checker(model, CheckOptions()).run()
    for r, hi, lo in zip(got, at_14, at_low):
        assert r.worst_excess == max(hi.worst_excess, lo.worst_excess)
        assert r.method.startswith("z3")
        if FAILS in (hi.status, lo.status):
            assert r.status == FAILS
        for c in r.counterexamples:
            value = c.parameters["draft of north_quay"]
            assert F(25, 2) <= value <= 14
            e, w = exact_excess_at(model, model.mask_of(c.coalition), attrs={("draft", "north_quay"): value})
            assert (e, w) == (c.excess, c.worth)
    within, relative, ir, budget = got
    assert within.status == (FAILS if within.worst_excess > 15 else HOLDS) == FAILS
    assert ir.status == (FAILS if ir.worst_excess > 0 else HOLDS)
    assert (budget.status, budget.worst_excess) == (HOLDS, 0)


# ---------------------------------------------------------------- ranges with exact answers


STEP = """\
agreement "Step"
shares value

party alpha: size 1
party beta: size 1

param t = 5

# alpha earns t alone while t stays below 10, nothing from then on
worth S = (if t < 10 then t else 0) * (alpha in S) + 20 * (beta in S)
payout alpha = 0
payout beta = worth(all)

contingency "t rises" { t in 8 .. 12 }

require stable within 10
require stable within 9.5
require individually rational
"""


def test_a_supremum_that_is_not_attained_is_reported_exactly():
    # e({alpha}) = t for t < 10 and 0 from 10 on: the supremum 10 is never
    # reached, so `within 10` holds and `within 9.5` fails somewhere in (9.5, 10)
    model = model_of(STEP)
    r10, r95, ir = check_contingency(model, model.contingencies[0], CheckOptions())
    assert (r10.status, r10.worst_excess) == (HOLDS, F(10))
    assert "not attained" in r10.method
    assert (r95.status, r95.worst_excess) == (FAILS, F(10))
    (c,) = r95.counterexamples
    t = c.parameters["t"]
    assert c.coalition == ("alpha",) and F(19, 2) < t < 10 and c.excess == t
    assert exact_excess_at(model, 1, params={"t": t}) == (c.excess, c.worth)
    assert ir.status == FAILS and ir.worst_excess == F(10)


SELF_WEIGHTED = """\
agreement "Self weighted"
shares value

party a: w 2
party b: w 3
party c: w 5

worth S = if count(S) >= 2 then 2 * sum(w in S) else sum(w in S)
payout by proportional to w

contingency "a grows" { w of a in 1 .. 4; w of b in 2 .. 6 }

require stable
require individually rational
"""


def test_ranged_weights_read_by_the_formula_are_decided_by_bisection():
    # x_i = v(N) w_i / w(N) = 2 w_i, so e(S) = 0 for |S| >= 2 and -w_i alone:
    # the supremum over proper coalitions is 0 at every value [derived]
    model = model_of(SELF_WEIGHTED)
    core, ir = check_contingency(model, model.contingencies[0], CheckOptions())
    assert (core.status, core.worst_excess) == (HOLDS, F(0))
    assert core.method == "z3 bisection"
    # singletons: -w_i, largest at w of a = 1 -> -1
    assert (ir.status, ir.worst_excess) == (HOLDS, F(-1))


AVERAGE = """\
agreement "Average"
shares cost

party a: cost 4
party b: cost 8
party c: cost 9

param levy = 1

# a coalition pays its members' average cost, plus a levy per member
worth S = sum(cost in S) / count(S) + levy * count(S)
payout by equal split

contingency "levy" { levy in 0 .. 3 }

require stable within 1
"""


def test_division_by_the_coalition_size_is_handled_exactly():
    # c(N) = 7 + 3 levy, x_i = 7/3 + levy. e(S) = |S|(7/3 + levy) - avg(S) - levy |S|
    # = 7|S|/3 - avg(S): independent of the levy; best: {b, c}: 14/3 - 17/2 < 0,
    # singletons 7/3 - c_i: {a} gives -5/3; pairs {a,b}: 14/3 - 6 = -4/3 [derived]
    model = model_of(AVERAGE)
    (r,) = check_contingency(model, model.contingencies[0], CheckOptions())
    best = max(F(7 * len(s), 3) - F(sum(s), len(s)) for k in (1, 2) for s in combinations((4, 8, 9), k))
    assert (r.status, r.worst_excess) == (HOLDS, best) and best == F(-4, 3)


def shapley(worth, n):
    """Shapley value by averaging marginal contributions over all orders [practice]."""
    phi = [F(0)] * n
    for order in permutations(range(n)):
        mask = 0
        for i in order:
            phi[i] += worth(mask | 1 << i) - worth(mask)
            mask |= 1 << i
    return [v / factorial(n) for v in phi]


SHAPLEY = """\
agreement "Shared pumping station"
shares cost

party farm: flow 3
party mill: flow 5
party town: flow 9
party brewery: flow 2

param tariff = 2

worth S = 10 + tariff * sum(flow in S) + 4 * count(S)
worth {farm, mill} = 30

payout by shapley

contingency "tariff and flow" { tariff in 1 .. 3; flow of town in 6 .. 12 }

require stable within 2
require individually rational
"""


def test_shapley_under_ranges_matches_the_corners():
    # worths are affine in each of tariff and flow of town when the other is
    # held (multi-affine), the Shapley value is linear in the worths, so every
    # excess is multi-affine and its supremum over the box sits at a corner
    # [derived]; the oracle below is plain Python
    pytest.importorskip("pactlang.solutions")
    model = model_of(SHAPLEY)
    flows = {"farm": 3, "mill": 5, "town": 9, "brewery": 2}
    names = list(flows)

    def worth_at(tariff, town):
        f = dict(flows, town=town)

        def worth(mask):
            members = [p for i, p in enumerate(names) if mask >> i & 1]
            if not members:
                return F(0)
            if set(members) == {"farm", "mill"}:
                return F(30)
            return 10 + tariff * sum(f[p] for p in members) + 4 * len(members)
        return worth

    sup, ir_sup = None, None
    for tariff, town in product((F(1), F(3)), (F(6), F(12))):
        w = worth_at(tariff, town)
        x = shapley(w, 4)
        for mask in range(1, 15):
            e = sum(x[i] for i in range(4) if mask >> i & 1) - w(mask)
            sup = e if sup is None else max(sup, e)
            if bin(mask).count("1") == 1:
                ir_sup = e if ir_sup is None else max(ir_sup, e)
    within, ir = check_contingency(model, model.contingencies[0], CheckOptions())
    assert within.worst_excess == sup and within.status == (FAILS if sup > 2 else HOLDS)
    assert ir.worst_excess == ir_sup and ir.status == (FAILS if ir_sup > 0 else HOLDS)
    assert within.method == "z3 bisection"  # tariff * flow is a product of two ranged values
    for c in within.counterexamples:
        w = worth_at(c.parameters["tariff"], c.parameters["flow of town"])
        mask = model.mask_of(c.coalition)
        x = shapley(w, 4)
        assert sum(x[i] for i in range(4) if mask >> i & 1) - w(mask) == c.excess > 2


def test_scrb_under_ranges_counterexamples_recheck():
    pytest.importorskip("pactlang.solutions")
    model = model_of(SHAPLEY.replace("payout by shapley", "payout by separable costs remaining benefits"))
    within, ir = check_contingency(model, model.contingencies[0], CheckOptions())
    assert within.method.startswith("z3")
    corners = [{"tariff": t, "flow of town": f} for t in (F(1), F(3)) for f in (F(6), F(12))]
    corner_worst = max(exact_excess_at(model, m, attrs={("flow", "town"): p["flow of town"]},
                                       params={"tariff": p["tariff"]})[0] for p in corners for m in range(1, 15))
    assert within.status in (HOLDS, FAILS)
    assert within.worst_excess >= corner_worst  # the supremum is at least what the corners show
    for c in within.counterexamples:
        p = c.parameters
        e, w = exact_excess_at(model, model.mask_of(c.coalition), attrs={("flow", "town"): p["flow of town"]},
                               params={"tariff": p["tariff"]})
        assert (e, w) == (c.excess, c.worth) and e > 2


def test_nucleolus_under_ranges_is_unknown_with_a_reason():
    model = model_of(SHAPLEY.replace("payout by shapley", "payout by nucleolus"))
    results = check_contingency(model, model.contingencies[0], CheckOptions())
    assert all(r.status == UNKNOWN and "nucleolus" in r.reason for r in results)


def test_weights_that_can_add_up_to_zero_are_unknown():
    text = """\
agreement "Signed weights"
shares value
party a: w 1
party b: w 2
worth S = 3 * count(S)
payout by proportional to w
contingency "swing" { w of a in -3 .. 1 }
require stable
"""
    model = model_of(text)
    (r,) = check_contingency(model, model.contingencies[0], CheckOptions())
    assert r.status == UNKNOWN and "can be zero" in r.reason


def test_weights_that_can_add_up_to_zero_are_unknown_when_the_formula_reads_them():
    text = """\
agreement "Signed weights"
shares value
party a: w 1
party b: w 2
worth S = 3 * sum(w in S)
payout by proportional to w
contingency "swing" { w of a in -3 .. 1 }
require stable
"""
    model = model_of(text)
    (r,) = check_contingency(model, model.contingencies[0], CheckOptions())
    assert r.status == UNKNOWN and "can be zero" in r.reason and "w of a = -2" in r.reason


def test_unbalanced_budget_under_a_range_is_refuted_with_values():
    text = """\
agreement "Fixed shares"
shares cost
party a
party b
param p = 1
worth all = 15 * p
worth otherwise = 9
payout a = 10
payout b = 5
contingency "price" { p in 1 .. 2 }
require balanced budget
require stable within 100
"""
    model = model_of(text)
    budget, stable = check_contingency(model, model.contingencies[0], CheckOptions())
    for r in (budget, stable):
        assert r.status == FAILS
        c = r.counterexamples[0]
        assert c.coalition == ("a", "b") and c.parameters["p"] != 1
        assert c.excess == 15 - 15 * c.parameters["p"]
    # the single coalitions pay 10 and 5 against a worth of 9: within 100 otherwise
    assert len(stable.counterexamples) == 1 and stable.worst_excess == 1


def test_ranged_worth_of_a_listed_coalition():
    model = model_of(HARBOUR.replace('{ worth {south_quay, ferry_coop} in 400 .. 400 }',
                                     '{ worth {south_quay, ferry_coop} in 400 .. 700 }'))
    r = check_contingency(model, by_name(model, "pinned worth"), CheckOptions())[0]
    mask = model.mask_of(["south_quay", "ferry_coop"])
    ends = [Checker(model.with_values(worths={mask: F(v)}), CheckOptions()).run()[0] for v in (400, 700)]
    # the listed worth moves only its own coalition's excess, linearly: ends suffice [derived]
    assert r.worst_excess == max(e.worst_excess for e in ends)
    for c in r.counterexamples:
        if set(c.coalition) == {"south_quay", "ferry_coop"}:
            assert c.parameters["worth {south_quay, ferry_coop}"] == 400


TIES = """\
agreement "Four haulers"
shares value

party a: trucks 1
party b: trucks 1
party c: trucks 1
party d: trucks 1

param rate = 1

# any two haulers gain a bonus by pairing up, a larger one with d
worth S = 6 * rate * count(S) + (if count(S) == 2 then 1 + 4 * (d in S) else 0)
payout by proportional to trucks

contingency "d grows" { trucks of d in 1 .. 3 }
contingency "rate moves" { rate in 1 .. 2 }

require stable
"""

# "d grows", with t = trucks of d: v(N) = 24, others are paid 24/(t+3), d 24t/(t+3).
# Pairs without d: 13 - 48/(t+3), 5 at t = 3; pairs with d: 17 - 24(t+1)/(t+3), 5 at
# t = 1; {a,b,c}: 18 - 72/(t+3), 6 at t = 3; singletons at most 6 - 24/6 = 2 [derived].
# "rate moves": everyone is paid 6 rate, so a pair's excess is its bonus whatever the
# rate: 5 with d, 1 without; nothing else is positive [derived].
TIE_ORDERS = [
    ("d grows", 5, [("a", "b", "c"), ("a", "b"), ("a", "c"), ("b", "c"), ("a", "d")], [6, 5, 5, 5, 5]),
    ("rate moves", 6, [("a", "d"), ("b", "d"), ("c", "d"), ("a", "b"), ("a", "c"), ("b", "c")], [5, 5, 5, 1, 1, 1]),
    # fewer places than tied coalitions: the first ones in the checker's order take them
    ("rate moves", 2, [("a", "d"), ("b", "d")], [5, 5]),
    ("rate moves", 4, [("a", "d"), ("b", "d"), ("c", "d"), ("a", "b")], [5, 5, 5, 1]),
    ("d grows", 3, [("a", "b", "c"), ("a", "b"), ("a", "c")], [6, 5, 5]),
]


@pytest.mark.parametrize("name, top, coalitions, excesses", TIE_ORDERS)
def test_ties_on_excess_come_out_in_the_checkers_order_every_time(name, top, coalitions, excesses):
    # the same order as the enumerating checker: excess descending, then coalition
    # size, then coalition mask, whichever corner or solver model found them first
    model = model_of(TIES)
    contingency = by_name(model, name)

    def listed():
        (r,) = check_contingency(model, contingency, CheckOptions(top=top))
        assert r.status == FAILS
        return [(c.coalition, c.worth, c.payout, c.excess, c.allowed, c.parameters) for c in r.counterexamples]

    first, second = listed(), listed()
    assert first == second
    assert [c[0] for c in first] == coalitions
    assert [c[3] for c in first] == excesses
    for coalition, worth, _, e, _, parameters in first:
        attrs = {("trucks", "d"): parameters["trucks of d"]} if "trucks of d" in parameters else None
        params = {"rate": parameters["rate"]} if "rate" in parameters else None
        assert exact_excess_at(model, model.mask_of(coalition), attrs=attrs, params=params) == (e, worth)


def test_time_limit_gives_unknown():
    model = model_of(SHAPLEY)
    results = check_contingency(model, model.contingencies[0], CheckOptions(time_limit=1e-9))
    assert all(r.status == UNKNOWN and "time limit" in r.reason for r in results)


# ---------------------------------------------------------------- output


def test_json_and_text_show_the_ranged_values():
    model = model_of(HARBOUR)
    results = check_model(model, CheckOptions(top=2))
    report = FileReport("harbour.deal", model.title, model.unit, model.kind, results=results)
    doc = json.loads(render_json(RunReport([report])))
    ranged = [r for r in doc["files"][0]["results"] if r["contingency"] == "deep range"]
    assert ranged and all(r["method"].startswith("z3") for r in ranged)
    fails = [r for r in ranged if r["status"] == "fails"]
    assert fails
    for r in fails:
        for c in r["counterexamples"]:
            assert set(c["parameters"]) == {"draft of north_quay"}
            value = F(c["parameters"]["draft of north_quay"])
            assert F(25, 2) <= value <= 14
            e, _ = exact_excess_at(model, model.mask_of(c["coalition"]), attrs={("draft", "north_quay"): value})
            assert F(c["excess"]) == e
    text = render_text(RunReport([report]))
    assert "draft of north_quay" in text and 'under "deep range"' in text


def test_progress_is_silent_off_a_terminal_and_draws_on_one():
    assert Progress.for_stream(1, stream=io.StringIO()) is None

    class Tty(io.StringIO):
        def isatty(self):
            return True

    assert Progress.for_stream(1, quiet=True, stream=Tty()) is None
    stream = Tty()
    progress = Progress.for_stream(1, stream=stream)
    model = model_of(HARBOUR)
    check_model(model, CheckOptions(progress=progress))
    out = stream.getvalue()
    assert "[file 1/1]" in out and '"deep range"' in out and out.endswith("\r\x1b[K")


# ---------------------------------------------------------------- a withdrawn party named in the agreement

MEMBER_BONUS = """\
agreement "m"
shares value
party a: w 2
party b: w 1
party c: w 1
worth S = count(S) + 5 * (a in S) + (if (a in S) and (b in S) then 3 else 0)
{rows}
{payout}
contingency "a leaves" {{ {lines} }}
require stable
require balanced budget
"""

# the same agreement read for b and c only, written by hand: `a in S` is 0 for each of their coalitions
MEMBER_BONUS_SMALL = """\
agreement "m"
shares value
party b: w 1
party c: w 1
worth S = count(S)
{rows}
{payout}
{contingency}
require stable
require balanced budget
"""


def _bonus(rows="", payout="payout by equal split", lines="without a"):
    return model_of(MEMBER_BONUS.format(rows=rows, payout=payout, lines=lines))


def _bonus_small(rows="", payout="payout by equal split", contingency=""):
    return model_of(MEMBER_BONUS_SMALL.format(rows=rows, payout=payout, contingency=contingency))


def test_a_withdrawn_party_is_in_no_coalition_of_the_smaller_game():
    # `a in S` raised "tuple.index(x): x not in tuple" under `without a`
    model = _bonus()
    got = check_contingency(model, model.contingencies[0], CheckOptions())
    want = Checker(_bonus_small(), CheckOptions()).run()
    assert summary(got) == summary(want)
    # v({b}) = v({c}) = 1, v({b, c}) = 2, each gets 1: every excess is 0 [derived]
    assert [(r.status, r.worst_excess) for r in got] == [(HOLDS, F(0)), (HOLDS, F(0))]


def test_check_model_runs_the_baseline_and_the_withdrawal_of_a_named_party():
    results = check_model(_bonus(), CheckOptions())
    assert [(r.contingency, r.status) for r in results] == [
        (None, FAILS), (None, HOLDS), ("a leaves", HOLDS), ("a leaves", HOLDS)]


def test_a_withdrawn_party_named_in_the_formula_under_a_range():
    # the Z3 path reads the formula too: the same smaller game with the same range
    model = _bonus(payout="payout by proportional to w", lines="without a; w of b in 1 .. 3")
    got = check_contingency(model, model.contingencies[0], CheckOptions())
    small = _bonus_small(payout="payout by proportional to w",
                         contingency='contingency "a leaves" { w of b in 1 .. 3 }')
    want = check_contingency(small, small.contingencies[0], CheckOptions())
    assert summary(got) == summary(want)
    # x_b = 2 w_b / (w_b + 1) >= 1 = v({b}) and x_c = 2 / (w_b + 1) <= 1 = v({c}): c's excess
    # 1 - 2 / (w_b + 1) is largest at w_b = 3, where it is 1/2 [derived]
    core, budget = got
    assert (core.status, core.worst_excess, budget.status) == (FAILS, F(1, 2), HOLDS)
    assert core.counterexamples[0].coalition == ("c",) and core.counterexamples[0].parameters == {"w of b": F(3)}


def test_lines_about_a_withdrawn_party_are_ignored():
    # its attribute fixed or ranged, its payout line, the table rows and ranged worths naming it
    rows = "worth {a, b} = 40\nworth {b, c} = 2"
    lines = "w of a = 7; w of a in 1 .. 2; w of a in 3 .. 3; worth {a, c} in 0 .. 9; without a"
    model = _bonus(rows=rows, payout="payout a = 3\npayout rest by proportional to w", lines=lines)
    scenario = scenario_of(model, model.contingencies[0])
    assert scenario.model.parties == ("b", "c") and scenario.ranged == [] and scenario.fixed == {}
    assert scenario.notes == [
        "`w of a` is ignored: the party has withdrawn",
        "`w of a` is ignored: the party has withdrawn",
        "`w of a` is ignored: the party has withdrawn",
        "`worth {a, c}` is ignored: a member has withdrawn"]
    got = check_contingency(model, model.contingencies[0], CheckOptions())
    small = _bonus_small(rows="worth {b, c} = 2", payout="payout rest by proportional to w")
    assert summary(got) == summary(Checker(small, CheckOptions()).run())


def test_a_rule_left_with_nobody_to_share_among_is_a_failed_budget_not_a_crash():
    # b and c have fixed lines; the rest rule shared among a alone, who leaves:
    # worth(all) = 2 of the smaller game is paid 1/2 + 1/2, so 1 is left unpaid [derived]
    model = _bonus(payout="payout b = 0.5\npayout c = 0.5\npayout rest by equal split")
    core, budget = check_contingency(model, model.contingencies[0], CheckOptions())
    assert budget.status == FAILS and budget.worst_excess == F(1)
    assert core.status == FAILS


# ---------------------------------------------------------------- separable costs remaining benefits where sum r = 0

ADDITIVE_SCRB = """\
agreement "Additive"
shares cost
party p0: a 1
party p1: a 2
party p2: a 3
worth S = sum(a in S)
payout by separable costs remaining benefits
contingency "r" { a of p0 in 0 .. 2 }
require stable
require individually rational
require balanced budget
"""


def test_scrb_on_an_additive_game_under_a_range_holds():
    # c(S) = sum of a: s_i = a_i, r_i = 0 everywhere and c(N) - sum s = 0, so the rule
    # pays s_i (as `rules.separable_costs_remaining_benefits` does for fixed values)
    # and every excess is 0 [derived]; it was unknown ("can be zero")
    model = model_of(ADDITIVE_SCRB)
    results = check_contingency(model, model.contingencies[0], CheckOptions())
    assert [(r.status, r.worst_excess) for r in results] == [(HOLDS, F(0))] * 3
    assert results[0].worst_coalition == ("p0",)  # ties: the smallest coalition, then party order


SCRB_ZERO_AT_A_POINT = """\
agreement "Three sites"
shares cost
party p0
party p1
party p2
worth {{p0}} = 1
worth {{p1}} = 3
worth {{p2}} = 3
worth {{p1, p2}} = 4
worth {{p0, p2}} = 4
worth {{p0, p1}} = 4
worth {{p0, p1, p2}} = {all}
payout by separable costs remaining benefits
contingency "r" {{ worth {{p0}} in {low} .. 4 }}
require stable
"""


@pytest.mark.parametrize("low", ["0", "-1"])
def test_scrb_where_the_remaining_benefits_add_up_to_zero_at_one_value(low):
    # c(N) = 6: s_i = 6 - 4 = 2, c(N) - sum s = 0, r = (t - 2, 1, 1), sum r = t: zero at t = 0
    # (inside the range) where the rule still pays s = (2, 2, 2). {p0} pays 2 against t, so the
    # worst excess is 2 - low at t = low; pairs pay 4 = c(S) [derived]. With low = -1 sum r
    # takes both signs.
    model = model_of(SCRB_ZERO_AT_A_POINT.format(all="6", low=low))
    (r,) = check_contingency(model, model.contingencies[0], CheckOptions())
    assert (r.status, r.worst_excess, r.worst_coalition) == (FAILS, 2 - F(low), ("p0",))
    c = r.counterexamples[0]
    assert (c.coalition, c.excess, c.parameters) == (("p0",), 2 - F(low), {"worth {p0}": F(low)})
    assert [c.coalition for c in r.counterexamples] == [("p0",)]


def test_scrb_not_defined_somewhere_in_the_range_is_unknown_with_where():
    # c(N) = 7: s_i = 3, c(N) - sum s = -2, r = (t - 3, 0, 0): sum r = 0 at t = 3 while
    # something remains to share, where the rule has no value [derived]
    model = model_of(SCRB_ZERO_AT_A_POINT.format(all="7", low="0"))
    (r,) = check_contingency(model, model.contingencies[0], CheckOptions())
    assert r.status == UNKNOWN
    assert r.reason == ("separable costs remaining benefits is not defined where the remaining benefits add up "
                        "to zero and the non-separable part does not (at worth {p0} = 3)")


# ---------------------------------------------------------------- a worst case on a threshold

SCANNING = """\
agreement "Regional scanning service"
shares cost in kEUR
party st_anne:   scans 4200
party riverside: scans 3100
party northgate: scans 2500
party childrens: scans 900
party hillcrest: scans 600
worth S = 900 * (1 + (if sum(scans in S) > 6000 then 1 else 0) + (if sum(scans in S) {op} 12000 then 1 else 0)) + 0.05 * sum(scans in S) + 40 * count(S)
worth {{st_anne}} = 1050
payout childrens = 8%
payout rest by proportional to scans
contingency "volume growth" {{ scans of riverside in 3100 .. 4500 }}
require stable
"""

# at riverside = 4400, {st_anne, riverside, northgate, childrens} reaches 12000 scans: c(S) = 1800 + 600 +
# 160 = 2560 while c(N) = 2700 + 630 + 200 = 3530, childrens pays 282.4 and hillcrest 3247.6 * 600 / 11700;
# the four pay 3530 - 3247.6 * 600 / 11700 = 655874/195, an excess of 156674/195 (~803.46) [derived]
SCANNING_WORST = F(156674, 195)


def _scanning_rows(r):
    return [(c.coalition, c.excess, c.parameters["scans of riverside"]) for c in r.counterexamples]


def test_a_worst_case_exactly_on_a_threshold_is_found_and_listed_first():
    # it was "not settled", and the table started with an excess of ~368 at 4500
    model = model_of(SCANNING.format(op=">"))
    (r,) = check_contingency(model, model.contingencies[0], CheckOptions())
    assert (r.status, r.worst_excess, r.method) == (FAILS, SCANNING_WORST, "z3 bisection")
    assert r.worst_coalition == ("st_anne", "riverside", "northgate", "childrens")
    rows = _scanning_rows(r)
    assert rows[0] == (("st_anne", "riverside", "northgate", "childrens"), SCANNING_WORST, F(4400))
    assert [e for _, e, _ in rows] == sorted((e for _, e, _ in rows), reverse=True)
    # the next ones [derived the same way]: {st_anne, riverside, northgate, hillcrest} comes closer and
    # closer to 705 as riverside falls to 3800 from above (c(N) steps up there), never reaching it;
    # {st_anne, riverside, northgate} is worst at 4500 with 179016/295
    assert rows[1][0] == ("st_anne", "riverside", "northgate", "hillcrest") and F(70499, 100) < rows[1][1] < 705
    assert 3800 < rows[1][2] < F(38001, 10)
    assert rows[2] == (("st_anne", "riverside", "northgate"), F(179016, 295), F(4500))
    for c in r.counterexamples:
        e, w = exact_excess_at(model, model.mask_of(c.coalition),
                               attrs={("scans", "riverside"): c.parameters["scans of riverside"]})
        assert (e, w) == (c.excess, c.worth) and e > 0


def test_a_worst_case_at_the_open_side_of_a_threshold_is_a_supremum_not_attained():
    # with `>=` the four-party cost steps up at 4400 itself: the excess comes arbitrarily close to
    # 156674/195 from below 4400 and never reaches it [derived]
    model = model_of(SCANNING.format(op=">="))
    (r,) = check_contingency(model, model.contingencies[0], CheckOptions())
    assert (r.status, r.worst_excess, r.method) == (FAILS, SCANNING_WORST, "z3 bisection (supremum not attained)")
    rows = _scanning_rows(r)
    assert rows[0][0] == ("st_anne", "riverside", "northgate", "childrens")
    assert SCANNING_WORST - F(1, 100) < rows[0][1] < SCANNING_WORST and F(43999, 10) < rows[0][2] < 4400
    # the second one now reaches its worst 705 at 3800, where c(N) has already stepped up [derived]
    assert rows[1] == (("st_anne", "riverside", "northgate", "hillcrest"), F(705), F(3800))
    assert [e for _, e, _ in rows] == sorted((e for _, e, _ in rows), reverse=True)


# Weights a, b, c = 1, 1, t with t = w of c in 1 .. 3; v(N) = 6, so a and b are paid
# 6/(t+2), c 6t/(t+2). {a}: 2.2 - 6/(t+2), worst 1 at t = 3; {c}: 3 - 6t/(t+2), worst 1
# at t = 1; {b}: at most -6/5; pairs and everyone else are worth 0 [derived]. The two
# corners reach the worst excess 1 with different coalitions; enumeration names the first
# in the canonical order, {a}, whichever corner comes first.
TIED_ACROSS_CORNERS = """\
agreement "tie across corners"
shares value
party a: w 1
party b: w 1
party c: w 1
worth S = if count(S) == 3 then 6 else {other}
worth {{a}} = 2.2
worth {{c}} = 3
payout by proportional to w
contingency "c grows" {{ w of c in 1 .. 3 }}
require stable within 1
require stable within 0.5
"""


@pytest.mark.parametrize("other, method", [("0", "at every corner of the weight ranges"),
                                           ("0 * sum(w in S)", "z3 bisection")])
def test_a_worst_excess_tied_across_weight_corners_names_the_first_coalition(other, method):
    # on the old code the corners' merge named the worst coalition of the first corner, {c}
    model = model_of(TIED_ACROSS_CORNERS.format(other=other))
    within_1, within_half = check_contingency(model, model.contingencies[0], CheckOptions(top=5))
    assert method in within_1.method
    assert (within_1.status, within_1.worst_excess, within_1.worst_coalition) == (HOLDS, 1, ("a",))
    assert (within_half.status, within_half.worst_excess, within_half.worst_coalition) == (FAILS, 1, ("a",))
    assert [(c.coalition, c.excess, c.parameters["w of c"]) for c in within_half.counterexamples] == [
        (("a",), 1, 3), (("c",), 1, 1)]


def test_a_ranked_list_not_proved_in_the_query_budget_says_so(monkeypatch):
    # the verdict stands on a re-checked counterexample, but without the final unsat
    # query nothing proves that no coalition belongs before the ones listed
    import pactlang.ranged_check as ranged_check

    model = model_of(TIED_ACROSS_CORNERS.format(other="0 * sum(w in S)"))
    _, proved = check_contingency(model, model.contingencies[0], CheckOptions(top=5))
    assert proved.status == FAILS and "not proved" not in proved.method
    monkeypatch.setattr(ranged_check, "MAX_RANKING_QUERIES", 0)
    monkeypatch.setattr(ranged_check, "MAX_SEED_BITS", 0)
    _, unproved = check_contingency(model, model.contingencies[0], CheckOptions(top=5))
    assert unproved.status == FAILS and unproved.worst_excess == 1
    assert unproved.method.endswith("counterexamples not proved to be the worst ones (query or time limit reached)")
    assert unproved.counterexamples and all(c.excess > F(1, 2) for c in unproved.counterexamples)
