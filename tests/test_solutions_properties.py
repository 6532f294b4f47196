"""Random games (3 to 7 players) -> the solution concepts keep their defining properties.

Independent oracles: Z3's optimiser over the rationals (least-core value and
a textbook sequential nucleolus), and brute-force sums over coalitions.
"""

from contextlib import contextmanager
from fractions import Fraction as F
from unittest.mock import patch

import numpy as np
from hypothesis import HealthCheck, given, settings, strategies as st

from pactlang.game import Game
from pactlang.solutions import (certificate_value, kohlberg_check, least_core, nucleolus, shapley)
from pactlang.solutions import kohlberg
from pactlang.solutions.exact import simplex
from pactlang.solutions.masks import subset_sums
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


# -- the Kohlberg check's float-guided LPs against the exact simplex ---------------
@contextmanager
def exact_simplex_only():
    """Kohlberg's balancedness LPs decided by the Fraction simplex alone (the old path)."""
    with patch.object(kohlberg, "_decided_by_highs", lambda a, b: (None, None)):
        yield


@st.composite
def integer_systems(draw):
    m = draw(st.integers(1, 5))
    k = draw(st.integers(1, 9))
    entry = st.integers(-3, 3)
    a = draw(st.lists(st.lists(entry, min_size=k, max_size=k), min_size=m, max_size=m))
    b = draw(st.lists(st.integers(-6, 6), min_size=m, max_size=m))
    return a, b


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(integer_systems())
def test_highs_decision_with_exact_proof_agrees_with_exact_simplex(system):
    a, b = system
    truth = simplex(a, b, [0] * len(a[0])).status == "optimal"
    # Small integer systems are always decided from HiGHS's basis, with the exact proof.
    got, farkas = kohlberg._decided_by_highs(np.array(a, dtype=np.int64), b)
    assert got == truth
    if farkas is not None:  # p.A_j <= 0 for every column and p.b > 0: no y >= 0 solves A y = b
        assert all(sum(p * row[j] for p, row in zip(farkas, a)) <= 0 for j in range(len(a[0])))
        assert sum(p * v for p, v in zip(farkas, b)) > 0
    assert kohlberg.has_nonnegative_solution(a, b) == truth
    assert kohlberg.has_nonnegative_solution(a, b, use_floats=False) == truth


def test_highs_decides_both_ways_with_a_proof():
    decide = lambda a, b: kohlberg._decided_by_highs(np.array(a, dtype=np.int64), b)
    # y >= 0 with y0 + y1 = 2, y0 - y1 = 0: y = (1, 1).
    assert decide([[1, 1], [1, -1]], [2, 0]) == (True, None)
    # y0 + y1 = -1 has no solution with y >= 0 (Farkas: p = (-1)).
    assert decide([[1, 1]], [-1]) == (False, [-1])
    # Dependent rows (the second is twice the first) and an unused column.
    assert decide([[1, 2, 0], [2, 4, 0]], [3, 6]) == (True, None)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.integers(1, 4), st.lists(st.lists(st.integers(-2, 2), min_size=4, max_size=4), min_size=1, max_size=60),
       st.lists(st.integers(-8, 8), min_size=4, max_size=4))
def test_column_generation_agrees_with_exact_simplex(dim, cols, b):
    """Few columns per program (patched) so that Farkas vectors must be refuted and columns added."""
    cols = np.array([c[:dim] for c in cols], dtype=np.int64)
    b = b[:dim]
    with patch.object(kohlberg, "FIRST_COLUMNS", 2), patch.object(kohlberg, "ADD_COLUMNS", 1):
        fast = kohlberg.cone_contains(cols, b)
    assert fast == kohlberg.cone_contains(cols, b, use_floats=False)


@SETTINGS
@given(games(3, 6), st.integers(0, 3), st.fractions(-3, 3, max_denominator=5))
def test_kohlberg_check_same_with_highs_and_with_exact_simplex(game, i, delta):
    i %= game.n
    x = nucleolus(game)
    pre = nucleolus(game, prenucleolus=True)
    lc = least_core(game).payout
    moved = list(x)
    moved[i] += delta
    moved[(i + 1) % game.n] -= delta
    for y, p in [(x, None), (pre, True), (lc, None), (lc, True), (moved, None), (moved, True)]:
        fast = kohlberg_check(game, y, prenucleolus=p)
        with exact_simplex_only():
            assert kohlberg_check(game, y, prenucleolus=p) == fast
    assert kohlberg_check(game, x) and kohlberg_check(game, pre, prenucleolus=True)


# -- weighted voting at 16 parties: outcomes only (no timing) -----------------------
def voting_game(votes, quota, worth=1000):
    """v(S) = worth when the votes in S reach the quota, else 0 (built with numpy)."""
    n = len(votes)
    sums = subset_sums([int(v) for v in votes], np.int64)
    nums = np.where(sums >= quota, worth, 0).astype(np.int64)
    return Game(n, lambda m: F(int(nums[m])), nums.astype(np.float64), (nums, 1), tuple(f"p{i}" for i in range(n)))


def test_voting_16_symmetric_players_and_a_null_player():
    # Fifteen parties with 2 votes and one with 1, quota 16: the last can never
    # turn a losing coalition into a winning one (sums of 2s are even), so it is
    # a null player. [derived] The nucleolus and the Shapley value both give a
    # null player its worth alone (0) and symmetric players equal shares
    # (Schmeidler 1969; Shapley 1953), so each 2-vote party gets 1000/15.
    game = voting_game([2] * 15 + [1], 16)
    expected = [F(1000, 15)] * 15 + [F(0)]
    decided = []
    real = kohlberg._decided_by_highs

    def recording(a, b):
        got = real(a, b)
        decided.append(got[0])
        return got

    with patch.object(kohlberg, "_decided_by_highs", recording):
        assert nucleolus(game) == expected
    assert decided and None not in decided  # every LP decided by HiGHS with an exact proof
    assert shapley(game) == expected


def test_voting_17_uneven_nucleolus_passes_and_a_moved_payout_fails():
    votes = [31, 29, 23, 19, 17, 13, 11, 7, 5, 3, 2, 2, 1, 1, 1, 1, 1]
    game = voting_game(votes, sum(votes) // 2 + 1)
    x = nucleolus(game)
    assert sum(x) == 1000 and all(v >= 0 for v in x)
    assert kohlberg_check(game, x)
    y = list(x)
    y[0] += F(1, 7)
    y[1] -= F(1, 7)
    assert not kohlberg_check(game, y)
    with exact_simplex_only():
        assert not kohlberg_check(game, y)
