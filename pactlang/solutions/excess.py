"""A game and an exact payout -> exact excesses e(S) = v(S) - x(S) over every coalition.

Two strategies, chosen per game:
- *arrays*: the game carries `scaled` integer worths; excesses are integer
  numerators over one common denominator, computed for every mask with
  int64 array operations (object arrays of Python ints if int64 could
  overflow). Nothing is skipped, nothing depends on floats.
- *margin*: no integer table; float excesses pick candidates with a safe
  margin `delta` (far above rounding error) and only the candidates are
  evaluated exactly with `game.exact`. A coalition left out has float excess
  below the cut, hence exact excess below cut + delta, which is all the
  deciding comparisons need.
"""

from __future__ import annotations

import heapq
import weakref
from fractions import Fraction
from math import ceil, floor, lcm
from typing import Iterator, Sequence

import numpy as np

from ..game import Game
from .masks import ChunkedSums

_SAFE = 2**62
_game_bounds: "weakref.WeakKeyDictionary[Game, tuple[int, float]]" = weakref.WeakKeyDictionary()


def game_bounds(game: Game) -> tuple[int, float]:
    """(largest |numerator| in `scaled` or 0, largest |float worth|), cached per game."""
    got = _game_bounds.get(game)
    if got is None:
        big = int(np.abs(game.scaled[0]).max()) if game.scaled is not None else 0
        got = (big, float(np.abs(np.asarray(game.floats, dtype=np.float64)).max()))
        _game_bounds[game] = got
    return got


def _excluded(start: int, size: int, full: int, skip: np.ndarray | None) -> np.ndarray:
    """Masks in [start, start+size) that are not coalitions of interest."""
    out = np.zeros(size, dtype=bool) if skip is None else skip[start : start + size].copy()
    if start == 0:
        out[0] = True
    if start + size == full + 1:
        out[-1] = True
    return out


