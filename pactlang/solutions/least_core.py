"""A game -> its least-core value, one least-core payout, and balanced weights proving the value.

The program: minimise t subject to x(N) = v(N) and v(S) - x(S) <= t for every
proper non-empty S. Its dual, normalised, is a balanced collection: weights
d_S >= 0 with sum over S containing i of d_S = 1 for every i. For any
efficient x, sum d_S e(S) = sum d_S v(S) - v(N), so the largest excess is at
least (sum d_S v(S) - v(N)) / sum d_S: the weights prove that no payout does
better (Bondareva-Shapley by LP duality).
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from typing import Sequence

import numpy as np

from ..game import Game
from .errors import SolverError
from .excess import ExcessTable
from .lp import Program, Row, solve


@dataclass(frozen=True)
class LeastCore:
    """The least-core value with a payout attaining it and the certificate proving it.

    - `value`: the least eps such that some x with x(N) = v(N) has
      e(S) <= eps for every proper non-empty S.
    - `payout`: one such x (exact).
    - `certificate`: (mask, weight) pairs, a balanced collection: weights > 0
      and, for every player, the weights of the listed coalitions holding it
      sum to 1; `certificate_value(game, certificate) == value`.
    """

    value: Fraction
    payout: list[Fraction]
    certificate: list[tuple[int, Fraction]]


def start_masks(n: int, extra: int = 40, seed: int = 0) -> list[int]:
    """Singletons, their complements and a few random coalitions: the first working rows."""
    full = (1 << n) - 1
    masks = [1 << i for i in range(n)] + [full ^ (1 << i) for i in range(n)]
    if n > 2 and extra:
        rng = np.random.default_rng(seed)
        masks += rng.integers(1, full, size=min(extra, full - 1)).tolist()
    return masks


def certificate_value(game: Game, certificate: Sequence[tuple[int, Fraction]]) -> Fraction:
    """The lower bound a balanced collection proves: (sum d_S v(S) - v(N)) / sum d_S.

    Raises ValueError unless the weights are positive and balanced.
    """
    n = game.n
    cover = [Fraction(0)] * n
    total = Fraction(0)
    acc = Fraction(0)
    for mask, w in certificate:
        w = Fraction(w)
        if w <= 0 or not 0 < mask < game.full:
            raise ValueError("certificate weights must be positive on proper coalitions")
        total += w
        acc += w * Fraction(game.exact(mask))
        for i in range(n):
            if mask >> i & 1:
                cover[i] += w
    if any(c != 1 for c in cover):
        raise ValueError("certificate weights are not balanced")
    return (acc - Fraction(game.exact(game.full))) / total


def least_core(game: Game) -> LeastCore:
    """The least-core value of `game`, a payout attaining it and its certificate (exact, verified)."""
    n = game.n
    if n < 2:
        raise ValueError("the least core needs at least two parties")
    vN = Fraction(game.exact(game.full))
    ones = tuple(Fraction(1) for _ in range(n)) + (Fraction(0),)
    program = Program(game, n + 1, [Fraction(0)] * n + [Fraction(1)], [Row(ones, vN, eq=True)],
                      level=n, start=start_masks(n))
    opt = solve(program)
    x, eps = opt.z[:n], opt.z[n]
    # Stationarity: sum over S containing i of y_S equals the multiplier of x(N) = v(N) for every i.
    scale = opt.row_duals[0]
    if scale <= 0:
        raise SolverError("the dual of the least-core program has no positive scale")
    cert = sorted((m, y / scale) for m, y in opt.coalition_duals.items())
    result = LeastCore(eps, list(x), cert)
    verify_least_core(game, result)
    return result


def verify_least_core(game: Game, lc: LeastCore) -> None:
    """Raise SolverError unless the payout and the certificate both prove `lc.value` exactly."""
    if sum(lc.payout, Fraction(0)) != Fraction(game.exact(game.full)):
        raise SolverError("least-core payout is not efficient")
    if ExcessTable(game, lc.payout, extra=(lc.value,)).above(lc.value, limit=1):
        raise SolverError("least-core payout exceeds the value on some coalition")
    try:
        bound = certificate_value(game, lc.certificate)
    except ValueError as exc:
        raise SolverError(f"least-core certificate rejected: {exc}") from None
    if bound != lc.value:
        raise SolverError("least-core certificate proves a different value")
