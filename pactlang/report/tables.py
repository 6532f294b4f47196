"""`FileReport` results (+ the model) -> tables of display strings, shared by
the text, Markdown and HTML renderers so all three say the same thing.

Every amount goes through `amounts.Figures`, chosen per table so that the
numbers of one table stay apart and an excess never rounds onto 0 or onto
its bound.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from fractions import Fraction

from ..results import FAILS, Result
from .amounts import Figures, percent, percent_text
from .parties import PartyView, party_view


@dataclass(frozen=True)
class RenderOptions:
    """`--digits N` (None: enough to tell a table's numbers apart), `--exact`
    (exact fractions), `--full` (every member of a coalition), and the time
    budget for the per-party Shapley and nucleolus (seconds, None: no limit)."""

    digits: int | None = None
    exact: bool = False
    full: bool = False
    time_limit: float | None = None
    party_views: bool = True
    min_decimals: int = 0  # the decimals of a `round payouts` step


@dataclass
class Table:
    head: list[str]
    rows: list[list[str]]
    right: list[bool]  # which columns hold numbers (right-aligned)
    marked: list[bool] = field(default_factory=list)  # rows to highlight
    rounded: bool = False  # some figure is rounded


def coalition_words(members, parties=(), full: bool = False) -> str:
    """A coalition for people: `everyone`, its members, or `everyone except
    {...}` when that is shorter; `full` always lists the members."""
    members = tuple(members)
    listed = "{" + ", ".join(members) + "}"
    if parties and len(members) == len(parties) and len(parties) > 1:
        return "everyone"
    if full or not parties:
        return listed
    inside = set(members)
    others = "everyone except {" + ", ".join(p for p in parties if p not in inside) + "}"
    return others if len(others) < len(listed) else listed


def percent_bound(result: Result) -> Fraction | None:
    """The percentage of `stable within P%` (None for other requirements)."""
    text = result.requirement
    if text.startswith("stable within ") and text.endswith("%"):
        return Fraction(text[len("stable within "):-1])
    return None


def absolute_bound(result: Result) -> Fraction | None:
    """The allowed excess of `stable` (0), `individually rational` (0) or `stable within X`."""
    text = result.requirement
    if text in ("stable", "individually rational"):
        return Fraction(0)
    if text.startswith("stable within ") and not text.endswith("%"):
        return Fraction(text[len("stable within "):])
    return None


def values_words(values: dict[str, Fraction], options: RenderOptions) -> str:
    """`pipe_price = 4, demand of cedar = 26`, rounded like any other figure."""
    if not values:
        return ""
    figures = Figures.for_values(list(values.values()), options.digits, options.exact, options.min_decimals)
    return ", ".join(f"{k} = {figures.amount(v)}" for k, v in values.items())


def unit_suffix(unit: str | None) -> str:
    return f" {unit}" if unit else ""


def headline(result: Result, unit: str | None, options: RenderOptions, worst_worth: Fraction | None = None) -> str:
    """`worst excess 39.2 kEUR (allowed 5)`, with the percentage of the coalition's
    worth for a percentage requirement."""
    if result.worst_excess is None or result.requirement == "balanced budget" and result.worst_excess == 0:
        return "" if result.worst_excess is None else f"worst excess 0{unit_suffix(unit)}"
    bound = absolute_bound(result)
    figures = Figures.for_values([result.worst_excess, 0] + ([bound] if bound is not None else []),
                                 options.digits, options.exact, options.min_decimals)
    text = f"worst excess {figures.excess(result.worst_excess)}{unit_suffix(unit)}"
    pct = percent_bound(result)
    if pct is not None:
        if result.counterexamples:
            worst_pct = max((p for c in result.counterexamples
                             if (p := percent(c.excess, c.worth)) is not None), default=None)
            if worst_pct is not None:
                text += f", up to {percent_text(worst_pct, _pct_decimals(worst_pct, pct), options.exact)} of a coalition's worth"
        elif worst_worth is not None and (p := percent(result.worst_excess, worst_worth)) is not None:
            text += f" = {percent_text(p, _pct_decimals(p, pct), options.exact)} of that coalition's worth"
        text += f" (allowed {percent_text(pct, 2, options.exact)})"
    elif bound and result.requirement.startswith("stable within"):
        text += f" (allowed {figures.amount(bound)}{unit_suffix(unit)})"
    return text


def _pct_decimals(value: Fraction, bound: Fraction) -> int:
    """Decimals that keep a percentage apart from its bound (at least 1)."""
    from .amounts import decimals_apart

    return decimals_apart([value, bound, 0], 1)


def counterexample_table(result: Result, parties, unit: str | None, options: RenderOptions) -> Table | None:
    """worth, payout, excess (and % of worth, ranged values) per counterexample;
    the coalition comes last so long ones do not push the numbers apart."""
    if not result.counterexamples:
        return None
    cex = result.counterexamples
    money = f" ({unit})" if unit else ""
    pct = percent_bound(result)
    params = sorted({k for c in cex for k in c.parameters})
    values = [v for c in cex for v in (c.worth, c.payout, c.excess)] + [0]
    values += [c.allowed for c in cex if c.allowed is not None and pct is None]
    figures = Figures.for_values(values, options.digits, options.exact, options.min_decimals)
    param_figures = Figures.for_values([c.parameters[k] for c in cex for k in params if k in c.parameters] or [0],
                                       options.digits, options.exact, options.min_decimals)
    head = [f"worth{money}", f"payout{money}", f"excess{money}"]
    if pct is not None:
        head.append("% of worth")
    head += params + ["coalition"]
    rows = []
    for c in cex:
        row = [figures.amount(c.worth), figures.amount(c.payout), figures.excess(c.excess)]
        if pct is not None:
            share = percent(c.excess, c.worth)
            row.append(percent_text(share, 1 if share is None else _pct_decimals(share, pct), options.exact))
        row += [param_figures.amount(c.parameters[k]) if k in c.parameters else "" for k in params]
        row.append(coalition_words(c.coalition, parties, options.full))
        rows.append(row)
    right = [True] * (len(head) - 1) + [False]
    rounded = figures.rounded(values) or param_figures.rounded([c.parameters[k] for c in cex for k in params if k in c.parameters])
    return Table(head, rows, right, [False] * len(rows), rounded)


def party_table(view: PartyView, options: RenderOptions) -> Table:
    """One row per party: pays/receives, alone, better off by, Shapley, nucleolus;
    the members of the worst coalition are marked."""
    verb = "pays" if view.kind == "cost" else "receives"
    alone = "alone would pay" if view.kind == "cost" else "alone would earn"
    money = f" ({view.unit})" if view.unit else ""
    gains = [view.gain(i) for i in range(len(view.parties))]
    columns = [view.payout, view.alone, gains] + [c for c in (view.shapley, view.nucleolus) if c is not None]
    values = [v for col in columns for v in col]
    figures = Figures.for_values(values, options.digits, options.exact, options.min_decimals)
    head = ["party", f"{verb}{money}", f"{alone}", "better off by"]
    if view.shapley is not None:
        head.append("Shapley")
    if view.nucleolus is not None:
        head.append("nucleolus")
    members = set(view.coalition)
    rows, marked = [], []
    for i, p in enumerate(view.parties):
        row = [p + (" *" if p in members else ""), figures.amount(view.payout[i]), figures.amount(view.alone[i]),
               figures.excess(gains[i])]
        if view.shapley is not None:
            row.append(figures.amount(view.shapley[i]))
        if view.nucleolus is not None:
            row.append(figures.amount(view.nucleolus[i]))
        rows.append(row)
        marked.append(p in members)
    return Table(head, rows, [False] + [True] * (len(head) - 1), marked, figures.rounded(values))


class PartyViews:
    """Per-party views of one file, computed once per scenario and within the time limit."""

    def __init__(self, model, options: RenderOptions):
        self.model = model
        self.options = options
        self.started = time.monotonic()

    def for_result(self, result: Result) -> PartyView | None:
        if self.model is None or not self.options.party_views or result.status != FAILS:
            return None
        if result.requirement == "balanced budget":
            return None
        deadline = None if self.options.time_limit is None else self.started + self.options.time_limit
        return party_view(self.model, result, deadline)


def worst_worth(model, result: Result) -> Fraction | None:
    """The worth of the worst coalition of a result, for the percentage in its headline."""
    if model is None or not result.worst_coalition or percent_bound(result) is None or result.counterexamples:
        return None
    from ..formula import EvaluationError
    from ..worths import Worths
    from .parties import scenario_model

    try:
        if result.contingency is not None:
            from ..scenario import scenario_of

            found = [c for c in model.contingencies if c.name == result.contingency]
            if not found or scenario_of(model, found[0]).ranged:
                return None  # the worst coalition's worth depends on values the result does not give
        concrete = scenario_model(model, result.contingency)
        if any(p not in concrete.parties for p in result.worst_coalition):
            return None
        return Worths(concrete).exact(concrete.mask_of(result.worst_coalition))
    except (EvaluationError, ValueError):
        return None
