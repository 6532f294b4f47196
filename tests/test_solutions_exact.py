"""The exact machinery under the solvers -> correct on its own: rational algebra, the
Fraction simplex, exact excess tables in every mode, and the fallbacks the LP engine
uses when floating point cannot be confirmed."""

from fractions import Fraction as F

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from pactlang.game import Game
from pactlang.solutions import kohlberg_check, least_core, nucleolus, shapley
from pactlang.solutions import lp
from pactlang.solutions.exact import Span, exact_lp, null_space, simplex, solve
from pactlang.solutions.excess import ExcessTable
from pactlang.solutions.masks import ChunkedSums, in_span_masks, subset_sums
from solutions_oracle import brute_shapley, excesses, game_from, game_of, z3_least_core_value

SETTINGS = settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def without_table(game: Game) -> Game:
    """The same game with no integer table: solvers must use the float-margin path."""
    return Game(game.n, game.exact, game.floats, None, game.names)


def majority3():
    return game_from(3, lambda s: 1 if len(s) >= 2 else 0)


def test_solve_and_singular():
    assert solve([[2, 1], [1, 3]], [3, 5]) == [F(4, 5), F(7, 5)]
    assert solve([[1, 2], [2, 4]], [1, 2]) is None


def test_span_and_null_space():
    span = Span(3)
    assert span.add([1, 1, 1]) and span.add([1, 1, 0])
    assert not span.add([0, 0, 5])
    assert span.contains([2, 2, 7]) and not span.contains([1, 0, 0])
    kern = span.kernel()
    assert kern == [[1, -1, 0]] or kern == [[-1, 1, 0]]
    assert null_space([[1, 2, 3]], 3) == [[-2, 1, 0], [-3, 0, 1]]


def test_simplex_terminates_on_beale_cycling_example():
    # Beale's classic cycling example [memory]; Bland's rule must reach the optimum -5/4,
    # which scipy's HiGHS confirms in floats below.
    a = [[1, 0, 0, F(1, 4), -8, -1, 9], [0, 1, 0, F(1, 2), -12, F(-1, 2), 3], [0, 0, 1, 0, 0, 1, 0]]
    c = [0, 0, 0, F(-3, 4), 20, F(-1, 2), 6]
    res = simplex(a, [0, 0, 1], c)
    assert res.status == "optimal" and res.value == F(-5, 4)
    from scipy.optimize import linprog
    ref = linprog([float(v) for v in c], A_eq=[[float(v) for v in r] for r in a], b_eq=[0, 0, 1], bounds=(0, None))
    assert abs(ref.fun - float(res.value)) < 1e-9


def test_simplex_infeasible_and_unbounded():
    assert simplex([[1, 1]], [-1], [0, 0]).status == "infeasible"
    assert simplex([[1, -1]], [0], [-1, 0]).status == "unbounded"


@SETTINGS
@given(st.lists(st.lists(st.integers(-3, 3), min_size=3, max_size=3), min_size=4, max_size=8),
       st.lists(st.integers(0, 5), min_size=8, max_size=8))
def test_exact_lp_optimality_conditions(coeffs, rhs):
    # Bounded by |z_j| <= 10 rows; check KKT exactly and compare with HiGHS in floats.
    rows = [(tuple(F(v) for v in c), F(b), False) for c, b in zip(coeffs, rhs)]
    for j in range(3):
        for s in (1, -1):
            rows.append((tuple(F(s if k == j else 0) for k in range(3)), F(10), False))
    objective = [F(1), F(-2), F(1)]
    got = exact_lp(objective, rows)
    from scipy.optimize import linprog
    ref = linprog([float(v) for v in objective], A_ub=[[float(v) for v in r[0]] for r in rows],
                  b_ub=[float(r[1]) for r in rows], bounds=(None, None))
    if ref.status == 2:
        assert got is None
        return
    z, mult = got
    for (c, b, _), m in zip(rows, mult):
        lhs = sum(ci * zi for ci, zi in zip(c, z))
        assert lhs <= b and m >= 0 and (m == 0 or lhs == b)
    for j in range(3):
        assert objective[j] + sum(m * r[0][j] for r, m in zip(rows, mult)) == 0
    assert abs(float(sum(o * v for o, v in zip(objective, z))) - ref.fun) < 1e-7


