"""A game, a payout and a target epsilon -> the nearest stable payout, or proof that none exists."""

from fractions import Fraction as F

import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from pactlang.solutions import certificate_value, least_core, nearest_stable_payout
from pactlang.solutions import lp
from pactlang.solutions.repair import allowance_game
from solutions_oracle import excesses, game_from, game_of, z3_nearest

SETTINGS = settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def majority3():
    return game_from(3, lambda s: 1 if len(s) >= 2 else 0)


def meets(game, y, bound) -> bool:
    return sum(y) == game.exact(game.full) and all(e <= bound(m) for m, e in excesses(game, y).items())


def test_three_party_repair_by_hand():
    # Pairs need y(S) >= 1/2. From (1, 0, 0) player 0 must give up at least 1/2, so at
    # least 1 moves in total and someone changes by 1/2 [derived].
    r = nearest_stable_payout(majority3(), [1, 0, 0], F(1, 2))
    assert r.feasible and r.total_change == 1 and r.max_change == F(1, 2)
    assert meets(majority3(), r.payout, lambda m: F(1, 2))
    assert r.least_core is None


def test_below_least_core_value_is_refused_with_proof():
    # Least-core value 1/3 [practice]; 1/4 is below it.
    game = majority3()
    r = nearest_stable_payout(game, [1, 0, 0], F(1, 4))
    assert not r.feasible and r.payout is None
    assert r.least_core.value == F(1, 3)
    assert certificate_value(game, r.least_core.certificate) == F(1, 3) > F(1, 4)


def test_stable_payout_is_left_alone():
    r = nearest_stable_payout(majority3(), [F(1, 3)] * 3, F(1, 3))
    assert r.feasible and r.payout == [F(1, 3)] * 3 and r.total_change == 0 and r.max_change == 0


def test_inefficient_payout_is_brought_to_the_total():
    game = game_from(3, lambda s: 2 * len(s))  # additive: the core is the single point (2, 2, 2)
    r = nearest_stable_payout(game, [3, 3, 3], 0)
    assert r.feasible and r.payout == [2, 2, 2] and r.total_change == 3 and r.max_change == 1


def test_relative_target():
    # worth(S) = |S|^2 for a pair-heavy game; 10% of |v(S)| as each coalition's allowance.
    game = game_from(4, lambda s: len(s) ** 2 + (5 if s == (0, 1) else 0))
    x = [4, 4, 4, 4]
    r = nearest_stable_payout(game, x, F(1, 10), relative=True)
    bound = lambda m: F(1, 10) * abs(game.exact(m))
    want = z3_nearest(game, x, bound)
    assert r.feasible and (r.total_change, r.max_change) == want
    assert meets(game, r.payout, bound)


def test_relative_infeasible_cites_the_allowance_game():
    game = majority3()
    r = nearest_stable_payout(game, [1, 0, 0], F(1, 5), relative=True)
    # pairs may fall short by 1/5 only, but balanced pairs need 3 * 4/5 / 2 = 6/5 > 1 [derived]
    assert not r.feasible
    target = allowance_game(game, F(1, 5), relative=True)
    assert r.least_core.value > 0
    assert certificate_value(target, r.least_core.certificate) == r.least_core.value


@st.composite
def cases(draw):
    n = draw(st.integers(3, 6))
    ws = draw(st.lists(st.integers(-3, 20), min_size=2**n - 1, max_size=2**n - 1))
    x = draw(st.lists(st.fractions(min_value=-2, max_value=15, max_denominator=4), min_size=n, max_size=n))
    eps = draw(st.fractions(min_value=-1, max_value=8, max_denominator=3))
    return game_of([0] + ws), x, eps


@SETTINGS
@given(cases())
def test_repair_meets_target_exactly_and_is_minimal(case):
    game, x, eps = case
    r = nearest_stable_payout(game, x, eps)
    want = z3_nearest(game, x, lambda m: eps)  # independent: Z3 over every coalition
    if want is None:
        assert not r.feasible and r.least_core.value > eps
        return
    assert r.feasible
    assert meets(game, r.payout, lambda m: eps)  # brute force over every coalition
    assert (r.total_change, r.max_change) == want
    assert r.total_change == sum(abs(a - b) for a, b in zip(r.payout, x))
    assert r.max_change == max(abs(a - b) for a, b in zip(r.payout, x))
    assert least_core(game).value <= eps


@settings(max_examples=10, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(cases())
def test_repair_through_the_exact_fallback(case):
    game, x, eps = case
    want = nearest_stable_payout(game, x, eps)
    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(lp._Solver, "recover", lambda self, *a: None)
        got = nearest_stable_payout(game, x, eps)
    assert (got.feasible, got.total_change, got.max_change) == (want.feasible, want.total_change, want.max_change)


def test_single_party_only_the_budget_binds():
    # with one party left (a contingency removed the other) only y(N) = v(N) remains
    r = nearest_stable_payout(game_of([0, 5]), [3], 0)
    assert r.feasible and r.payout == [5] and r.total_change == 2 and r.max_change == 2


@SETTINGS
@given(cases(), st.fractions(min_value=0, max_value=1, max_denominator=10), st.booleans())
def test_several_requirements_are_met_together(case, pct, rational):
    # every `require stable ...` line at once: the allowance of S is the smallest that applies
    from pactlang.solutions.repair import Allowance

    game, x, eps = case
    allowances = [Allowance(eps), Allowance(pct, relative=True)]
    if rational:
        allowances.append(Allowance(F(0), singletons=True))

    def bound(m):
        limits = [eps, pct * abs(game.exact(m))] + ([F(0)] if rational and m & (m - 1) == 0 else [])
        return min(limits)

    r = nearest_stable_payout(game, x, allowances=allowances)
    want = z3_nearest(game, x, bound)  # independent: Z3 over every coalition
    if want is None:
        assert not r.feasible and r.least_core.value > 0
        target = allowance_game(game, allowances=allowances)
        assert certificate_value(target, r.least_core.certificate) == r.least_core.value
        return
    assert r.feasible and meets(game, r.payout, bound)
    assert (r.total_change, r.max_change) == want


@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(cases())
def test_least_percentage_is_reachable_and_proved_minimal(case):
    from pactlang.solutions.repair import least_percentage

    game, x, _ = case
    got = least_percentage(game)
    if got.percentage is None:
        # no P works: a balanced collection of worthless coalitions still forces an excess
        assert certificate_value(game, got.certificate) > 0
        assert all(game.exact(m) == 0 for m, _ in got.certificate)
        return
    p = got.percentage
    assert meets(game, got.payout, lambda m: p * abs(game.exact(m)))
    if p > 0:  # the certificate proves nothing below p is reachable [derived: weighted average of excesses]
        total = sum(w for _, w in got.certificate)
        spread = sum(w * abs(game.exact(m)) for m, w in got.certificate)
        assert certificate_value(game, got.certificate) * total == p * spread
        assert z3_nearest(game, x, lambda m: (p - F(1, 1000)) * abs(game.exact(m))) is None
