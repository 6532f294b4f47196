"""Agreements too large to enumerate: the integer-programming search against closed forms and dynamic programs.

Each family is generated with a fixed seed and written as agreement text; the
test computes the worst excess on its own, in plain Python over Fractions
(a subset-sum program, or the closed form of a maximum-need game), and
re-checks every counterexample from the family's definition.
"""

from __future__ import annotations

import random
from fractions import Fraction

import pytest

from pactlang.check import CheckOptions, Checker, check_model
from pactlang.load import load_text
from pactlang.results import FAILS, HOLDS, UNKNOWN
from pactlang.search_milp import unsupported_reason

F = Fraction


def run(text: str, **options):
    model = load_text(text).model
    return model, Checker(model, CheckOptions(**options)).run()


def assert_distinct_and_sorted(result):
    coalitions = [c.coalition for c in result.counterexamples]
    assert len(set(coalitions)) == len(coalitions)
    excesses = [c.excess for c in result.counterexamples]
    assert excesses == sorted(excesses, reverse=True)


# ---------------------------------------------------------------- weighted voting


def voting(n: int, seed: int, share: int = 55):
    rng = random.Random(seed)
    weights = [rng.randint(1, 25) for _ in range(n)]
    quota = sum(weights) * share // 100
    lines = ['agreement "Board"', "shares value", ""]
    lines += [f"party v{i}: weight {w}" for i, w in enumerate(weights)]
    lines += [f"worth S = if sum(weight in S) >= {quota} then 1000 else 0",
              "payout by proportional to weight",
              "require stable within 100", "require stable within 10%", "require individually rational",
              "require stable within 1000"]
    return "\n".join(lines) + "\n", weights, quota


def lightest_winning(weights, quota):
    """The least weight of a proper coalition reaching the quota (subset sums)."""
    total = sum(weights)
    reach = 1  # bit s set: some subset weighs s
    for w in weights:
        reach |= reach << w
    return min(s for s in range(quota, total) if reach >> s & 1)


@pytest.mark.parametrize("n, seed", [(60, 1), (120, 2), (200, 3)])
def test_weighted_voting_worst_excess_is_the_lightest_winning_coalition(n, seed):
    # x_i = 1000 w_i / W, so a winning S has excess 1000 (1 - w(S)/W), largest
    # for the lightest winning S; losing coalitions have negative excess [derived]
    text, weights, quota = voting(n, seed)
    model, (within, relative, ir, loose) = run(text)
    total = sum(weights)
    worst = 1000 - F(1000 * lightest_winning(weights, quota), total)
    for r in (within, relative, ir, loose):
        assert r.method in ("milp", "singletons")
    assert within.worst_excess == relative.worst_excess == loose.worst_excess == worst
    assert within.status == (FAILS if worst > 100 else HOLDS)
    assert loose.status == HOLDS  # no excess reaches 1000
    assert ir.status == HOLDS and ir.worst_excess == -F(1000 * min(weights), total)
    for r in (within, relative):
        assert_distinct_and_sorted(r)
        assert len(r.counterexamples) == 5
        for c in r.counterexamples:
            w = sum(weights[model.index(p)] for p in c.coalition)
            worth = 1000 if w >= quota else 0
            e = worth - F(1000 * w, total)
            assert (c.worth, c.excess) == (worth, e)
            assert e > (100 if r is within else F(10, 100) * abs(worth))


def test_withdrawal_from_a_large_agreement_matches_the_smaller_program():
    text, weights, quota = voting(80, 5)
    text = text.replace("require stable within 1000", 'contingency "v0 leaves" { without v0 }')
    model = load_text(text).model
    results = [r for r in check_model(model, CheckOptions()) if r.contingency == "v0 leaves"]
    rest = weights[1:]
    worst = 1000 - F(1000 * lightest_winning(rest, quota), sum(rest))
    assert results[0].worst_excess == worst and results[0].method == "milp"


# ---------------------------------------------------------------- sums with thresholds


