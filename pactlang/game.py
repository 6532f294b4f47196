"""Resolved worths -> a game in value form that the solvers read.

Every solver in `pactlang.solutions` works on a transferable-utility game in
*value form*: worth v(S) is what S earns, payout x_i is what i receives and
the excess is e(S) = v(S) - x(S). A cost agreement is handed over negated
(v = -c, x = -payout), which turns e(S) = x(S) - c(S) into the same formula,
so one solver serves both kinds of agreement.

Coalitions are bitmasks: bit i is party i in declaration order; mask 0 is the
empty coalition and `full = 2**n - 1` is everyone.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from fractions import Fraction
from math import lcm
from typing import Callable, Sequence

import numpy as np

MAX_TABULATED = 22  # 2**22 worths: about 100 MB of tables; 2**24 already needs GiBs


class TooLarge(Exception):
    """The agreement has too many parties to tabulate every coalition's worth."""


def require_tabulable(n: int, command: str) -> None:
    """Refuse in words before a table of 2**n worths is built (memory grows
    with it: 40 parties would need terabytes)."""
    if n > MAX_TABULATED:
        raise TooLarge(f"`{command}` needs the worth of every coalition, and {n} parties have "
                       f"{2**n - 1:,} coalitions (the limit is {MAX_TABULATED} parties, "
                       f"{2**MAX_TABULATED - 1:,} coalitions); `pactlang check` works "
                       "without such a table")


@dataclass(frozen=True, eq=False)
class Game:
    """A game over `n` players in value form, exact on demand.

    - `exact(mask)` returns the worth of a coalition as a Fraction; it is the
      only source of truth.
    - `floats` holds every worth as float64 (length 2**n, `floats[0] == 0`),
      for guiding searches only.
    - `scaled`, when not None, is `(numerators, denominator)`: an int64 array
      with `numerators[mask] / denominator == exact(mask)` for every mask,
      which lets solvers do exact arithmetic with array operations.
    """

    n: int
    exact: Callable[[int], Fraction]
    floats: np.ndarray
    scaled: tuple[np.ndarray, int] | None = None
    names: tuple[str, ...] = field(default=())

    @property
    def full(self) -> int:
        return (1 << self.n) - 1

    def negated(self) -> "Game":
        """The game with every worth negated (cost form <-> value form)."""
        scaled = None if self.scaled is None else (-self.scaled[0], self.scaled[1])
        exact = self.exact
        return Game(self.n, lambda m: -exact(m), -self.floats, scaled, self.names)

    @classmethod
    def from_worths(cls, worths: Sequence[Fraction | int | str], names: Sequence[str] = ()) -> "Game":
        """A game from a full list of worths indexed by mask (`worths[0]` must be 0)."""
        size = len(worths)
        require_tabulable(max(size.bit_length() - 1, 0), "from_worths")
        exact_list = [Fraction(w) for w in worths]
        n = size.bit_length() - 1
        if size != 1 << n or n < 1:
            raise ValueError("need 2**n worths, indexed by coalition mask")
        if exact_list[0] != 0:
            raise ValueError("the empty coalition must be worth 0")
        denom = lcm(*(w.denominator for w in exact_list))
        scaled = None
        nums = [w.numerator * (denom // w.denominator) for w in exact_list]
        if max(abs(v) for v in nums) < 2**62:
            scaled = (np.array(nums, dtype=np.int64), denom)
        floats = np.array([float(w) for w in exact_list], dtype=np.float64)
        return cls(n, exact_list.__getitem__, floats, scaled, tuple(names) or tuple(f"p{i}" for i in range(n)))
