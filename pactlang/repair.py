"""`Model` + target epsilon -> the nearest payout meeting it, as payout lines.

Nearest means the least total money moved between parties, ties broken by
the least largest change to any one party (`solutions.nearest_stable_payout`).
When the target is below the least-core value no payout meets it, and the
least core's certificate is the proof.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

from . import ast
from .model import Model
from .numbers import exact_str
from .worths import Worths, payout


class NoTarget(Exception):
    """The agreement states no `require stable ...` and no target was given."""


@dataclass
class RepairReport:
    agreement: str
    kind: str
    unit: str | None
    parties: tuple[str, ...]
    target: str  # e.g. "stable within 15"
    current: list[Fraction] | None
    feasible: bool
    payout: list[Fraction] | None = None
    total_change: Fraction | None = None
    max_change: Fraction | None = None
    least_core_value: Fraction | None = None
    certificate: list[tuple[tuple[str, ...], Fraction]] | None = None


def parse_target(text: str) -> tuple[Fraction, bool]:
    """`15`, `-2.5` or `2%` -> (epsilon, relative). Exact decimals only."""
    text = text.strip()
    relative = text.endswith("%")
    body = text[:-1] if relative else text
    try:
        value = Fraction(body)
    except ValueError:
        raise ValueError(f"the target `{text}` is not a number such as 15 or 2%") from None
    if "/" in body or "e" in body.lower():
        raise ValueError(f"the target `{text}` must be written as a decimal, such as 15 or 2%")
    return (value / 100, True) if relative else (value, False)


def default_target(model: Model) -> tuple[Fraction, bool, str]:
    """The agreement's own first `require stable within` (or `require stable`)."""
    for req in model.requirements:
        if req.kind == "within":
            relative = isinstance(req.bound, ast.Percent)
            return req.bound.value, relative, ast.requirement_text(req)
    for req in model.requirements:
        if req.kind == "stable":
            return Fraction(0), False, "stable"
    raise NoTarget("the agreement has no `require stable ...`; give a target with --target")


def repair_model(model: Model, epsilon: Fraction, relative: bool, label: str) -> RepairReport:
    from . import solutions
    from .worths import PayoutUnavailable

    worths = Worths(model)
    game = worths.game()
    sign = -1 if model.kind == "cost" else 1
    try:
        current = payout(worths)
    except PayoutUnavailable:
        current = None
    # start from the agreement's own payout; without one, from equal split
    start = current if current is not None else [worths.worth_all / model.n] * model.n
    result = solutions.nearest_stable_payout(game, [v * sign for v in start], epsilon, relative)
    report = RepairReport(model.title, model.kind, model.unit, model.parties, label, current, result.feasible)
    if result.feasible:
        report.payout = [v * sign for v in result.payout]
        report.total_change, report.max_change = result.total_change, result.max_change
    else:
        lc = result.least_core
        report.least_core_value = lc.value
        report.certificate = [(tuple(model.names_of(m)), w) for m, w in lc.certificate]
    return report


def payout_literal(value: Fraction) -> str:
    """A payout expression the language reads back exactly: `12.5`, `-3`, `1 / 3`."""
    text = exact_str(value)
    if "/" not in text:
        return text
    num, den = value.numerator, value.denominator
    return f"-{abs(num)} / {den}" if num < 0 else f"{num} / {den}"
