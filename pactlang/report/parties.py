"""`Model` + one `Result` -> `PartyView`: what each party pays or receives,
what it would pay or earn alone, and its Shapley and nucleolus amounts.

The view is computed for the scenario the result speaks of (the baseline, or
a contingency with its fixed lines applied and its ranged quantities set to
the values of the worst counterexample), so a reader sees who carries whom
exactly where the requirement fails.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from fractions import Fraction

from ..model import Model
from ..results import Result

# Shapley and the nucleolus read every coalition; above this many parties the
# view shows payouts and stand-alone figures only (2**12 worths, well under a second).
MAX_SOLUTION_PARTIES = 12


@dataclass
class PartyView:
    """One row per party, in party order; amounts in the agreement's own sign
    (what a party pays in a cost agreement, what it receives in a value one)."""

    kind: str
    unit: str | None
    parties: tuple[str, ...]
    payout: list[Fraction]
    alone: list[Fraction]
    shapley: list[Fraction] | None = None
    nucleolus: list[Fraction] | None = None
    coalition: tuple[str, ...] = ()  # the worst counterexample's members
    notes: list[str] = field(default_factory=list)
    at: dict[str, Fraction] = field(default_factory=dict)  # ranged values the view is taken at

    def gain(self, i: int) -> Fraction:
        """What party i is better off in the agreement than alone."""
        if self.kind == "cost":
            return self.alone[i] - self.payout[i]
        return self.payout[i] - self.alone[i]

    def key(self) -> tuple:
        """Two views with the same key print the same table."""
        return (self.parties, tuple(self.payout), tuple(self.alone),
                tuple(self.shapley or ()), tuple(self.nucleolus or ()), tuple(sorted(self.at.items())))


def scenario_model(model: Model, contingency: str | None, values: dict[str, Fraction] | None = None) -> Model:
    """The agreement a result speaks of: the baseline, or a contingency with
    its ranged quantities set to `values` (missing ones at their low end)."""
    if contingency is None:
        return model
    from ..scenario import scenario_of

    found = [c for c in model.contingencies if c.name == contingency]
    if not found:
        return model
    return scenario_of(model, found[0]).at(values or {})


def party_view(model: Model, result: Result, deadline: float | None = None,
               max_parties: int = MAX_SOLUTION_PARTIES) -> PartyView | None:
    """The per-party view for a result (None when its scenario cannot be evaluated).

    `deadline` (a `time.monotonic()` instant) skips Shapley and the nucleolus
    with a note once it has passed."""
    from ..formula import EvaluationError
    from ..worths import PayoutUnavailable, Worths, payout

    values = result.counterexamples[0].parameters if result.counterexamples else {}
    try:
        concrete = scenario_model(model, result.contingency, values)
        worths = Worths(concrete)
        paid = payout(worths)
        alone = [worths.exact(1 << i) for i in range(concrete.n)]
    except (EvaluationError, PayoutUnavailable):
        return None
    view = PartyView(concrete.kind, concrete.unit, concrete.parties, paid, alone,
                     coalition=result.counterexamples[0].coalition if result.counterexamples else (),
                     at=dict(values))
    if concrete.n > max_parties:
        view.notes.append(f"Shapley and nucleolus not computed: {concrete.n} parties is above "
                          f"the {max_parties} this view evaluates every coalition for")
        return view
    from .. import solutions

    sign = -1 if concrete.kind == "cost" else 1
    try:
        game = worths.game()
    except EvaluationError as exc:  # some coalition has no worth (a division by zero): no game to solve
        view.notes.append(f"Shapley and nucleolus not computed: {exc.message}")
        return view
    except (solutions.NotApplicable, solutions.SolverError, ValueError) as exc:
        view.notes.append(f"Shapley and nucleolus not computed: {exc}")
        return view
    for name, compute in (("shapley", solutions.shapley), ("nucleolus", solutions.nucleolus)):
        if deadline is not None and time.monotonic() > deadline:
            view.notes.append(f"{'Shapley' if name == 'shapley' else 'nucleolus'} skipped: the time limit has passed")
            continue
        try:
            setattr(view, name, [v * sign for v in compute(game)])
        except (solutions.NotApplicable, solutions.SolverError, ValueError) as exc:
            view.notes.append(f"{name} not available: {exc}")
    return view
