"""A game -> its nucleolus (or prenucleolus), by sequential exact LPs, checked by Kohlberg's criterion.

Round k minimises t subject to: the coalitions fixed so far keep their
excess (equalities), v(S) - x(S) <= t for every coalition whose indicator is
outside the span of the fixed ones, and, for the nucleolus, x_i >= v({i}).
Between rounds we fix exactly the coalitions whose row has a positive
multiplier in the proved optimal dual: by complementary slackness they are
tight in *every* optimal solution (a row merely tight in the solution found
may be slack in another optimum; fixing it would be wrong). A positive
multiplier on x_i >= v({i}) fixes x_i = v({i}) the same way. The dual's
weights on free rows sum to 1, so each round fixes at least one coalition
outside the span: at most n - 1 rounds. Coalitions inside the span have a
constant excess from then on and leave the program.
"""

from __future__ import annotations

from fractions import Fraction


from ..game import Game
from .errors import SolverError
from .exact import Span
from .excess import game_bounds
from ..deadline import checkpoint
from .kohlberg import kohlberg_check
from .least_core import start_masks
from .lp import Program, Row, solve
from .masks import bits, in_span_masks


def nucleolus(game: Game, prenucleolus: bool | None = None) -> list[Fraction]:
    """The nucleolus over imputations when sum v({i}) <= v(N), else the prenucleolus.

    `prenucleolus=True` asks for the prenucleolus (over all efficient
    payouts) whatever the game; False insists on imputations (ValueError
    when there are none). Exact; the result passes `kohlberg_check` before it
    is returned (SolverError otherwise).
    """
    n, full = game.n, game.full
    v_all = Fraction(game.exact(full))
    if n == 1:
        return [v_all]
    singles = [Fraction(game.exact(1 << i)) for i in range(n)]
    imputation = sum(singles, Fraction(0)) <= v_all
    if prenucleolus is not None:
        if not prenucleolus and not imputation:
            raise ValueError("the game has no imputation: sum v({i}) exceeds v(N)")
        imputation = not prenucleolus
    _, fmax = game_bounds(game)
    # No optimum gets near this floor on t; it only keeps partial programs bounded.
    floor_t = Fraction(int((1 + 8 * n * n) * (1 + fmax)) + 1)
    zero = Fraction(0)
    t_only = tuple([zero] * n + [Fraction(-1)])

    fixed: list[tuple[int, Fraction]] = [(full, zero)]
    span = Span(n)
    span.add([1] * n)
    inside = in_span_masks(span.kernel(), n)
    working = start_masks(n)
    while True:
        checkpoint()  # the command's deadline, between rounds
        rows = [Row(tuple(Fraction(b) for b in bits(m, n)) + (zero,), Fraction(game.exact(m)) - c, eq=True)
                for m, c in fixed]
        bounded = [i for i in range(n) if imputation and not inside[1 << i]]
        for i in bounded:
            rows.append(Row(tuple(Fraction(-1) if j == i else zero for j in range(n)) + (zero,), -singles[i]))
        rows.append(Row(t_only, floor_t))
        singletons = [1 << i for i in range(n)]
        program = Program(game, n + 1, [zero] * n + [Fraction(1)], rows, level=n, skip=inside,
                          start=working + singletons)
        opt = solve(program)
        x, t = opt.z[:n], opt.z[n]
        if opt.row_duals[-1] != 0:
            raise SolverError("a nucleolus round ended on its artificial floor")
        bound_duals = opt.row_duals[len(fixed) : len(fixed) + len(bounded)]
        new = sorted(opt.coalition_duals.items(), key=lambda p: -p[1])
        candidates = [(m, t) for m, _ in new]
        candidates += [(1 << i, zero) for i, d in zip(bounded, bound_duals) if d > 0]
        added = False
        for m, c in candidates:
            if span.add(bits(m, n)):
                fixed.append((m, c))
                added = True
        if not added:
            raise SolverError("a nucleolus round fixed no new coalition")
        if span.rank == n:
            break
        inside = in_span_masks(span.kernel(), n)
        working = [m for m in opt.working if not inside[m]]
    checkpoint()
    if not kohlberg_check(game, x, prenucleolus=not imputation):
        raise SolverError("the computed nucleolus fails Kohlberg's criterion")
    return list(x)