def freight(n: int, seed: int):
    rng = random.Random(seed)
    tons = [rng.randint(1, 40) for _ in range(n)]
    lanes = [rng.randint(1, 6) for _ in range(n)]
    lines = ['agreement "Freight pool"', "shares cost", ""]
    lines += [f"party s{i}: tons {t}, lanes {k}" for i, (t, k) in enumerate(zip(tons, lanes))]
    lines += ["worth S = 120 + 9 * sum(tons in S) + 4 * sum(lanes in S)"
              " - (if sum(tons in S) >= 900 then 0.8 * sum(tons in S) else 0)",
              "payout by proportional to tons", "require stable within 50", "require stable"]
    return "\n".join(lines) + "\n", tons, lanes


def freight_cost(t, k):
    return 120 + 9 * t + 4 * k - (F(8, 10) * t if t >= 900 else 0)


@pytest.mark.parametrize("n, seed", [(150, 4)])
def test_sum_with_threshold_matches_a_dynamic_program(n, seed):
    # e(S) = rho T(S) - c(T(S), L(S)) with rho = c(N)/T(N): for each reachable
    # tonnage T the best coalition has the fewest lanes; a table over T gives them
    text, tons, lanes = freight(n, seed)
    model, (within, core) = run(text)
    total_t, total_k = sum(tons), sum(lanes)
    rho = freight_cost(total_t, total_k) / total_t
    inf = 10**9
    fewest = [0] + [inf] * total_t
    for t, k in zip(tons, lanes):
        for s in range(total_t, t - 1, -1):
            if fewest[s - t] + k < fewest[s]:
                fewest[s] = fewest[s - t] + k
    # tons are positive, so only everyone weighs T(N) and only the empty coalition 0
    worst = max(rho * s - freight_cost(s, fewest[s]) for s in range(1, total_t) if fewest[s] < inf)
    assert within.worst_excess == core.worst_excess == worst
    assert within.method == "milp"
    assert within.status == (FAILS if worst > 50 else HOLDS)
    for r in (within, core):
        assert_distinct_and_sorted(r)
        for c in r.counterexamples:
            idx = [model.index(p) for p in c.coalition]
            t, k = sum(tons[i] for i in idx), sum(lanes[i] for i in idx)
            assert c.excess == rho * t - freight_cost(t, k) > (50 if r is within else 0)


# ---------------------------------------------------------------- maximum need


def runway(n: int, seed: int, rule: str):
    rng = random.Random(seed)
    needs = [rng.randint(5, 60) for _ in range(n)]
    lines = ['agreement "Shared runway"', "shares cost", ""]
    lines += [f"party a{i}: need {x}" for i, x in enumerate(needs)]
    lines += ["worth S = max(need in S)", f"payout by {rule}", "require stable", "require stable within 5"]
    return "\n".join(lines) + "\n", needs


@pytest.mark.parametrize("rule", ["proportional to need", "equal split"])
def test_max_need_cost_sharing_matches_its_closed_form(rule):
    # c(S) = max need in S. For a top need u the best S takes every party with
    # need <= u (payouts are positive); for the largest u that is everyone, and
    # the best proper coalition drops the party paying least [derived]
    n = 90
    text, needs = runway(n, 6, rule)
    model, (core, within) = run(text)
    top = max(needs)
    pay = [F(top * x, sum(needs)) for x in needs] if rule.startswith("prop") else [F(top, n)] * n
    best = None
    for u in sorted(set(needs)):
        members = [i for i in range(n) if needs[i] <= u]
        if len(members) == n:
            # drop the least-paid party whose leaving keeps the top need in S
            keeps_top = [i for i in members if needs[i] < top or needs.count(top) > 1]
            members.remove(min(keeps_top, key=lambda i: pay[i]))
        value = sum(pay[i] for i in members) - u
        best = value if best is None else max(best, value)
    assert core.worst_excess == within.worst_excess == best
    assert core.method == "milp"
    for r in (core, within):
        assert_distinct_and_sorted(r)
        for c in r.counterexamples:
            idx = [model.index(p) for p in c.coalition]
            assert c.excess == sum(pay[i] for i in idx) - max(needs[i] for i in idx)


