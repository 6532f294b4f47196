"""Requirement + exact excesses -> verdict: the allowed excess, the excess sign, the status and the counterexample order.

The one home of these rules for every backend (enumeration in `check`, the
integer program in `search_milp`, Z3 over ranges in `ranged_check` and
`weight_corners`), so that the backends can only differ in how they search,
never in what they conclude from what they found.
"""

from __future__ import annotations

from fractions import Fraction

from . import ast
from .results import FAILS, HOLDS


def excess_sign(kind: str) -> int:
    """+1 for a value agreement, -1 for a cost agreement: excess = sign * (worth - paid)."""
    return 1 if kind == "value" else -1


def excess_of(kind: str, worth, paid):
    """e(S): what S gains by leaving (value: v - x; cost: x - c). Works on
    Fractions and on anything else with `-` (arrays, symbolic terms)."""
    return worth - paid if kind == "value" else paid - worth


def is_relative(req: ast.Require) -> bool:
    """Whether the allowed excess depends on the coalition's worth (`stable within P%`)."""
    return req.kind == "within" and isinstance(req.bound, ast.Percent)


def bound_ratio(req: ast.Require) -> Fraction:
    """E of `stable within E`, P of `stable within P%`, 0 for `stable` and individual rationality."""
    return req.bound.value if req.kind == "within" else Fraction(0)


def allowed_excess(req: ast.Require, worth: Fraction) -> Fraction:
    """The excess a coalition of this worth may have: 0 for `stable` and for
    individual rationality, E for `stable within E`, P * |worth| for `P%`."""
    if is_relative(req):
        return req.bound.value * abs(worth)
    return bound_ratio(req)


def violates(req: ast.Require, excess: Fraction, worth: Fraction) -> bool:
    """Whether a coalition with this exact excess and worth breaks the requirement."""
    return excess > allowed_excess(req, worth)


def status_of(req: ast.Require, worst_excess: Fraction | None, violators: int, budget_excess: Fraction = Fraction(0)) -> str:
    """`fails` or `holds` from what a complete search found.

    For a fixed allowance (`stable`, `stable within E`, individual
    rationality) the exact worst excess decides; the violators found must
    agree with it, or the search is wrong and this raises. A relative
    allowance (`P%`) differs per coalition, so the violators decide. An
    unbalanced budget fails every coalition requirement (the grand coalition
    is its counterexample). `worst_excess` may be None when a backend proved
    the verdict but could not settle the worst excess."""
    if not is_relative(req) and worst_excess is not None:
        exceeds = worst_excess > bound_ratio(req)
        if exceeds != (violators > 0):
            raise AssertionError(f"internal: worst excess {worst_excess} and {violators} violating coalitions "
                                 f"disagree on `{ast.requirement_text(req)}`")
    if violators > 0:
        return FAILS
    if req.kind in ("stable", "within") and budget_excess != 0:
        return FAILS
    return HOLDS


def first_grid_point_above(value: Fraction, grid: int) -> Fraction:
    """The least multiple of 1/grid strictly above `value`: on a quantity that
    is always a multiple of 1/grid, `x > value` is `x >= this`."""
    return Fraction(value.numerator * grid // value.denominator + 1, grid)


def rank(excess: Fraction, mask: int) -> tuple:
    """The order counterexamples are listed in: excess descending, then
    coalition size, then coalition mask (so that coalitions tied on excess
    come out the same whatever a solver found first)."""
    return (-excess, mask.bit_count(), mask)


def counterexample_order(mask_of, full: int):
    """Sort key for `Counterexample`s: an unbalanced budget (the grand
    coalition) first, then `rank`. `mask_of` maps party names to a mask."""
    def key(c) -> tuple:
        mask = mask_of(c.coalition)
        return (mask != full, *rank(c.excess, mask))
    return key
