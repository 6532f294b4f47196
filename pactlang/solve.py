"""`Model` -> `SolveReport`: worth(all), the least-core value with its proof,
and the payout of every rule side by side with its worst excess.

The solvers work on the game in value form (`Worths.game()`); payouts of a
cost agreement are negated back here, so every number in the report is in
the agreement's own sign: what a party pays (cost) or receives (value).
"""

from __future__ import annotations

from .verdict_rules import is_relative
from dataclasses import dataclass, field
from fractions import Fraction

from .model import Model
from .worths import PayoutUnavailable, Worths, payout

from .game import MAX_TABULATED as MAX_SOLVED, TooLarge, require_tabulable  # noqa: F401 (re-exported)

RULES = ("payout", "shapley", "nucleolus", "equal split", "separable costs remaining benefits")


@dataclass
class Allocation:
    """One rule's payout (None when it cannot be computed, with the reason)."""

    rule: str
    payout: list[Fraction] | None
    worst_excess: Fraction | None = None
    worst_coalition: tuple[str, ...] | None = None
    reason: str | None = None


@dataclass
class SolveReport:
    agreement: str
    kind: str
    unit: str | None
    parties: tuple[str, ...]
    worth_all: Fraction
    least_core_value: Fraction
    least_core_payout: list[Fraction]
    certificate: list[tuple[tuple[str, ...], Fraction]]
    allocations: list[Allocation] = field(default_factory=list)
    # the split `least_core_payout` is nearest to: "payout" or "equal split"
    least_core_anchor: str = "payout"
    # "nucleolus" (over splits giving each party at least its stand-alone worth) or
    # "prenucleolus" (over all splits of worth(all): no such split exists)
    nucleolus_kind: str = "nucleolus"
    # what each party earns (value) or would pay (cost) alone
    alone: list[Fraction] = field(default_factory=list)
    # for agreements with a `stable within P%` line: the smallest P any split meets
    # (a fraction, 1/20 is 5%), or None when none does; absent otherwise
    least_percentage: Fraction | None = None
    has_percentage: bool = False


def solve_model(model: Model) -> SolveReport:
    """Everything `pactlang solve` prints, exact."""
    from . import solutions
    from .solutions.excess import ExcessTable

    require_tabulable(model.n, "solve")
    worths = Worths(model)
    game = worths.game()
    sign = -1 if model.kind == "cost" else 1
    lc = solutions.least_core(game)
    certificate = [(tuple(model.names_of(mask)), weight) for mask, weight in lc.certificate]
    try:
        own_payout, own_reason = payout(worths), None
    except PayoutUnavailable as exc:
        own_payout, own_reason = None, exc
    # The least core is a set; show its split nearest to the agreement's own
    # payout (least money moved), not whichever corner the solver lands on.
    anchor = own_payout if own_payout is not None else [worths.worth_all / model.n] * model.n
    nearest = solutions.nearest_stable_payout(game, [v * sign for v in anchor], lc.value)
    if not nearest.feasible:
        raise solutions.SolverError("no split meets the least-core value it was computed from")
    report = SolveReport(
        model.title, model.kind, model.unit, model.parties, worths.worth_all, lc.value,
        [v * sign for v in nearest.payout], certificate,
    )
    report.least_core_anchor = "payout" if own_payout is not None else "equal split"
    singles = [game.exact(1 << i) for i in range(model.n)]
    report.alone = [v * sign for v in singles]
    if sum(singles, Fraction(0)) > game.exact(game.full):
        report.nucleolus_kind = "prenucleolus"
    if any(is_relative(r) for r in model.requirements):
        from .solutions.repair import least_percentage

        report.has_percentage = True
        report.least_percentage = least_percentage(game).percentage

    def own() -> list[Fraction]:
        if own_payout is None:
            raise own_reason
        return own_payout

    candidates = [
        ("payout", own),
        ("shapley", lambda: [v * sign for v in solutions.shapley(game)]),
        ("nucleolus", lambda: [v * sign for v in solutions.nucleolus(game)]),
        ("least core", lambda: report.least_core_payout),
        ("equal split", lambda: [v * sign for v in solutions.equal_split(game)]),
        ("separable costs remaining benefits",
         lambda: [v * sign for v in solutions.separable_costs_remaining_benefits(game)]),
    ]
    for attr in sorted(model.attributes):
        if len(model.attributes[attr]) == model.n:
            weights = model.attribute_vector(attr)
            candidates.append((f"proportional to {attr}",
                               lambda w=weights: [v * sign for v in solutions.proportional(game, w)]))
    for rule, compute in candidates:
        try:
            values = compute()
        except (PayoutUnavailable, solutions.NotApplicable) as exc:
            report.allocations.append(Allocation(rule, None, reason=str(exc)))
            continue
        value_form = [v * sign for v in values]
        worst, masks = ExcessTable(game, value_form).maximum()
        report.allocations.append(Allocation(rule, values, worst, tuple(model.names_of(masks[0])) if masks else None))
    return report
