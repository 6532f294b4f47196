"""Random games (3 to 7 players) -> the solution concepts keep their defining properties.

Independent oracles: Z3's optimiser over the rationals (least-core value and
a textbook sequential nucleolus), and brute-force sums over coalitions.
"""

from fractions import Fraction as F

from hypothesis import HealthCheck, given, settings, strategies as st

from pactlang.solutions import (certificate_value, kohlberg_check, least_core, nucleolus, shapley)
from solutions_oracle import brute_shapley, excesses, game_of, z3_least_core_value, z3_nucleolus

SETTINGS = settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@st.composite
def worth_lists(draw, min_n=3, max_n=7):
    n = draw(st.integers(min_n, max_n))
    kind = draw(st.sampled_from(["int", "decimal", "ties", "sized"]))
    if kind == "int":
        vals = st.integers(-10, 40)
    elif kind == "decimal":
        vals = st.decimals(min_value=-5, max_value=50, places=2).map(F)
    else:
        vals = st.sampled_from([0, 1, 2])  # many ties: degenerate programs
    ws = draw(st.lists(vals, min_size=2**n - 1, max_size=2**n - 1))
    if kind == "sized":
        ws = [w * bin(m).count("1") for m, w in enumerate(ws, start=1)]
    return [F(0)] + [F(w) for w in ws]


def games(min_n=3, max_n=7):
    return worth_lists(min_n, max_n).map(game_of)


@SETTINGS
@given(games())
def test_least_core_value_matches_z3_and_certificate_proves_it(game):
    lc = least_core(game)
    assert lc.value == z3_least_core_value(game)  # independent second solver
    # The payout attains the value (brute force over every coalition).
    assert sum(lc.payout) == game.exact(game.full)
    assert max(excesses(game, lc.payout).values()) == lc.value
    # The certificate: positive weights, balanced, proving exactly the value.
    assert all(w > 0 for _, w in lc.certificate)
    for i in range(game.n):
        assert sum(w for m, w in lc.certificate if m >> i & 1) == 1
    total = sum(w for _, w in lc.certificate)
    assert (sum(w * game.exact(m) for m, w in lc.certificate) - game.exact(game.full)) / total == lc.value
    assert certificate_value(game, lc.certificate) == lc.value


@SETTINGS
@given(games())
def test_prenucleolus_passes_kohlberg_and_attains_least_core_value(game):
    x = nucleolus(game, prenucleolus=True)
    assert kohlberg_check(game, x, prenucleolus=True)
    assert max(excesses(game, x).values()) == least_core(game).value


@SETTINGS
@given(games())
def test_nucleolus_passes_kohlberg(game):
    x = nucleolus(game)
    assert kohlberg_check(game, x)
    singles = [game.exact(1 << i) for i in range(game.n)]
    worst = max(excesses(game, x).values())
    lc = least_core(game)
    if sum(singles) <= game.exact(game.full):
        assert all(xi >= vi for xi, vi in zip(x, singles))  # an imputation
        assert worst >= lc.value
        if lc.value <= 0:  # then every least-core payout is an imputation
            assert worst == lc.value
    else:
        assert worst == lc.value  # prenucleolus
    # Unique: moving any amount between two players breaks the criterion.
    y = list(x)
    y[0] += F(1, 7)
    y[1] -= F(1, 7)
    assert not kohlberg_check(game, y)


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(games(3, 5), st.booleans())
def test_nucleolus_matches_textbook_sequence_in_z3(game, pre):
    if not pre and sum(game.exact(1 << i) for i in range(game.n)) > game.exact(game.full):
        pre = True
    assert nucleolus(game, prenucleolus=pre) == z3_nucleolus(game, prenucleolus=pre)


@SETTINGS
@given(games())
def test_shapley_efficiency_and_brute_force(game):
    phi = shapley(game)
    assert sum(phi) == game.exact(game.full)
    assert phi == brute_shapley(game)


@SETTINGS
@given(worth_lists())
def test_shapley_symmetry_and_null_player(ws):
    n = (len(ws) - 1).bit_length()
    swap = lambda m: (m & ~3) | ((m & 1) << 1) | ((m >> 1) & 1)
    sym = game_of([ws[min(m, swap(m))] for m in range(len(ws))])
    phi = shapley(sym)
    assert phi[0] == phi[1]
    last = 1 << (n - 1)
    null = game_of([ws[m & ~last] for m in range(len(ws))])
    assert shapley(null)[n - 1] == 0


@SETTINGS
@given(st.data())
def test_shapley_additivity(data):
    a = data.draw(worth_lists())
    n = (len(a) - 1).bit_length()
    b = data.draw(worth_lists(n, n))
    total = shapley(game_of([x + y for x, y in zip(a, b)]))
    assert total == [x + y for x, y in zip(shapley(game_of(a)), shapley(game_of(b)))]
