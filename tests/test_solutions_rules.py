"""A game -> equal split, proportional and separable costs remaining benefits, exactly."""

from fractions import Fraction as F

import pytest

from pactlang.solutions import NotApplicable, equal_split, proportional, separable_costs_remaining_benefits
from solutions_oracle import game_of

# An invented three-party cost game, listed by mask: c1=10, c2=12, c12=18, c3=8, c13=15, c23=16, cN=22.
COSTS = [0, 10, 12, 18, 8, 15, 16, 22]


def test_equal_split_and_proportional():
    game = game_of([0, 1, 2, 5, 3, 4, 6, 12])
    assert equal_split(game) == [4, 4, 4]
    assert proportional(game, [1, 2, 3]) == [2, 4, 6]
    assert proportional(game, [F("0.5"), 0, F("1.5")]) == [3, 0, 9]


def test_proportional_rejects_zero_total_and_wrong_length():
    game = game_of([0, 1, 2, 5])
    with pytest.raises(NotApplicable, match="sum to zero"):
        proportional(game, [1, -1])
    with pytest.raises(ValueError):
        proportional(game, [1, 2, 3])


def test_scrb_cost_example():
    # Separable costs remaining benefits [practice; formula in references.md], by hand
    # [derived]: s = (22-16, 22-15, 22-18) = (6, 7, 4), r = c({i}) - s = (4, 5, 4), the
    # non-separable 22 - 17 = 5 is shared 4:5:4, so x = (98/13, 116/13, 72/13).
    value_form = game_of([-c for c in COSTS])
    pays = [-v for v in separable_costs_remaining_benefits(value_form)]
    assert pays == [F(98, 13), F(116, 13), F(72, 13)]
    assert sum(pays) == 22


def test_scrb_value_form_is_the_cost_formula_after_negation():
    # The value-form formula applied to v = -c equals minus the cost formula applied to c.
    s = [22 - 16, 22 - 15, 22 - 18]
    r = [COSTS[1 << i] - s[i] for i in range(3)]
    cost = [si + (22 - sum(s)) * F(ri, sum(r)) for si, ri in zip(s, r)]
    assert separable_costs_remaining_benefits(game_of([-c for c in COSTS])) == [-c for c in cost]


def test_scrb_not_applicable_when_remaining_benefits_cancel():
    # v(N) = 0, v(N minus i) = 1 so s = (-1,-1,-1); v({i}) = (0,-2,-1) so r = (1,-1,0):
    # sum r = 0 while v(N) - sum s = 3 remains to share.
    ws = [0, 0, -2, 1, -1, 1, 1, 0]
    with pytest.raises(NotApplicable, match="remaining benefits"):
        separable_costs_remaining_benefits(game_of(ws))


def test_scrb_zero_remaining_benefits_and_nothing_left():
    # Additive game: every s_i = v({i}), r = 0 and nothing remains: x = s.
    ws = [0, 1, 2, 3, 4, 5, 6, 7]
    assert separable_costs_remaining_benefits(game_of(ws)) == [1, 2, 4]
