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
every column, p.b > 0). Only when neither proof goes through does the dense
exact simplex decide.
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


def _balanced(level_vecs: list[tuple[int, ...]], zero_vecs: list[tuple[int, ...]]) -> bool:
    """Weights w > 0 on level_vecs and u >= 0 on zero_vecs summing to the zero vector?

    Vectors q and -q both present (a coalition and its complement, seen
    modulo V) balance each other and span a subspace L the rest may use, so
    only the others are passed to the simplex, taken modulo L.
    """
    cols = list(dict.fromkeys(level_vecs))
    present = set(cols)
    paired = [c for c in cols if tuple(-v for v in c) in present]
    single = [c for c in cols if tuple(-v for v in c) not in present]
    if not single:
        return True
    zeros = list(zero_vecs)
    if paired:
        lines = Span(len(cols[0]))
        for c in paired:
            lines.add(c)
        kern = lines.kernel()
        proj = lambda v: tuple(sum(k * x for k, x in zip(row, v)) for row in kern)
        single = [proj(c) for c in single]
        zeros = [proj(z) for z in zeros]
    single = [c for c in dict.fromkeys(single) if any(c)]
    if not single:
        return True
    zeros = [z for z in dict.fromkeys(zeros) if any(z)]
    dim = len(single[0])
    cols = single + zeros
    a = [[c[r] for c in cols] for r in range(dim)]
    b = [-sum(c[r] for c in single) for r in range(dim)]
    return has_nonnegative_solution(a, b)


def has_nonnegative_solution(a: list[list[int]], b: list[int], use_floats: bool = True) -> bool:
    """Whether some y >= 0 has a y = b (integer a, b), exactly.

    With `use_floats`, HiGHS's answer is tried first and accepted only with
    its exact proof; the exact simplex decides otherwise (or always, without).
    """
    if use_floats:
        got = _decided_by_highs(a, b)
        if got is not None:
            return got
    return simplex(a, b, [0] * (len(a[0]) if a else 0)).status == "optimal"


def _decided_by_highs(a: list[list[int]], b: list[int]) -> bool | None:
    """True or False with an exact proof from HiGHS's final basis, or None when none holds.

    Phase-1 program: minimise sum(s) subject to A y + s = b (rows signed so
    that b >= 0), y, s >= 0. Its optimal basis B (the basic columns on the
    rows whose own logical is not basic) gives x_B = B^-1 b and the dual
    p = B^-T c_B (zero on the other rows). If x_B >= 0 with every artificial at zero, y solves
    A y = b; if instead p.A_j <= 0 for every column j and p.b > 0, no y >= 0
    can (p.(A y) <= 0 < p.b). Both are checked in exact arithmetic.
    """
    m = len(a)
    k = len(a[0]) if m else 0
    if not m or not k:
        return None
    sign = [-1 if v < 0 else 1 for v in b]
    rows = [[sg * v for v in row] for sg, row in zip(sign, a)]
    rhs = [sg * v for sg, v in zip(sign, b)]
    try:
        dense = np.hstack([np.array(rows, dtype=np.float64), np.eye(m)])
        ans = highs.solve(np.r_[np.zeros(k), np.ones(m)], dense, np.array(rhs, dtype=np.float64),
                          np.array(rhs, dtype=np.float64), 0.0, None)
    except ImportError:
        return None
    if ans.status != "optimal" or ans.col_basic is None or ans.row_basic is None:
        return None
    # HiGHS may keep a row's own logical variable basic (a redundant row): the
    # basis is then the basic columns on the other rows, a square system.
    basic = np.flatnonzero(ans.col_basic).tolist()
    on = np.flatnonzero(~ans.row_basic).tolist()
    if len(basic) != len(on):
        return None
    full = [row + [int(j == r) for j in range(m)] for r, row in enumerate(rows)]
    square = [[full[r][j] for j in basic] for r in on]
    x_b = solve(square, [rhs[r] for r in on]) if basic else []
    if x_b is None:
        return None
    y = dict(zip(basic, x_b))
    if (all(v >= 0 for v in x_b) and all(v == 0 for j, v in y.items() if j >= k)
            and all(sum(full[r][j] * v for j, v in y.items()) == rhs[r] for r in range(m))):
        return True
    p_on = solve([[full[r][j] for r in on] for j in basic], [0 if j < k else 1 for j in basic]) if basic else []
    if p_on is None:
        return None
    p = [Fraction(0)] * m
    for r, v in zip(on, p_on):
        p[r] = v
    den = 1
    for v in p:
        den = den * v.denominator // gcd(den, v.denominator)
    pi = [int(v * den) for v in p]
    if sum(v * r for v, r in zip(pi, rhs)) <= 0:
        return None
    for j in range(k):
        if sum(pi[r] * rows[r][j] for r in range(m) if pi[r]) > 0:
            return None
    return False


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
            level_vecs = [tuple(int(v) for v in proj[k]) for k in outside]
            zero_vecs = [tuple(int(v) for v in kern[:, i]) for i in zeros]
            if not _balanced(level_vecs, zero_vecs):
                return False
        kern = _grow(span, out_masks, n)
    return True