# ---------------------------------------------------------------- the linearisation against enumeration


FORMS = [
    "{k1} * sum(a in S) + (if sum(b in S) >= {t} then {k2} else 0)",
    "max({k1}, {k2} * count(S)) + min(a in S) - max(b in S)",
    "if count(S) > {m} and not (m0 in S) then {k1} * sum(a in S) else {k2} * max(a in S)",
    "(sum(a in S) == {t}) * {k1} + (count(S) != {m}) * {k2} + min({k1}, sum(b in S) / 2)",
    "if (m1 in S or m2 in S) then sum(a in S) * 1.5 - max(b in S) else min(b in S) * {k2}",
    "(m3 in S) * sum(b in S) + (if sum(a in S) < {t} then -{k1} else {k2}) + 0.3 * count(S)",
]


def random_agreement(seed: int, n: int) -> str:
    r = random.Random(seed)
    parties = [f"party m{i}: a {r.randint(0, 9)}, b {r.randint(1, 12)}, w {r.randint(1, 5)}" for i in range(n)]
    formula = FORMS[seed % len(FORMS)].format(k1=r.randint(1, 9), k2=r.randint(0, 20), t=r.randint(5, 40),
                                              m=r.randint(1, n - 1))
    pay = r.choice(["payout by equal split", "payout by proportional to w",
                    "payout m0 = 10%\npayout rest by proportional to b"])
    extra = f"worth {{m1, m2}} = {r.randint(0, 30)}\n" if seed % 2 else ""
    reqs = [f"require stable within {r.randint(0, 6)}", f"require stable within {r.randint(1, 30)}%"]
    return (f'agreement "x"\nshares {r.choice(["cost", "value"])}\n' + "\n".join(parties)
            + f"\nworth S = {formula}\n{extra}{pay}\n" + "\n".join(reqs) + "\n")


@pytest.mark.parametrize("seed", range(12))
def test_integer_program_agrees_with_enumeration(seed):
    text = random_agreement(seed, 11 + seed % 3)
    model = load_text(text).model
    assert unsupported_reason(model) is None
    by_enum = Checker(model, CheckOptions(top=4, search="enumeration")).run()
    by_milp = Checker(model, CheckOptions(top=4, search="milp")).run()
    for a, b in zip(by_enum, by_milp):
        assert b.method == "milp"
        assert (a.status, a.worst_excess) == (b.status, b.worst_excess), text
        assert [(c.coalition, c.excess) for c in a.counterexamples] == \
            [(c.coalition, c.excess) for c in b.counterexamples], text


# ---------------------------------------------------------------- verdicts at the edge, long lists


def test_a_bound_just_below_the_worst_excess_fails_on_the_integer_program():
    # 90 members with 1, 2 or 3 votes (180 in all), quota 120, payout by votes:
    # a winning S has excess 1 - w(S)/180, worst 1 - 120/180 = 1/3 exactly
    # [derived]. A bound just below 1/3 fails, one just above holds.
    votes = [1 + i % 3 for i in range(90)]
    lines = ['agreement "Board"', "shares value"] + [f"party m{i}: votes {v}" for i, v in enumerate(votes)]
    lines += ["worth S = if sum(votes in S) >= 120 then 1 else 0", "payout by proportional to votes",
              "require stable within 0.333333", "require stable within 0.3333333333",
              "require stable within 0.3333334", "require stable within 5%"]
    model, results = run("\n".join(lines) + "\n")
    below, closer, above, relative = results
    for r in results:
        assert r.method == "milp" and r.worst_excess == F(1, 3)
    assert (below.status, closer.status, above.status) == (FAILS, FAILS, HOLDS)
    assert above.counterexamples == ()
    for r in (below, closer):
        assert len(r.counterexamples) == 5
        for c in r.counterexamples:
            assert c.excess == F(1, 3) and c.excess > c.allowed
            assert sum(votes[model.index(p)] for p in c.coalition) == 120
    # 5% of a winning coalition's worth is 1/20: every lightest winning coalition fails it
    assert relative.status == FAILS and [c.excess for c in relative.counterexamples] == [F(1, 3)] * 5


