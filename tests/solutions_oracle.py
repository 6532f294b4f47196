"""Random games and independent exact solvers (Z3, brute force) -> oracles for the solution tests.

Nothing here imports the LP code under test: Z3's optimiser over the reals
answers the least-core and repair programs with every coalition as a row, and
the Shapley value is the textbook sum over coalitions.
"""

from __future__ import annotations

from fractions import Fraction
from math import factorial
from typing import Sequence

import z3

from pactlang.game import Game


def game_of(worths: Sequence, names: Sequence[str] = ()) -> Game:
    """A Game from worths listed by mask."""
    return Game.from_worths([Fraction(w) for w in worths], names)


def game_from(n: int, worth) -> Game:
    """A Game from a function of the member tuple (worth of the empty set forced to 0)."""
    return game_of([0] + [worth(tuple(i for i in range(n) if m >> i & 1)) for m in range(1, 1 << n)])


def _q(v: z3.ArithRef) -> Fraction:
    v = z3.simplify(v)
    if z3.is_int_value(v):
        return Fraction(v.as_long())
    return Fraction(v.numerator_as_long(), v.denominator_as_long())


def _x(n: int):
    return [z3.Real(f"x{i}") for i in range(n)]


def _xs(x, mask: int):
    return z3.Sum([x[i] for i in range(len(x)) if mask >> i & 1])


def z3_least_core_value(game: Game) -> Fraction:
    """min eps over x(N) = v(N), v(S) - x(S) <= eps for every proper S, by Z3 (exact)."""
    n, full = game.n, game.full
    x, eps = _x(n), z3.Real("eps")
    opt = z3.Optimize()
    opt.add(_xs(x, full) == z3.RealVal(str(game.exact(full))))
    for m in range(1, full):
        opt.add(z3.RealVal(str(game.exact(m))) - _xs(x, m) <= eps)
    h = opt.minimize(eps)
    assert opt.check() == z3.sat
    return _q(opt.lower(h))


def z3_nearest(game: Game, payout, bound) -> tuple[Fraction, Fraction] | None:
    """(least sum |y - x|, then least max |y - x|) with y(N) = v(N), e_y(S) <= bound(S); None if infeasible."""
    n, full = game.n, game.full
    y = _x(n)
    base = [y[i] - z3.RealVal(str(Fraction(payout[i]))) for i in range(n)]
    absd = [z3.If(d >= 0, d, -d) for d in base]
    cons = [_xs(y, full) == z3.RealVal(str(game.exact(full)))]
    for m in range(1, full):
        cons.append(z3.RealVal(str(game.exact(m))) - _xs(y, m) <= z3.RealVal(str(bound(m))))
    s = z3.Solver()
    s.add(cons)
    if s.check() != z3.sat:
        return None
    opt = z3.Optimize()
    opt.add(cons)
    total = z3.Sum(absd)
    h = opt.minimize(total)
    assert opt.check() == z3.sat
    moved = _q(opt.lower(h))
    opt2 = z3.Optimize()
    opt2.add(cons)
    opt2.add(total == z3.RealVal(str(moved)))
    top = z3.Real("top")
    for a in absd:
        opt2.add(a <= top)
    h2 = opt2.minimize(top)
    assert opt2.check() == z3.sat
    return moved, _q(opt2.lower(h2))


def brute_shapley(game: Game) -> list[Fraction]:
    """The Shapley value by the textbook sum over every coalition (exact, slow)."""
    n = game.n
    out = []
    for i in range(n):
        acc = Fraction(0)
        for m in range(1 << n):
            if m >> i & 1:
                continue
            s = bin(m).count("1")
            w = Fraction(factorial(s) * factorial(n - s - 1), factorial(n))
            acc += w * (Fraction(game.exact(m | 1 << i)) - Fraction(game.exact(m)))
        out.append(acc)
    return out


def excesses(game: Game, x) -> dict[int, Fraction]:
    """Exact excess of every proper coalition (brute force)."""
    return {m: Fraction(game.exact(m)) - sum((Fraction(x[i]) for i in range(game.n) if m >> i & 1), Fraction(0))
            for m in range(1, game.full)}


def z3_nucleolus(game: Game, prenucleolus: bool) -> list[Fraction]:
    """The (pre)nucleolus by the textbook sequence of LPs, in Z3, exact and slow (n <= 5).

    After each round every still-free coalition is tested on the optimal set:
    if its excess has equal maximum and minimum there, it is fixed. This is
    the definition itself, with no reliance on duals or on the solution found.
    """
    n, full = game.n, game.full
    x, t = _x(n), z3.Real("t")
    val = lambda m: z3.RealVal(str(game.exact(m)))
    exc = lambda m: val(m) - _xs(x, m)
    cons = [_xs(x, full) == val(full)]
    if not prenucleolus:
        cons += [x[i] >= val(1 << i) for i in range(n)]
    free = set(range(1, full))
    while free:
        rows = cons + [exc(m) <= t for m in free]
        opt = z3.Optimize()
        opt.add(rows)
        h = opt.minimize(t)
        assert opt.check() == z3.sat
        level = _q(opt.lower(h))
        rows.append(t == z3.RealVal(str(level)))
        for m in sorted(free):
            ends = []
            for sense in ("min", "max"):
                o = z3.Optimize()
                o.add(rows)
                hh = o.minimize(exc(m)) if sense == "min" else o.maximize(exc(m))
                assert o.check() == z3.sat
                ends.append(_q(o.lower(hh) if sense == "min" else o.upper(hh)))
            if ends[0] == ends[1]:
                cons.append(exc(m) == z3.RealVal(str(ends[0])))
                free.discard(m)
    s = z3.Solver()
    s.add(cons)
    assert s.check() == z3.sat
    model = s.model()
    return [_q(model.eval(xi, model_completion=True)) for xi in x]
