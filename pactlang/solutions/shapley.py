"""A game -> its Shapley value, exact, from per-size sums of integer worths.

phi_i = sum over k of w(k-1) A_i[k] - w(k) B_i[k], where A_i[k] (B_i[k]) sums
v(S) over the coalitions of size k that hold (do not hold) i, and
w(s) = s! (n-1-s)! / n!. The sums A and B are the only work over coalitions:
integer numerators are cut into digits small enough that float64 `bincount`
adds them without rounding (every partial sum stays below 2**53), and the
digits are put back together as Python integers.
"""

from __future__ import annotations

from fractions import Fraction
from math import comb, lcm

import numpy as np

from ..deadline import checkpoint
from ..game import Game
from .masks import popcounts


def _digits(nums: np.ndarray, width: int) -> list[np.ndarray]:
    """Split integers into base-2**width digits: nums == sum(d_j * 2**(width*j)).

    Every digit is below 2**width in size; the last may be negative.
    """
    out = []
    rest = nums
    lo, hi = -(1 << width), 1 << width
    while True:
        if bool(np.all((rest >= lo) & (rest < hi))):
            out.append(rest.astype(np.float64))
            return out
        out.append((rest & (hi - 1)).astype(np.float64))
        rest = rest >> width


def _size_sums(digits: list[np.ndarray], width: int, sizes: np.ndarray, n: int, sel=None) -> list[int]:
    """Exact sum of the integers per coalition size (optionally over a selection)."""
    total = [0] * (n + 1)
    for j, d in enumerate(digits):
        part = np.bincount(sizes if sel is None else sizes[sel],
                           weights=d if sel is None else d[sel], minlength=n + 1)
        for k in range(n + 1):
            total[k] += int(part[k]) << (width * j)
    return total


def shapley(game: Game) -> list[Fraction]:
    """The Shapley value of every player, exactly.

    Uses `game.scaled` (int64 numerators) when present; otherwise every worth
    is read once with `game.exact`.
    """
    n = game.n
    size = 1 << n
    if game.scaled is not None:
        nums, den = game.scaled
        nums, den = np.asarray(nums, dtype=np.int64), int(den)
    else:
        worths = [Fraction(game.exact(m)) for m in range(size)]
        den = lcm(*(w.denominator for w in worths))
        nums = np.array([w.numerator * (den // w.denominator) for w in worths], dtype=object)
    # Sums of up to 2**(n-1) digits below 2**width must stay exact in float64.
    width = max(1, 52 - n)
    digits = _digits(nums, width)
    sizes = popcounts(n)
    totals = _size_sums(digits, width, sizes, n)
    weight = [Fraction(1, n * comb(n - 1, s)) for s in range(n)]
    phi = []
    for i in range(n):
        checkpoint()  # the command's deadline, between players
        # Masks holding bit i: the upper half of every block of 2**(i+1).
        view = lambda a: a.reshape(-1, 2, 1 << i)[:, 1, :].ravel()
        holding = [0] * (n + 1)
        part_sizes = view(sizes)
        for j, d in enumerate(digits):
            part = np.bincount(part_sizes, weights=view(d), minlength=n + 1)
            for k in range(n + 1):
                holding[k] += int(part[k]) << (width * j)
        acc = Fraction(0)
        for k in range(1, n + 1):
            acc += weight[k - 1] * holding[k]
        for k in range(0, n):
            acc -= weight[k] * (totals[k] - holding[k])
        phi.append(acc / den)
    return phi
