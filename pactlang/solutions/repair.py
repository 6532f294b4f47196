"""A game, a payout and a target epsilon -> the nearest payout meeting the target, or proof that none does.

"Nearest" is least money moved, sum |y_i - x_i|; ties go to the least
largest single change, max |y_i - x_i|. Both are linear programs over
y (payout) and u (u_i >= |y_i - x_i|), with one row per coalition:
y(S) >= v(S) - E(S). They are the core conditions of the *allowance game*
v'(S) = v(S) - E(S) (v'(N) = v(N)), so a target is reachable exactly when the
least-core value of v' is at most 0; for an absolute epsilon that is the
least-core value of v itself being at most epsilon.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from typing import Sequence

import numpy as np

from ..game import Game
from .errors import SolverError
from .excess import ExcessTable
from .least_core import LeastCore, least_core, start_masks
from .lp import Program, Row, solve


@dataclass(frozen=True)
class Repair:
    """The outcome of `nearest_stable_payout`.

    feasible: a payout meeting the target exists. Then `payout` is the
    nearest one, `total_change` = sum |y_i - x_i| and `max_change` =
    max |y_i - x_i|. Otherwise `least_core` proves the target unreachable: for
    an absolute epsilon it is the least core of the game (value > epsilon);
    for a relative one it is the least core of the allowance game
    v(S) - epsilon |v(S)| (value > 0); its certificate is the proof.
    """

    feasible: bool
    payout: list[Fraction] | None = None
    total_change: Fraction | None = None
    max_change: Fraction | None = None
    least_core: LeastCore | None = None


def allowance_game(game: Game, epsilon: Fraction, relative: bool = False) -> Game:
    """v'(S) = v(S) - E(S) on proper coalitions (E = epsilon, or epsilon |v(S)|); v'(N) = v(N)."""
    eps = Fraction(epsilon)
    full = game.full
    exact = game.exact

    def worth(mask: int) -> Fraction:
        v = Fraction(exact(mask))
        if mask == 0 or mask == full:
            return v
        return v - (eps * abs(v) if relative else eps)

    floats = np.asarray(game.floats, dtype=np.float64)
    f = floats - float(eps) * np.abs(floats) if relative else floats - float(eps)
    f[0], f[full] = floats[0], floats[full]
    scaled = None
    if game.scaled is not None:
        nums, den = game.scaled
        nums, den = np.asarray(nums, dtype=np.int64), int(den)
        p, q = eps.numerator, eps.denominator
        big = int(np.abs(nums).max())
        if big * (q + abs(p)) + abs(p) * den < 2**62:
            new = nums * q - (p * np.abs(nums) if relative else p * den)
            new[0], new[full] = nums[0] * q, nums[full] * q
            scaled = (new.astype(np.int64), den * q)
    return Game(game.n, worth, f, scaled, game.names)


def nearest_stable_payout(game: Game, payout: Sequence[Fraction], epsilon: Fraction,
                          relative: bool = False) -> Repair:
    """The payout y nearest to `payout` with y(N) = v(N) and e_y(S) <= E(S) for all proper S.

    E(S) = epsilon, or epsilon |v(S)| when relative. Exact and verified; see `Repair`.
    """
    n = game.n
    x = [Fraction(v) for v in payout]
    if len(x) != n:
        raise ValueError(f"need {n} payouts, got {len(x)}")
    eps = Fraction(epsilon)
    v_all = Fraction(game.exact(game.full))
    target = allowance_game(game, eps, relative)
    zero = Fraction(0)
    if n == 1:  # no proper coalition: only the budget binds
        return Repair(True, [v_all], abs(v_all - x[0]), abs(v_all - x[0]))
    if sum(x, zero) == v_all and not ExcessTable(target, x).above(zero, limit=1):
        return Repair(True, x, zero, zero)
    if relative:
        lc = least_core(target)
        if lc.value > 0:
            return Repair(False, least_core=lc)
    else:
        lc = least_core(game)
        if lc.value > eps:
            return Repair(False, least_core=lc)

    one = Fraction(1)
    rows = [Row(tuple([one] * n + [zero] * n), v_all, eq=True)]
    for i in range(n):
        up = [zero] * (2 * n)
        up[i], up[n + i] = one, -one
        down = [zero] * (2 * n)
        down[i], down[n + i] = -one, -one
        rows += [Row(tuple(up), x[i]), Row(tuple(down), -x[i])]
    start = start_masks(n) + [m for m, _ in lc.certificate]
    first = solve(Program(target, 2 * n, [zero] * n + [one] * n, rows, level=None, start=start))
    moved = first.value

    rows2 = [Row(r.coeffs + (zero,), r.rhs, r.eq) for r in rows]
    rows2.append(Row(tuple([zero] * n + [one] * n + [zero]), moved))
    for i in range(n):
        cap = [zero] * (2 * n + 1)
        cap[n + i], cap[2 * n] = one, -one
        rows2.append(Row(tuple(cap), zero))
    second = solve(Program(target, 2 * n + 1, [zero] * (2 * n) + [one], rows2, level=None,
                           start=first.working))
    y = second.z[:n]
    changes = [abs(a - b) for a, b in zip(y, x)]
    total, largest = sum(changes, zero), max(changes)
    if total != moved or largest != second.value:
        raise SolverError("the repaired payout does not match its proved optimum")
    if sum(y, zero) != v_all or ExcessTable(target, y).above(zero, limit=1):
        raise SolverError("the repaired payout misses the target")
    return Repair(True, list(y), total, largest)
