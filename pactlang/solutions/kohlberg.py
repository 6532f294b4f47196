"""A game and a payout -> whether the payout is the (pre)nucleolus, by Kohlberg's criterion, exactly.

Kohlberg: an efficient x is the prenucleolus iff for every level a the
coalitions D(a) with excess >= a form a balanced collection (weights > 0
giving every player total 1). For the nucleolus x must be an imputation and
the singletons Z = {{i} : x_i = v({i})} may join each collection with
weights >= 0.

Levels are visited from the largest excess down. Once D(a') passed for every
higher level, any direction z with z(N) = 0 that keeps D(a) from worsening is
orthogonal to the span V of N and the earlier collections, so a level only
needs: positive weights w on its coalitions outside V and u >= 0 on Z with
sum w_S 1_S + sum u_i e_i in V. Each level that passes with a coalition
outside V raises dim V, so at most n - 1 levels need an LP.

Each such LP (is there y >= 0 with A y = b?) is decided by HiGHS in floats
and proved exactly from the basis it ends on: either the basic solution,
recomputed in Fractions, is a nonnegative solution, or the basis's dual
vector p, recomputed in Fractions, is a Farkas certificate (p.A_j <= 0 for
every column, p.b > 0). A level of a voting game can hold close to a
million coalitions, so columns are generated: a Farkas vector is tested
exactly against every column and the ones it fails join the next program.
Only when no proof goes through does the dense exact simplex decide.
"""

from __future__ import annotations

from fractions import Fraction
from math import gcd
from typing import Sequence

import numpy as np

from ..game import Game
from . import highs
from .exact import Span, simplex, solve
from .excess import ExcessTable
from .masks import bits, member_matrix


def _kernel_matrix(span: Span) -> np.ndarray:
    kern = span.kernel()
    big = any(abs(v) >= 2**40 for row in kern for v in row)
    return np.array(kern, dtype=object if big else np.int64)


def _grow(span: Span, masks: np.ndarray, n: int) -> np.ndarray:
    """Add every coalition of `masks` to the span; return the new kernel matrix.

    Floats only pick which coalitions to add (greedy Gram-Schmidt, largest
    residual first, finds independent ones); the loop ends when the exact
    kernel test shows that every coalition lies in the span.
    """
    while True:
        kern = _kernel_matrix(span)
        if span.rank == n:
            return kern
        proj = member_matrix(masks, n, kern.dtype) @ kern.T
        nz = np.flatnonzero(np.any(proj != 0, axis=1))
        if not len(nz):
            return kern
        for k in _independent_rows(proj[nz].astype(np.float64)):
            span.add(bits(int(masks[nz[k]]), n))


def _independent_rows(rows: np.ndarray) -> list[int]:
    """Indices of rows that look linearly independent in floats (at least one).

    Column-pivoted QR by hand: take the row with the largest residual, project
    it out of the others, repeat while a residual stays above noise.
    """
    res = rows.copy()
    norms = np.einsum("ij,ij->i", res, res)
    first = float(norms.max())
    picked: list[int] = []
    while len(picked) < rows.shape[1]:
        k = int(np.argmax(norms))
        if picked and norms[k] <= 1e-18 * first:
            break
        picked.append(k)
        q = res[k] / np.sqrt(norms[k])
        res -= np.outer(res @ q, q)
        norms = np.einsum("ij,ij->i", res, res)
        norms[picked] = -1.0
    return picked


_SAFE = 2**62
FIRST_COLUMNS = 2000  # columns in the first HiGHS program of a level
ADD_COLUMNS = 2000  # columns added per round of column generation
MAX_ROUNDS = 60


def _balanced(level: np.ndarray, zero: np.ndarray) -> bool:
    """Weights w > 0 on the rows of `level` and u >= 0 on the rows of `zero` summing to zero?

    Rows are integer vectors (coalitions seen modulo V, one row per coalition).
    With w = 1 + y the question is whether b = -(sum of the level's rows)
    lies in the cone of all the rows: `cone_contains`.
    """
    if level.dtype != object and np.abs(level).max(initial=0) * len(level) >= _SAFE:
        level = level.astype(object)
    b = -level.sum(axis=0)
    if not any(b):
        return True  # w = 1 everywhere (e.g. coalitions paired with their complements)
    cols = np.concatenate([level, zero.astype(level.dtype)]) if len(zero) else level
    return cone_contains(cols, [int(v) for v in b])


