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
outside V raises dim V, so at most n - 1 levels need an LP; each is solved
by the exact simplex.
"""

from __future__ import annotations

from fractions import Fraction
from typing import Sequence

import numpy as np
from scipy.linalg import qr

from ..game import Game
from .exact import Span, simplex
from .excess import ExcessTable
from .masks import bits, member_matrix


def _kernel_matrix(span: Span) -> np.ndarray:
    kern = span.kernel()
    big = any(abs(v) >= 2**40 for row in kern for v in row)
    return np.array(kern, dtype=object if big else np.int64)


def _grow(span: Span, masks: np.ndarray, n: int) -> np.ndarray:
    """Add every coalition of `masks` to the span; return the new kernel matrix.

    Floats only pick which coalitions to add (column-pivoted QR finds
    independent ones); the loop ends when the exact kernel test shows that
    every coalition lies in the span.
    """
    while True:
        kern = _kernel_matrix(span)
        if span.rank == n:
            return kern
        proj = member_matrix(masks, n, kern.dtype) @ kern.T
        nz = np.flatnonzero(np.any(proj != 0, axis=1))
        if not len(nz):
            return kern
        sub = proj[nz].astype(np.float64)
        _, r, piv = qr(sub.T, mode="economic", pivoting=True)
        diag = np.abs(np.diag(r))
        rank = max(1, int(np.sum(diag > 1e-9 * diag[0])))
        for k in piv[:rank]:
            span.add(bits(int(masks[nz[k]]), n))


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
    return simplex(a, b, [0] * len(cols)).status == "optimal"


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
