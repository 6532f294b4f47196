"""Player vectors -> per-coalition sums over every bitmask, in aligned chunks.

All sweeps over the 2**n coalitions go through here so that memory stays
bounded: a sweep visits the masks in chunks of at most `2**CHUNK_BITS`, and a
coalition sum x(S) is the sum of a table over the low bits (built once) and
one scalar for the high bits of the chunk.
"""

from __future__ import annotations

from typing import Iterator, Sequence

import numpy as np

CHUNK_BITS = 20


def subset_sums(values: Sequence, dtype=np.float64) -> np.ndarray:
    """Entry `mask` is the sum of `values[i]` over the bits i of mask (length 2**len(values))."""
    out = np.zeros(1, dtype=dtype)
    for v in values:
        out = np.concatenate([out, out + v])
    return out


def popcounts(n: int) -> np.ndarray:
    """The coalition size of every mask, as uint8 (length 2**n)."""
    out = np.zeros(1, dtype=np.uint8)
    for _ in range(n):
        out = np.concatenate([out, out + 1])
    return out


def member_matrix(masks: Sequence[int] | np.ndarray, n: int, dtype=np.float64) -> np.ndarray:
    """A (len(masks), n) 0/1 matrix: row k marks the members of masks[k]."""
    arr = np.asarray(masks, dtype=np.int64).reshape(-1, 1)
    return ((arr >> np.arange(n, dtype=np.int64)) & 1).astype(dtype)


def bits(mask: int, n: int) -> list[int]:
    """The 0/1 indicator vector of a coalition mask."""
    return [mask >> i & 1 for i in range(n)]


class ChunkedSums:
    """x(S) for every mask S, produced chunk by chunk.

    `values` may hold floats, int64-safe integers or Python ints (then the
    chunks are object arrays, exact but slower).
    """

    def __init__(self, values: Sequence, dtype=np.float64):
        self.n = len(values)
        self.values = list(values)
        self.dtype = dtype
        self.low_bits = min(self.n, CHUNK_BITS)
        self.low = subset_sums(self.values[: self.low_bits], dtype)

    def chunks(self) -> Iterator[tuple[int, np.ndarray]]:
        """Yield `(start, sums)` with `sums[k] = x(start + k)`, covering all masks once."""
        size = 1 << self.low_bits
        for c in range(1 << (self.n - self.low_bits)):
            high = sum((v for j, v in enumerate(self.values[self.low_bits :]) if c >> j & 1), start=0)
            yield c * size, self.low + high if high else self.low.copy()


def in_span_masks(kernel: Sequence[Sequence[int]], n: int) -> np.ndarray:
    """Boolean over all masks: True where the indicator of S lies in a subspace U.

    `kernel` is an integer basis of the orthogonal complement of U; S is in U
    exactly when every kernel vector sums to zero over S (exact: integers).
    """
    inside = np.ones(1 << n, dtype=bool)
    for vec in kernel:
        big = sum(abs(int(v)) for v in vec) >= 2**62
        sums = ChunkedSums([int(v) for v in vec], object if big else np.int64)
        for start, chunk in sums.chunks():
            inside[start : start + len(chunk)] &= chunk == 0
    return inside