def cone_contains(cols: np.ndarray, b: list[int], use_floats: bool = True) -> bool:
    """Whether b = sum y_j cols[j] for some y >= 0 (integer rows `cols`, one per column), exactly.

    With `use_floats`: column generation with HiGHS. A program on some of the
    columns either has a solution, proved exactly (then so has the whole), or
    a Farkas vector p, proved exactly on those columns (p.q <= 0, p.b > 0);
    p is then tested exactly against every column, and the columns it fails
    join the program. When a round gives no proof, or without `use_floats`,
    the exact simplex decides (on the distinct columns).
    """
    k = len(cols)
    if use_floats and k:
        chosen = _first_columns(cols, b)
        for _ in range(MAX_ROUNDS):
            got, p = _decided_by_highs(cols[chosen].T, b)
            if got is None:
                break
            if got:
                return True
            bad = np.flatnonzero(_dots(cols, p) > 0)
            if not len(bad):
                return False
            fresh = np.setdiff1d(bad, chosen)
            if not len(fresh):
                break  # HiGHS's certificate failed on its own columns; should not happen
            chosen = np.union1d(chosen, fresh[:ADD_COLUMNS])
    distinct = list(dict.fromkeys(tuple(int(v) for v in row) for row in cols.tolist()))
    dim = len(b)
    a = [[c[r] for c in distinct] for r in range(dim)]
    return simplex(a, b, [0] * len(distinct)).status == "optimal"


def has_nonnegative_solution(a: list[list[int]], b: list[int], use_floats: bool = True) -> bool:
    """Whether some y >= 0 has a y = b (integer a given by rows, b), exactly; see `cone_contains`."""
    return cone_contains(np.array(a, dtype=object).T.copy(), [int(v) for v in b], use_floats)


