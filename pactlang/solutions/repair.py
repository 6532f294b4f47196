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


@dataclass(frozen=True)
class Allowance:
    """One requirement's allowed excess: `epsilon`, or `epsilon |v(S)|` when
    `relative`; `singletons` limits it to one-party coalitions (individual
    rationality is an allowance of 0 there)."""

    epsilon: Fraction
    relative: bool = False
    singletons: bool = False


def allowance_game(game: Game, epsilon: Fraction | None = None, relative: bool = False,
                   allowances: Sequence[Allowance] = ()) -> Game:
    """v'(S) = v(S) - E(S) on proper coalitions, v'(N) = v(N).

    E(S) is the smallest allowance that applies to S: `epsilon` (times |v(S)|
    when relative), and every entry of `allowances`. At least one allowance
    must apply to every proper coalition.
    """
    rules = list(allowances)
    if epsilon is not None:
        rules.insert(0, Allowance(Fraction(epsilon), relative))
    if not rules or all(a.singletons for a in rules) and game.n > 2:
        raise ValueError("an allowance must apply to every coalition")
    full = game.full
    exact = game.exact

    def allowed(mask: int, v: Fraction) -> Fraction:
        single = mask & (mask - 1) == 0
        return min(a.epsilon * abs(v) if a.relative else a.epsilon
                   for a in rules if single or not a.singletons)

    def worth(mask: int) -> Fraction:
        v = Fraction(exact(mask))
        if mask == 0 or mask == full:
            return v
        return v - allowed(mask, v)

    floats = np.asarray(game.floats, dtype=np.float64)
    singles = np.zeros(len(floats), dtype=bool)
    singles[[1 << i for i in range(game.n)]] = True
    best = np.full(len(floats), np.inf)
    for a in rules:
        e = float(a.epsilon) * np.abs(floats) if a.relative else np.full(len(floats), float(a.epsilon))
        if a.singletons:
            e = np.where(singles, e, np.inf)
        best = np.minimum(best, e)
    f = floats - best
    f[0], f[full] = floats[0], floats[full]
    scaled = None
    if game.scaled is not None and len(rules) == 1 and not rules[0].singletons:
        eps, rel = rules[0].epsilon, rules[0].relative
        nums, den = game.scaled
        nums, den = np.asarray(nums, dtype=np.int64), int(den)
        p, q = eps.numerator, eps.denominator
        big = int(np.abs(nums).max())
        if big * (q + abs(p)) + abs(p) * den < 2**62:
            new = nums * q - (p * np.abs(nums) if rel else p * den)
            new[0], new[full] = nums[0] * q, nums[full] * q
            scaled = (new.astype(np.int64), den * q)
    return Game(game.n, worth, f, scaled, game.names)


def nearest_stable_payout(game: Game, payout: Sequence[Fraction], epsilon: Fraction | None = None,
                          relative: bool = False, allowances: Sequence[Allowance] = ()) -> Repair:
    """The payout y nearest to `payout` with y(N) = v(N) and e_y(S) <= E(S) for all proper S.

    E(S) = epsilon, or epsilon |v(S)| when relative, and at most every entry
    of `allowances` that applies to S (all of them are met together). Exact
    and verified; see `Repair` (with several allowances, or any relative
    one, `least_core` is that of the allowance game).
    """
    n = game.n
    x = [Fraction(v) for v in payout]
    if len(x) != n:
        raise ValueError(f"need {n} payouts, got {len(x)}")
    v_all = Fraction(game.exact(game.full))
    zero = Fraction(0)
    if n == 1:  # no proper coalition: only the budget binds
        return Repair(True, [v_all], abs(v_all - x[0]), abs(v_all - x[0]))
    target = allowance_game(game, epsilon, relative, allowances)
    if sum(x, zero) == v_all and not ExcessTable(target, x).above(zero, limit=1):
        return Repair(True, x, zero, zero)
    if relative or allowances:
        lc = least_core(target)
        if lc.value > 0:
            return Repair(False, least_core=lc)
    else:
        lc = least_core(game)
        if lc.value > Fraction(epsilon):
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


@dataclass(frozen=True)
class LeastPercentage:
    """The smallest P with a payout meeting e(S) <= P |v(S)| for every proper S.

    `percentage` is None when no P does (a certificate's coalitions all have
    worth 0 yet force a positive excess). `payout` meets P; `certificate` is a
    balanced collection with sum d_S e(S) = sum d_S v(S) - v(N) >= P sum d_S |v(S)|
    for every efficient payout, which proves no smaller P is reachable.
    """

    percentage: Fraction | None
    payout: list[Fraction] | None
    certificate: list[tuple[int, Fraction]]


def least_percentage(game: Game, rounds: int = 60) -> LeastPercentage:
    """The smallest reachable relative allowance (a fraction: 1/20 is 5%), exact.

    Each least core of the allowance game at P gives a balanced collection d,
    and P' = (sum d_S v(S) - v(N)) / sum d_S |v(S)| is a proved lower bound
    above P while P is unreachable; the steps follow the finitely many
    collections (Dinkelbach's method), so the loop ends at the exact optimum.
    """
    v_all = Fraction(game.exact(game.full))
    p = Fraction(0)  # from below: every step is a proved lower bound
    for _ in range(rounds):
        lc = least_core(allowance_game(game, p, relative=True))
        if lc.value <= 0:
            return LeastPercentage(p, lc.payout, lc.certificate)
        d_sum = sum((w * Fraction(game.exact(m)) for m, w in lc.certificate), Fraction(0)) - v_all
        w_sum = sum((w * abs(Fraction(game.exact(m))) for m, w in lc.certificate), Fraction(0))
        if w_sum == 0:
            return LeastPercentage(None, None, lc.certificate)
        nxt = d_sum / w_sum
        if nxt <= p:
            raise SolverError("the smallest reachable percentage did not increase")
        p = nxt
    raise SolverError("the smallest reachable percentage was not found in time")
