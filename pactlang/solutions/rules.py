"""A game -> the closed-form splits: equal split, proportional, separable costs remaining benefits."""

from __future__ import annotations

from fractions import Fraction
from typing import Sequence

from ..game import Game
from .errors import NotApplicable


def equal_split(game: Game) -> list[Fraction]:
    """v(N) shared equally."""
    share = Fraction(game.exact(game.full)) / game.n
    return [share] * game.n


def proportional(game: Game, weights: Sequence[Fraction]) -> list[Fraction]:
    """v(N) shared in proportion to `weights` (one per player).

    Raises NotApplicable when the weights sum to zero.
    """
    if len(weights) != game.n:
        raise ValueError(f"need {game.n} weights, got {len(weights)}")
    w = [Fraction(v) for v in weights]
    total = sum(w, Fraction(0))
    if total == 0:
        raise NotApplicable("the weights sum to zero")
    vN = Fraction(game.exact(game.full))
    return [vN * v / total for v in w]


def separable_costs_remaining_benefits(game: Game) -> list[Fraction]:
    """Separable costs remaining benefits, in value form.

    s_i = v(N) - v(N minus i), r_i = v({i}) - s_i,
    x_i = s_i + (v(N) - sum s) r_i / sum r. With costs negated this is the
    cost formula term by term. Raises NotApplicable when sum r = 0 while
    something remains to share.
    """
    full = game.full
    vN = Fraction(game.exact(full))
    s = [vN - Fraction(game.exact(full ^ (1 << i))) for i in range(game.n)]
    r = [Fraction(game.exact(1 << i)) - si for i, si in enumerate(s)]
    remainder = vN - sum(s, Fraction(0))
    total_r = sum(r, Fraction(0))
    if total_r == 0:
        if remainder != 0:
            raise NotApplicable("the remaining benefits sum to zero but the non-separable part does not")
        return s
    return [si + remainder * ri / total_r for si, ri in zip(s, r)]
