"""The checker against the brute-force oracle on random small agreements.

Both cost and value agreements, tables, formulas (with division by count(S)
to exercise the inexact path) and every kind of payout clause; also run with
tiny chunks so the chunked sweep is exercised on small games.
"""

from __future__ import annotations

from fractions import Fraction

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from oracle import oracle, specs
from pactlang.check import CheckOptions, check_model
from pactlang.load import load_text


def _compare(spec, low_bits=None):
    text = spec.text()
    model = load_text(text).model
    results = check_model(model, CheckOptions(top=5, low_bits=low_bits))
    expected = oracle(spec, top=5)
    assert len(results) == len(expected)
    for got, want in zip(results, expected):
        assert got.status == want["status"], (text, got)
        assert got.worst_excess == want["worst"], (text, got)
        got_cex = [(tuple(model.index(p) for p in c.coalition), c.excess) for c in got.counterexamples]
        assert got_cex == want["cex"], (text, got_cex, want["cex"])
        for c in got.counterexamples:
            mask = model.mask_of(c.coalition)
            assert c.worth == spec.worth(mask)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(specs())
def test_checker_equals_oracle(spec):
    _compare(spec)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(specs(min_n=4, max_n=7))
def test_checker_equals_oracle_in_small_chunks(spec):
    _compare(spec, low_bits=2)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.integers(1, 40), min_size=3, max_size=9), st.data())
def test_thresholds_hit_exactly_are_decided_exactly(weights, data):
    """A sum landing exactly on its threshold (weighted voting) is a tie the
    float bounds cannot split; the denominator bound must decide it exactly."""
    n = len(weights)
    subset = data.draw(st.lists(st.booleans(), min_size=n, max_size=n))
    quota = sum(w for w, s in zip(weights, subset) if s) or 1
    parties = "\n".join(f"party p{i}: votes {w}" for i, w in enumerate(weights))
    text = (f'agreement "votes"\nshares value\n{parties}\n'
            f"worth S = if sum(votes in S) >= {quota} then 100 else 0\n"
            "payout by proportional to votes\nrequire stable within 5\n")
    model = load_text(text).model
    (got,) = check_model(model, CheckOptions(low_bits=data.draw(st.sampled_from([None, 2]))))
    total = sum(weights)
    worth_all = 100 if total >= quota else 0
    best = None
    for mask in range(1, (1 << n) - 1):
        members = [i for i in range(n) if mask >> i & 1]
        votes = sum(weights[i] for i in members)
        e = (100 if votes >= quota else 0) - Fraction(worth_all * votes, total)
        best = e if best is None or e > best else best
    assert got.worst_excess == best
    assert got.status == ("fails" if best > 5 else "holds")


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(specs(max_n=6))
def test_game_floats_and_numerators_given_to_solvers_are_faithful(spec):
    """The solvers trust `Game.floats` to a small margin and `Game.scaled` exactly."""
    from pactlang.worths import Worths

    game = Worths(load_text(spec.text()).model).game()
    sign = -1 if spec.kind == "cost" else 1
    for mask in range(1, 1 << spec.n):
        exact = sign * spec.worth(mask)
        assert abs(Fraction(float(game.floats[mask])) - exact) <= Fraction(1, 10**9) * (1 + abs(exact))
        if game.scaled is not None:
            nums, den = game.scaled
            assert Fraction(int(nums[mask]), den) == exact


@settings(max_examples=200, deadline=None)
@given(st.fractions(), st.integers(1, 10**6))
def test_first_grid_point_above_is_the_least_multiple_strictly_above(value, grid):
    from pactlang.verdict_rules import first_grid_point_above

    point = first_grid_point_above(value, grid)
    assert (point * grid).denominator == 1
    assert value < point and not value < point - Fraction(1, grid)


def test_status_comes_from_the_worst_excess_and_disagreeing_searches_are_internal_errors():
    import pytest

    from pactlang.verdict_rules import status_of

    req = load_text('agreement "a"\nshares value\nparty a\nparty b\nworth S = 1\npayout by equal split\n'
                    "require stable within 0.333333\nrequire stable within 5%\n").model.requirements
    absolute, relative = req
    assert status_of(absolute, Fraction(1, 3), 1) == "fails"
    assert status_of(absolute, Fraction(1, 4), 0) == "holds"
    assert status_of(absolute, Fraction(1, 4), 0, budget_excess=Fraction(1)) == "fails"
    with pytest.raises(AssertionError, match="disagree"):
        status_of(absolute, Fraction(1, 3), 0)  # a worst excess above the bound but no violator found
    assert status_of(relative, Fraction(1, 3), 0) == "holds"  # a relative bound: the violators decide