def test_chunked_sums_match_plain_sums(monkeypatch):
    monkeypatch.setattr("pactlang.solutions.masks.CHUNK_BITS", 3)
    vals = [3, -1, 4, 1, -5, 9]
    sums = ChunkedSums(vals, np.int64)
    got = np.concatenate([c for _, c in sums.chunks()])
    assert got.tolist() == subset_sums(vals, np.int64).tolist()
    assert got.tolist() == [sum(v for i, v in enumerate(vals) if m >> i & 1) for m in range(64)]


def test_in_span_masks_is_exact():
    # The span of N and {0,1} in 3 players: N, {0,1} and {2} lie in it, nothing else.
    span = Span(3)
    span.add([1, 1, 1])
    span.add([1, 1, 0])
    inside = in_span_masks(span.kernel(), 3)
    assert np.flatnonzero(inside).tolist() == [0, 3, 4, 7]


@SETTINGS
@given(st.integers(2, 5).flatmap(lambda n: st.tuples(
    st.lists(st.integers(-20, 20), min_size=2**n - 1, max_size=2**n - 1),
    st.lists(st.fractions(min_value=-5, max_value=5, max_denominator=7), min_size=n, max_size=n))))
def test_excess_table_all_modes_agree_with_brute_force(data):
    ws, x = data
    game = game_of([0] + ws)
    want = excesses(game, x)
    levels = sorted(set(want.values()), reverse=True)
    for g in (game, without_table(game)):
        table = ExcessTable(g, x)
        got = list(table.levels())
        assert [lv for lv, _ in got] == levels
        assert all(sorted(ms) == sorted(m for m, e in want.items() if e == lv) for lv, ms in got)
        cut = levels[len(levels) // 2]
        assert sorted(m for m, _ in table.above(cut)) == sorted(m for m, e in want.items() if e > cut)
        assert sorted(m for m, _ in table.above(cut, strict=False)) == sorted(m for m, e in want.items() if e >= cut)


def test_excess_table_switches_to_python_integers_near_overflow():
    # Worths near 2**60 with a payout over 3**5: int64 would overflow, object arrays do not.
    big = 2**60
    game = game_from(3, lambda s: big - len(s))
    x = [F(big, 3) + F(1, 243), F(big, 3), F(big, 3) - F(1, 243)]
    x[2] += game.exact(7) - sum(x)
    table = ExcessTable(game, x)
    assert table.mode == "arrays" and table._dtype is object
    assert dict((m, e) for lv, ms in table.levels() for m in ms for e in [lv]) == excesses(game, x)


def test_games_without_integer_table_give_the_same_answers():
    for game in (majority3(), game_from(4, lambda s: len(s) ** 2 - (3 in s)),
                 game_of([0, 1, 2, 5, 3, 4, 6, 10])):
        bare = without_table(game)
        assert least_core(bare) == least_core(game)
        assert nucleolus(bare) == nucleolus(game)
        assert kohlberg_check(bare, nucleolus(game))
        assert shapley(bare) == shapley(game)


def test_huge_worths_have_no_integer_table_and_still_solve():
    game = game_from(4, lambda s: 10**30 * len(s) ** 2 + sum(s))
    assert game.scaled is None
    lc = least_core(game)
    assert lc.value == z3_least_core_value(game)
    assert kohlberg_check(game, nucleolus(game))
    assert shapley(game) == brute_shapley(game)


def test_shapley_many_digit_numerators():
    # Numerators near 2**61 are cut into several digits for exact float sums.
    game = game_from(5, lambda s: (2**61 - 12345) * (len(s) % 3) - sum(s) * 2**40)
    assert game.scaled is not None
    assert shapley(game) == brute_shapley(game)


@SETTINGS
@given(st.integers(3, 5).flatmap(lambda n: st.lists(st.sampled_from([0, 1, 2, 5]), min_size=2**n - 1,
                                                   max_size=2**n - 1)))
def test_exact_fallback_gives_the_same_optimum(ws):
    game = game_of([0] + ws)
    want_lc, want_nu = least_core(game), nucleolus(game)
    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(lp._Solver, "recover", lambda self, *a: None)
        got_lc = least_core(game)
        assert got_lc.value == want_lc.value
        assert nucleolus(game) == want_nu


def test_unverifiable_answer_raises(monkeypatch):
    # If the exact check of a proposed optimum failed, the engine must raise, never return it.
    monkeypatch.setattr(lp._Solver, "recover", lambda self, *a: None)
    monkeypatch.setattr(lp._Solver, "pair_ok", lambda self, *a: False)
    with pytest.raises(lp.SolverError):
        least_core(majority3())


def test_least_core_needs_two_players():
    with pytest.raises(ValueError):
        least_core(game_of([0, 5]))
    assert nucleolus(game_of([0, 5])) == [5]
    assert shapley(game_of([0, 5])) == [5]


@settings(max_examples=10, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.integers(3, 5).flatmap(lambda n: st.lists(st.sampled_from([0, 1, 2, 5]), min_size=2**n - 1,
                                                   max_size=2**n - 1)))
def test_multipliers_found_on_the_dual_support(ws):
    # When a basis cannot carry HiGHS's multipliers (degenerate optima), they are found
    # on the rows with positive float dual by the exact phase-1 simplex: force that path.
    game = game_of([0] + ws)
    want_lc, want_nu = least_core(game), nucleolus(game)
    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(lp._Solver, "_dual_from_basis", lambda self, *a: None)
        assert least_core(game).value == want_lc.value
        assert nucleolus(game) == want_nu


# -- the one door to HiGHS ------------------------------------------------------------
def test_highs_lp_point_duals_and_basis_match_linprog():
    from scipy.optimize import linprog
    from scipy.sparse import csr_matrix

    from pactlang.solutions import highs

    c = [1.0, 2.0, 3.0]
    a_ub, b_ub = np.array([[-1.0, -1.0, 0.0], [-1.0, 0.0, -1.0]]), [-2.0, -1.0]
    a_eq, b_eq = np.array([[1.0, 1.0, 1.0]]), [3.0]
    ref = linprog(c, A_ub=a_ub, b_ub=b_ub, A_eq=a_eq, b_eq=b_eq, method="highs-ds")
    a = np.vstack([a_ub, a_eq])
    for form in (a, csr_matrix(a), (a[a != 0], np.nonzero(a))):
        got = highs.solve(c, form, [-np.inf, -np.inf, 3.0], [-2.0, -1.0, 3.0], 0.0, None)
        assert got.status == "optimal"
        assert np.allclose(got.x, ref.x) and np.isclose(got.objective, ref.fun)
        # linprog's marginals are HiGHS's row duals; its residuals are b_ub - A_ub x.
        assert np.allclose(got.row_dual, np.r_[ref.ineqlin.marginals, ref.eqlin.marginals])
        assert np.allclose(np.array(b_ub) - got.row_value[:2], ref.ineqlin.residual)
        assert got.col_basic.sum() + got.row_basic.sum() == 3  # a basis: one basic variable per row


def test_highs_statuses_and_integer_programs():
    from pactlang.solutions import highs

    assert highs.solve([0.0, 0.0], np.array([[1.0, 1.0]]), [3.0], [2.0]).status == "infeasible"
    assert highs.solve([-1.0, 0.0], np.array([[1.0, 1.0]]), [3.0], None).status == "unbounded"
    # max x0 + x1 with x0 + 2 x1 <= 2, 3 x0 + x1 <= 3, integers: (1, 0) or (0, 1), value 1.
    got = highs.solve([-1.0, -1.0], np.array([[1.0, 2.0], [3.0, 1.0]]), None, [2.0, 3.0], integrality=[1, 1],
                      options={"mip_rel_gap": 0.0})
    assert got.status == "optimal" and got.objective == -1.0 and sorted(got.x.round()) == [0.0, 1.0]
    with pytest.raises(ValueError, match="rejects option"):
        highs.solve([1.0], np.array([[1.0]]), [0.0], None, options={"no such option": 1})


def test_highs_reached_without_importing_scipy_optimize():
    import subprocess
    import sys

    # Loaded from its file (the package's __init__ imports the LP engine, which still uses linprog).
    code = ("import importlib.util, sys\n"
            "spec = importlib.util.spec_from_file_location('h', 'pactlang/solutions/highs.py')\n"
            "h = importlib.util.module_from_spec(spec); sys.modules['h'] = h; spec.loader.exec_module(h)\n"
            "assert h.solve([1.0], [[1.0]], [1.0], None).status == 'optimal'\n"
            "print('scipy.optimize' in sys.modules)\n")
    root = __file__.rsplit("/tests/", 1)[0]
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=root, check=True)
    assert out.stdout.strip() == "False"