class ExcessTable:
    """Exact excesses of the payout `x` in `game` (proper, non-empty coalitions only)."""

    def __init__(self, game: Game, x: Sequence[Fraction], extra: Sequence[Fraction] = ()):
        self.game = game
        self.n = game.n
        self.x = [Fraction(v) for v in x]
        big, fmax = game_bounds(game)
        self.floats = np.asarray(game.floats, dtype=np.float64)
        if game.scaled is not None:
            nums, den = game.scaled
            nums, den = np.asarray(nums, dtype=np.int64), int(den)
            self.den = lcm(den, *(v.denominator for v in self.x), *(Fraction(v).denominator for v in extra))
            self.mult = self.den // den
            xi = [int(v * self.den) for v in self.x]
            exact_int64 = big * self.mult + sum(abs(v) for v in xi) < _SAFE
            self._dtype = np.int64 if exact_int64 else object
            self._nums = nums
            self._xsums = ChunkedSums(xi, self._dtype)
            self.mode = "arrays"
        else:
            self.mode = "margin"
            xf = [float(v) for v in self.x]
            self._xsums = ChunkedSums(xf, np.float64)
            # Float error of one excess is below 1e-15 of this scale; the margin is 1e6 times that.
            self.delta = Fraction(1e-9) * Fraction(1 + fmax + sum(abs(v) for v in xf))

    # -- exact pieces -------------------------------------------------------
    def excess(self, mask: int) -> Fraction:
        """The exact excess of one coalition."""
        xs = sum((v for i, v in enumerate(self.x) if mask >> i & 1), Fraction(0))
        return Fraction(self.game.exact(mask)) - xs

    def _chunks(self) -> Iterator[tuple[int, np.ndarray]]:
        """Arrays mode: (start, integer numerators of e(S) * den) chunk by chunk."""
        for start, xs in self._xsums.chunks():
            v = self._nums[start : start + len(xs)]
            v = v.astype(object) * self.mult if self._dtype is object else v * self.mult
            yield start, v - xs

    def _float_chunks(self) -> Iterator[tuple[int, np.ndarray]]:
        for start, xs in self._xsums.chunks():
            yield start, self.floats[start : start + len(xs)] - xs

    # -- queries ------------------------------------------------------------
    def above(self, threshold: Fraction, *, strict: bool = True, skip: np.ndarray | None = None,
              limit: int | None = None) -> list[tuple[int, Fraction]]:
        """Every coalition with e(S) > threshold (>= when not strict), largest first.

        With `limit`, at most `limit` of them (the largest as far as floats can
        rank them; every returned excess is exact, and an empty answer is
        always a proof that none exceeds). `skip` marks masks to ignore.
        """
        threshold = Fraction(threshold)
        found: list[tuple[int, Fraction]] = []
        full = self.game.full
        if self.mode == "arrays":
            scaled_t = threshold * self.den
            cut = floor(scaled_t) if strict else ceil(scaled_t)
            for start, nums in self._chunks():
                ok = nums > cut if strict else nums >= cut
                ok &= ~_excluded(start, len(nums), full, skip)
                idx = np.flatnonzero(ok)
                if limit is not None and len(idx) > limit:
                    idx = idx[np.argsort(nums[idx].astype(np.float64), kind="stable")[-limit:]]
                found.extend((start + int(k), Fraction(int(nums[k]), self.den)) for k in idx)
        else:
            cut = float(threshold - self.delta)
            for start, fe in self._float_chunks():
                fe[_excluded(start, len(fe), full, skip)] = -np.inf
                for k in np.flatnonzero(fe > cut):
                    e = self.excess(start + int(k))
                    if e > threshold or (not strict and e == threshold):
                        found.append((start + int(k), e))
        found.sort(key=lambda p: (-p[1], p[0]))
        return found[:limit] if limit is not None else found

    def maximum(self, skip: np.ndarray | None = None) -> tuple[Fraction, list[int]]:
        """The largest excess over proper coalitions and every coalition attaining it."""
        for level, masks in self.levels(skip):
            return level, masks
        raise ValueError("no proper coalition")

    def levels(self, skip: np.ndarray | None = None) -> Iterator[tuple[Fraction, list[int]]]:
        """Distinct exact excess levels, largest first, each with all its coalitions."""
        full = self.game.full
        if self.mode == "arrays":
            parts, keep = [], []
            for start, nums in self._chunks():
                parts.append(nums)
                keep.append(~_excluded(start, len(nums), full, skip))
            nums = np.concatenate(parts)
            masks = np.flatnonzero(np.concatenate(keep))
            vals = nums[masks]
            # Callers usually stop after a few levels: sort only the top values,
            # a batch at a time (doubling, so a full walk stays n log n), each
            # batch holding every value down to its smallest, ties included.
            block = 4096
            current, members = None, []
            while len(vals):
                if len(vals) > block and vals.dtype != object:
                    cut = vals[np.argpartition(vals, len(vals) - block)[len(vals) - block]]
                    sel = np.flatnonzero(vals >= cut)
                else:
                    sel = np.arange(len(vals))
                order = sel[np.argsort(vals[sel], kind="stable")[::-1]]
                for m, v in zip(masks[order].tolist(), vals[order].tolist()):
                    if v != current:
                        if members:
                            yield Fraction(current, self.den), sorted(members)
                        current, members = v, []
                    members.append(m)
                rest = np.ones(len(vals), dtype=bool)
                rest[sel] = False
                masks, vals = masks[rest], vals[rest]
                block *= 2
            if members:
                yield Fraction(current, self.den), sorted(members)
            return
        yield from self._margin_levels(skip)

    def _margin_levels(self, skip) -> Iterator[tuple[Fraction, list[int]]]:
        full = self.game.full
        parts = []
        for start, fe in self._float_chunks():
            fe[_excluded(start, len(fe), full, skip)] = -np.inf
            parts.append(fe)
        fe = np.concatenate(parts)
        order = np.argsort(fe, kind="stable")[::-1]
        order = order[np.isfinite(fe[order])]
        heap: list[tuple[Fraction, int]] = []  # (-excess, mask)
        pos, block = 0, 256
        while pos < len(order) or heap:
            if pos < len(order):
                bound = Fraction(float(fe[order[pos]])) + self.delta  # no unread mask exceeds this
            else:
                bound = None
            if heap and (bound is None or -heap[0][0] > bound):
                level = -heap[0][0]
                members = []
                while heap and -heap[0][0] == level:
                    members.append(heapq.heappop(heap)[1])
                yield level, sorted(members)
                continue
            for k in order[pos : pos + block].tolist():
                heapq.heappush(heap, (-self.excess(k), k))
            pos += block
