"""Canonical games with published answers -> every solution concept, exactly.

Each expected number names its source with the tag from references.md.
"""

from fractions import Fraction as F

import pytest

from pactlang.solutions import (certificate_value, kohlberg_check, least_core, nucleolus, shapley)
from solutions_oracle import excesses, game_from, game_of, z3_least_core_value, z3_nucleolus


def bankruptcy(estate, claims=(100, 200, 300)):
    # v(S) = max(0, E - claims of those outside S)
    total = sum(claims)
    return game_from(len(claims), lambda s: max(0, estate - (total - sum(claims[i] for i in s))))


@pytest.mark.parametrize("estate, expected", [
    (100, [F(100, 3)] * 3),
    (200, [F(50), F(75), F(75)]),
    (300, [F(50), F(100), F(150)]),
])
def test_bankruptcy_nucleolus(estate, expected):
    # Aumann & Maschler (1985), J. Economic Theory 36(2):195-213, claims 100/200/300 [read]
    game = bankruptcy(estate)
    x = nucleolus(game)
    assert x == expected
    assert kohlberg_check(game, x)


def test_bankruptcy_shapley_at_200():
    # Aumann & Maschler (1985) game at E = 200; Shapley (33 1/3, 83 1/3, 83 1/3) [derived]:
    # only v(23) = 100 and v(N) = 200 are nonzero, so phi_1 = v(N) - v(23) over 3 orders
    # = 100/3, and phi_2 = phi_3 = (200 - 100/3) / 2.
    assert shapley(bankruptcy(200)) == [F(100, 3), F(250, 3), F(250, 3)]


def runway(needs=(8, 11, 13, 18)):
    # A cost game c(S) = the largest need in S, handed over negated (value form).
    return game_from(len(needs), lambda s: -max(needs[i] for i in s))


def test_runway_shapley():
    # Littlechild & Owen (1973), Management Science 20(3):370-372, needs 8/11/13/18 ->
    # Shapley (2, 3, 4, 9) [read]; negated because the game is a cost game.
    assert shapley(runway()) == [F(-2), F(-3), F(-4), F(-9)]


def test_runway_nucleolus():
    # Nucleolus (3.25, 3.25, 3.25, 8.25) [derived; recursion of Littlechild (1974), memory]
    game = runway()
    x = nucleolus(game)
    assert [-v for v in x] == [F("3.25"), F("3.25"), F("3.25"), F("8.25")]
    assert kohlberg_check(game, x)


def glove():
    # players 0 and 1 hold a right glove each, player 2 a left glove; a pair earns 1
    return game_from(3, lambda s: min(sum(1 for i in s if i < 2), 1 if 2 in s else 0))


def test_glove_market():
    # Shapley (1/6, 1/6, 2/3) [read: encyclopedia entry on the Shapley value];
    # core = nucleolus = {(0, 0, 1)} [derived]
    game = glove()
    assert shapley(game) == [F(1, 6), F(1, 6), F(2, 3)]
    assert nucleolus(game) == [0, 0, 1]
    lc = least_core(game)
    assert lc.value == 0  # the core is not empty and (0, 0, 1) has e({0,2}) = 0 [derived]


def test_three_party_majority():
    # Any two earn 1, one alone 0: least-core value 1/3, least core = nucleolus = (1/3,1/3,1/3)
    # [practice; standard textbook example]
    game = game_from(3, lambda s: 1 if len(s) >= 2 else 0)
    lc = least_core(game)
    assert lc.value == F(1, 3)
    assert lc.payout == [F(1, 3)] * 3
    # The three pairs with weight 1/2 each are the balanced collection that proves it [derived]
    assert sorted(lc.certificate) == [(0b011, F(1, 2)), (0b101, F(1, 2)), (0b110, F(1, 2))]
    assert certificate_value(game, lc.certificate) == F(1, 3)
    assert nucleolus(game) == [F(1, 3)] * 3
    assert shapley(game) == [F(1, 3)] * 3  # symmetry [practice]


def four_party():
    pairs = {(0, 1): 1, (0, 2): 1, (1, 3): 1, (2, 3): 1, (0, 3): 0, (1, 2): 0}

    def worth(s):
        if len(s) <= 1:
            return 0
        if len(s) == 2:
            return pairs[s]
        if len(s) == 3:
            return 2 if s == (0, 1, 2) else 1
        return 2

    return game_from(4, worth)


def test_four_party():
    # Myerson (1991), Game Theory: Analysis of Conflict, ch. 9 [memory]: core = nucleolus =
    # (0, 1, 1, 0), Shapley (7/12, 7/12, 7/12, 1/4) [derived]
    game = four_party()
    assert nucleolus(game) == [0, 1, 1, 0]
    assert shapley(game) == [F(7, 12), F(7, 12), F(7, 12), F(1, 4)]
    lc = least_core(game)
    assert lc.value == 0  # the core is the single point above [derived]
    assert lc.payout == [0, 1, 1, 0]


@pytest.mark.parametrize("make", [lambda: bankruptcy(100), lambda: bankruptcy(200), lambda: bankruptcy(300),
                                  runway, glove, four_party])
def test_least_core_against_z3(make):
    # Independent second solver: Z3's optimiser over the rationals, every coalition a row.
    game = make()
    lc = least_core(game)
    assert lc.value == z3_least_core_value(game)
    assert certificate_value(game, lc.certificate) == lc.value
    assert sum(lc.payout) == game.exact(game.full)
    assert max(excesses(game, lc.payout).values()) == lc.value


def test_round_fixing_trap():
    # A prenucleolus where the first round's optimum is not unique: fixing every coalition
    # that is tight in the solution found (a trap listed by Guajardo & Jornsten (2015),
    # EJOR 241(3) [memory]) led a float sequence to (1, 1/3, -2/3, 1/3). Fixing only rows
    # with a positive dual gives (7/6, 1/6, -2/3, 1/3), which the textbook sequence in Z3
    # confirms and Kohlberg's criterion accepts [derived].
    game = game_of([0, 2, 0, 3, 1, 0, 1, 0, 2, 3, 1, 3, 0, 1, 0, 1])
    x = nucleolus(game)
    assert x == [F(7, 6), F(1, 6), F(-2, 3), F(1, 3)]
    assert x == z3_nucleolus(game, prenucleolus=True)
    assert kohlberg_check(game, x)
    assert not kohlberg_check(game, [F(1), F(1, 3), F(-2, 3), F(1, 3)])