# -- fraction-free elimination ----------------------------------------------------------
small_fractions = st.fractions(-6, 6, max_denominator=4)


@settings(max_examples=200, deadline=None)
@given(st.integers(1, 6).flatmap(lambda k: st.tuples(
    st.lists(st.lists(small_fractions | st.just(F(0)), min_size=k, max_size=k), min_size=k, max_size=k),
    st.lists(small_fractions, min_size=k, max_size=k))))
def test_square_solve_is_exact_or_reports_singular(system):
    a, b = system
    x = solve(a, b)
    if x is None:
        assert null_space(a, len(a))  # singular: a nonzero kernel vector exists
    else:
        assert all(sum(r * v for r, v in zip(row, x)) == rhs for row, rhs in zip(a, b))
        assert not null_space(a, len(a))


@settings(max_examples=200, deadline=None)
@given(st.integers(1, 7).flatmap(lambda n: st.tuples(
    st.just(n), st.lists(st.lists(st.integers(-3, 3), min_size=n, max_size=n), max_size=6))))
def test_null_space_is_an_integer_basis_of_the_kernel(data):
    n, rows = data
    basis = null_space(rows, n)
    span = Span(n)
    rank = sum(1 for r in rows if span.add(r))
    assert len(basis) == n - rank
    assert all(isinstance(v, int) for vec in basis for v in vec)
    assert all(sum(r * v for r, v in zip(row, vec)) == 0 for row in rows for vec in basis)
    independent = Span(n)
    assert all(independent.add(vec) for vec in basis)
    assert span.kernel() == basis and span.kernel() is not span.kernel()  # cached, handed out as copies


def test_excess_levels_in_batches_match_a_full_sort():
    # 2**13 - 2 coalitions with many distinct excesses and ties: the levels come in
    # several doubling batches, and must equal grouping a full sort.
    rng = np.random.default_rng(5)
    n = 13
    nums = rng.integers(0, 60, size=1 << n).astype(np.int64)
    nums[0] = 0
    game = Game(n, lambda m: F(int(nums[m])), nums.astype(np.float64), (nums, 1), tuple(f"p{i}" for i in range(n)))
    x = [F(int(v), 3) for v in rng.integers(0, 40, size=n)]
    got = list(ExcessTable(game, x).levels())
    brute: dict = {}
    for m in range(1, (1 << n) - 1):
        e = F(int(nums[m])) - sum((x[i] for i in range(n) if m >> i & 1), F(0))
        brute.setdefault(e, []).append(m)
    assert got == sorted(brute.items(), key=lambda p: -p[0])
    assert len(got) > 300