def _first_columns(cols: np.ndarray, b: list[int]) -> np.ndarray:
    """All columns when few; else those pointing most along b, and a spread of the rest."""
    k = len(cols)
    if k <= FIRST_COLUMNS:
        return np.arange(k)
    score = cols.astype(np.float64) @ np.array(b, dtype=np.float64)
    best = np.argpartition(score, k - FIRST_COLUMNS // 2)[k - FIRST_COLUMNS // 2:]
    spread = np.linspace(0, k - 1, FIRST_COLUMNS // 2).astype(np.int64)
    return np.union1d(best, spread)


def _dots(cols: np.ndarray, p: list[int]) -> np.ndarray:
    """Exact cols @ p (int64 when it cannot overflow, else Python ints)."""
    big = max((abs(v) for v in p), default=0) * (np.abs(cols).max(initial=0) if cols.dtype != object
                                                 else max((abs(int(v)) for v in cols.flat), default=0))
    if cols.dtype != object and big * len(p) < _SAFE:
        return cols @ np.array(p, dtype=np.int64)
    return cols.astype(object) @ np.array(p, dtype=object)


def _decided_by_highs(a: np.ndarray, b: list[int]) -> tuple[bool | None, list[int] | None]:
    """(True, None) or (False, p) with an exact proof from HiGHS's final basis, or (None, None).

    `a` is an integer matrix (m rows, k columns). Phase-1 program: minimise
    sum(s) subject to A y + s = b (rows signed so that b >= 0), y, s >= 0.
    Its optimal basis B (the basic columns on the rows whose own logical is
    not basic) gives x_B = B^-1 b and the dual p = B^-T c_B (zero on the
    other rows). If x_B >= 0 with every artificial at zero, y solves A y = b;
    if instead p.A_j <= 0 for every column j and p.b > 0, no y >= 0 can
    (p.(A y) <= 0 < p.b). Both are checked in exact arithmetic; p comes back
    as integers in the caller's row signs.
    """
    m, k = a.shape
    if not m or not k:
        return None, None
    sign = np.array([-1 if v < 0 else 1 for v in b])
    rows = a * sign[:, None]
    rhs = [int(sg) * v for sg, v in zip(sign, b)]
    try:
        dense = np.hstack([rows.astype(np.float64), np.eye(m)])
        frhs = np.array(rhs, dtype=np.float64)
        ans = highs.solve(np.r_[np.zeros(k), np.ones(m)], dense, frhs, frhs, 0.0, None)
    except ImportError:
        return None, None
    if ans.status != "optimal" or ans.col_basic is None or ans.row_basic is None:
        return None, None
    # HiGHS may keep a row's own logical variable basic (a redundant row): the
    # basis is then the basic columns on the other rows, a square system.
    basic = np.flatnonzero(ans.col_basic).tolist()
    on = np.flatnonzero(~ans.row_basic).tolist()
    if len(basic) != len(on):
        return None, None

    def entry(r: int, j: int) -> int:
        return int(rows[r, j]) if j < k else int(j - k == r)

    x_b = solve([[entry(r, j) for j in basic] for r in on], [rhs[r] for r in on]) if basic else []
    if x_b is None:
        return None, None
    y = dict(zip(basic, x_b))
    if (all(v >= 0 for v in x_b) and all(v == 0 for j, v in y.items() if j >= k)
            and all(sum(entry(r, j) * v for j, v in y.items()) == rhs[r] for r in range(m))):
        return True, None
    p_on = solve([[entry(r, j) for r in on] for j in basic], [0 if j < k else 1 for j in basic]) if basic else []
    if p_on is None:
        return None, None
    p = [Fraction(0)] * m
    for r, v in zip(on, p_on):
        p[r] = v
    den = 1
    for v in p:
        den = den * v.denominator // gcd(den, v.denominator)
    pi = [int(v * den) * int(sg) for v, sg in zip(p, sign)]  # back to the caller's row signs
    if sum(v * r for v, r in zip(pi, b)) <= 0 or np.any(_dots(a.T, pi) > 0):
        return None, None
    return False, pi


def kohlberg_check(game: Game, x: Sequence[Fraction], prenucleolus: bool | None = None) -> bool:
    """True iff `x` is the nucleolus (or, with prenucleolus=True, the prenucleolus) of `game`.

    By default the concept follows `nucleolus`: the nucleolus over
    imputations when sum v({i}) <= v(N), else the prenucleolus. Exact.
    """
    n, full = game.n, game.full
    x = [Fraction(v) for v in x]
    if len(x) != n:
        raise ValueError(f"need {n} payouts, got {len(x)}")
    v_all = Fraction(game.exact(full))
    if sum(x, Fraction(0)) != v_all:
        return False
    singles = [Fraction(game.exact(1 << i)) for i in range(n)]
    if prenucleolus is None:
        prenucleolus = sum(singles, Fraction(0)) > v_all
    zeros: list[int] = []
    if not prenucleolus:
        if any(xi < vi for xi, vi in zip(x, singles)):
            return False
        zeros = [i for i in range(n) if x[i] == singles[i]]
    if n == 1:
        return True
    span = Span(n)
    span.add([1] * n)
    kern = _kernel_matrix(span)
    for _, masks in ExcessTable(game, x).levels():
        if span.rank == n:
            return True
        proj = member_matrix(masks, n, kern.dtype) @ kern.T
        outside = np.flatnonzero(np.any(proj != 0, axis=1))
        if not len(outside):
            continue
        out_masks = np.asarray(masks, dtype=np.int64)[outside]
        # A coalition and its complement at one level balance each other (1_S + 1_N-S = 1_N),
        # so a level made of such pairs passes without an LP.
        if not bool(np.all(np.isin(full ^ out_masks, out_masks))):
            if not _balanced(proj[outside], kern[:, zeros].T):
                return False
        kern = _grow(span, out_masks, n)
    return True