def tied_votes(n: int) -> str:
    # equal votes: every coalition of a size ties, so the order of ties decides the list
    lines = ['agreement "Club"', "shares value"] + [f"party c{i:02d}: votes {1 + i % 2}" for i in range(n)]
    lines += [f"worth S = if sum(votes in S) >= {n} then 60 else 0", "payout by proportional to votes",
              "require stable within 2", "require stable within 10%", "require stable"]
    return "\n".join(lines) + "\n"


@pytest.mark.parametrize("top, low_bits", [(7, None), (20, 13), (300, None)])
def test_integer_program_lists_the_same_counterexamples_as_enumeration(top, low_bits):
    # ties on the last place of the list included: they come out in one order
    model = load_text(tied_votes(18)).model
    by_enum = Checker(model, CheckOptions(top=top, search="enumeration")).run()
    by_milp = Checker(model, CheckOptions(top=top, search="milp", low_bits=low_bits)).run()
    for a, b in zip(by_enum, by_milp):
        assert b.method == "milp" and a.status == b.status == FAILS
        assert a.worst_excess == b.worst_excess
        assert len(a.counterexamples) == top
        assert [(c.coalition, c.excess) for c in a.counterexamples] == \
            [(c.coalition, c.excess) for c in b.counterexamples]


# ---------------------------------------------------------------- tiered prices


def test_tiered_price_is_decided_exactly_per_step():
    # c(S) = T(S) * price(T(S)), price 0.31 from 900 units on, else 0.38; payout
    # by units: x(S) = rho T(S), rho = c(N)/T(N). e(S) = T (rho - price(T)),
    # largest over the reachable unit totals T (subset sums) [derived]
    rng = random.Random(12)
    units = [rng.randint(5, 60) for _ in range(40)]
    lines = ['agreement "Buying group"', "shares cost"] + [f"party b{i}: units {u}" for i, u in enumerate(units)]
    lines += ["worth S = sum(units in S) * (if sum(units in S) >= 900 then 0.31 else 0.38)",
              "payout by proportional to units", "require stable", "require stable within 10"]
    model, (core, within) = run("\n".join(lines) + "\n")
    total = sum(units)

    def price(t):
        return F(31, 100) if t >= 900 else F(38, 100)

    rho = price(total)
    reach = 1
    for u in units:
        reach |= reach << u
    worst = max(t * (rho - price(t)) for t in range(1, total) if reach >> t & 1)
    assert core.method == within.method == "milp"
    assert core.worst_excess == within.worst_excess == worst
    assert core.status == (FAILS if worst > 0 else HOLDS) and within.status == (FAILS if worst > 10 else HOLDS)
    for c in core.counterexamples:
        t = sum(units[model.index(p)] for p in c.coalition)
        assert c.excess == t * (rho - price(t))


# ---------------------------------------------------------------- limits


def test_unsupported_shape_above_enumeration_is_unknown_with_the_reason():
    lines = ['agreement "Averages"', "shares cost"] + [f"party p{i}: cost {i % 7 + 1}" for i in range(30)]
    lines += ["worth S = sum(cost in S) / count(S)", "payout by equal split", "require stable"]
    _, (r,) = run("\n".join(lines) + "\n")
    assert r.status == UNKNOWN and "division by a value that depends on the coalition" in r.reason


def test_time_limit_gives_unknown_on_a_large_agreement():
    text, _, _ = voting(150, 8)
    _, results = run(text, time_limit=1e-9)
    assert [r.status for r in results if r.requirement != "individually rational"] == [UNKNOWN] * 3
    assert all("time limit" in r.reason for r in results if r.status == UNKNOWN)


def test_method_is_chosen_by_size():
    small, _, _ = voting(12, 9)
    _, results = run(small)
    assert results[0].method == "enumeration"
    big, _, _ = voting(30, 9)
    _, results = run(big)
    assert results[0].method == "milp"
