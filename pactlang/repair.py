"""`Model` (+ its text) and the requirements to meet -> the nearest payout meeting all of them, as payout lines checked under every contingency.

Nearest means the least total money moved between parties, ties broken by
the least largest change to any one party (`solutions.nearest_stable_payout`).
Every `require stable ...` line of the agreement is met at once (with
`require individually rational` when the agreement has it), or only the
`--target`. When no payout meets them, the least core of the allowance game
(its certificate) is the proof; for a single percentage the smallest
reachable percentage is given.

The repaired lines are pasted into the agreement's text and the result is
checked again, in the baseline and under every contingency. When the
agreement has contingencies, one party that no contingency removes keeps a
`payout rest by ...` line, so the payouts still add up to worth(all) when a
party leaves or a range moves worth(all); what the re-check does not prove
is listed as not covered.
"""

from __future__ import annotations

from .verdict_rules import bound_ratio, is_relative
from dataclasses import dataclass, field
from fractions import Fraction

from . import ast
from .game import require_tabulable
from .model import Model
from .numbers import exact_str
from .solutions.repair import Allowance
from .worths import Worths, payout


class NoTarget(Exception):
    """The agreement states no `require stable ...` and no target was given."""


@dataclass(frozen=True)
class Target:
    """One requirement to meet: its text, its line (None for `--target`) and its allowance."""

    label: str
    line: int | None
    allowance: Allowance


@dataclass
class RepairReport:
    agreement: str
    kind: str
    unit: str | None
    parties: tuple[str, ...]
    target: str  # the requirements met, e.g. "stable, stable within 15"
    current: list[Fraction] | None
    feasible: bool
    targets: list[Target] = field(default_factory=list)
    payout: list[Fraction] | None = None
    total_change: Fraction | None = None
    max_change: Fraction | None = None
    least_core_value: Fraction | None = None
    certificate: list[tuple[tuple[str, ...], Fraction]] | None = None
    # the smallest reachable percentage (a fraction, 1/20 is 5%) when one percentage target is unreachable
    least_percentage: Fraction | None = None
    unreachable_reason: str | None = None  # set when no allowance is reachable at all
    lines: list[str] = field(default_factory=list)  # payout lines to paste
    balancer: str | None = None  # the party on the `payout rest by` line
    repaired_text: str | None = None
    # (contingency or None, requirement text, status, reason) from checking the pasted agreement
    rechecks: list[tuple[str | None, str, str, str | None]] = field(default_factory=list)
    not_covered: list[str] = field(default_factory=list)


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


def targets_of(model: Model, target: str | None = None) -> list[Target]:
    """The requirements a repair meets: `--target` alone, else every
    `require stable ...` line (and `individually rational` beside them)."""
    if target is not None:
        epsilon, relative = parse_target(target)
        return [Target(f"stable within {target.strip()}", None, Allowance(epsilon, relative))]
    out = []
    for req in model.requirements:
        line = req.span.line if req.span else None
        if req.kind == "stable":
            out.append(Target("stable", line, Allowance(Fraction(0))))
        elif req.kind == "within":
            out.append(Target(ast.requirement_text(req), line, Allowance(bound_ratio(req), is_relative(req))))
    if not out:
        raise NoTarget("the agreement has no `require stable ...`; give a target with --target")
    for req in model.requirements:
        if req.kind == "rational":
            out.append(Target("individually rational", req.span.line if req.span else None,
                              Allowance(Fraction(0), singletons=True)))
    return out


def default_target(model: Model) -> tuple[Fraction, bool, str]:
    """The tightest absolute `require stable ...` line (kept for callers that need one epsilon)."""
    absolute = [t for t in targets_of(model) if not t.allowance.relative and not t.allowance.singletons]
    if absolute:
        best = min(absolute, key=lambda t: t.allowance.epsilon)
        return best.allowance.epsilon, False, best.label
    first = targets_of(model)[0]
    return first.allowance.epsilon, True, first.label


def repair_model(model: Model, target: str | None = None, text: str | None = None,
                 time_limit: float | None = None) -> RepairReport:
    """The nearest payout meeting the targets; with the agreement's `text`,
    its payout lines pasted back and checked under every contingency."""
    from . import solutions
    from .solutions.repair import least_percentage
    from .worths import PayoutUnavailable

    targets = targets_of(model, target)
    require_tabulable(model.n, "repair")
    worths = Worths(model)
    game = worths.game()
    sign = -1 if model.kind == "cost" else 1
    try:
        current = payout(worths)
    except PayoutUnavailable:
        current = None
    # start from the agreement's own payout; without one, from equal split
    start = current if current is not None else [worths.worth_all / model.n] * model.n
    label = ", ".join(t.label for t in targets)
    allowances = [t.allowance for t in targets]
    single = allowances[0] if len(allowances) == 1 else None
    if single is not None and not single.relative:
        result = solutions.nearest_stable_payout(game, [v * sign for v in start], single.epsilon)
    else:
        result = solutions.nearest_stable_payout(game, [v * sign for v in start], allowances=allowances)
    report = RepairReport(model.title, model.kind, model.unit, model.parties, label, current,
                          result.feasible, targets)
    if not result.feasible:
        lc = result.least_core
        report.least_core_value = lc.value
        report.certificate = [(tuple(model.names_of(m)), w) for m, w in lc.certificate]
        if single is not None and single.relative:
            best = least_percentage(game)
            if best.percentage is None:
                report.unreachable_reason = ("coalitions worth 0 would gain by leaving under every split, "
                                             "and no percentage of 0 allows that")
            report.least_percentage = best.percentage
            report.certificate = [(tuple(model.names_of(m)), w) for m, w in best.certificate]
        return report
    report.payout = [v * sign for v in result.payout]
    report.total_change, report.max_change = result.total_change, result.max_change
    if result.total_change != 0:
        report.balancer = balancing_party(model, report.payout, current)
        report.lines = payout_lines(model, text, report.payout, current, report.balancer)
    if text is not None:
        report.repaired_text = pasted(model, text, report.lines) if report.lines else text
        recheck(report, model, text, time_limit)
    else:
        report.not_covered.append("the repaired lines were not checked under the contingencies")
    return report


def balancing_party(model: Model, y: list[Fraction], current: list[Fraction] | None) -> str | None:
    """The party that keeps a `payout rest by` line, or None (every line fixed).

    Only agreements with contingencies need one: a fixed amount for everyone
    adds up to the baseline worth(all) only. It must be a party no
    contingency removes; a party the agreement's own rule pays comes first,
    then the one with the largest payout (it absorbs a change in worth(all)
    most easily).
    """
    if not model.contingencies:
        return None
    removed = {line.party.name for c in model.contingencies for line in c.lines if isinstance(line, ast.Without)}
    by_rule = set(model.parties) - set(model.payouts.fixed) if model.payouts.rule is not None else set()
    stay = [i for i, p in enumerate(model.parties) if p not in removed]
    if not stay:
        return None
    best = max(stay, key=lambda i: (model.parties[i] in by_rule, abs(y[i]), -i))
    return model.parties[best]


def payout_lines(model: Model, text: str | None, y: list[Fraction], current: list[Fraction] | None,
                 balancer: str | None) -> list[str]:
    """Payout lines giving `y`: a fixed line per party (the agreement's own
    line, verbatim, where its amount is unchanged) and the balancing party
    on `payout rest by ...`."""
    lines = []
    source = text.splitlines() if text is not None else None
    for i, name in enumerate(model.parties):
        if name == balancer:
            continue
        own = model.payouts.fixed.get(name)
        if (own is not None and source is not None and own.span is not None and current is not None
                and current[i] == y[i] and own.span.line == own.span.end_line):
            lines.append(source[own.span.line - 1][own.span.column - 1: own.span.end_column - 1].strip())
            continue
        lines.append(f"payout {name} = {payout_literal(y[i])}")
    if balancer is not None:
        # one party is left for the rule: `equal split` gives it the whole rest (a
        # proportional rule would fail on a weight of 0)
        lines.append("payout rest by equal split")
    return lines


def pasted(model: Model, text: str, lines: list[str]) -> str:
    """The agreement's text with its payout statements replaced by `lines`."""
    spans = [s.span for s in model.document.statements
             if isinstance(s, (ast.PayoutFixed, ast.PayoutAll, ast.PayoutRest)) and s.span is not None]
    source = text.splitlines()
    drop = {ln for s in spans for ln in range(s.line, s.end_line + 1)}
    first = min((s.line for s in spans), default=None)
    out = []
    for number, line in enumerate(source, start=1):
        if number == first:
            out.extend(lines)
        if number not in drop:
            out.append(line)
    if first is None:
        out.extend(lines)
    return "\n".join(out) + "\n"


def recheck(report: RepairReport, model: Model, text: str, time_limit: float | None) -> None:
    """Check the pasted agreement for every target, in the baseline and under
    every contingency; fill `rechecks` and `not_covered`."""
    from .check import CheckOptions, check_model
    from .load import load_text
    from .solutions import SolverError

    checked = report.repaired_text
    extra = [t for t in report.targets if t.line is None]
    if extra:  # a --target is checked like a requirement of the file
        checked += "".join(f"require {t.label}\n" for t in extra)
    new = load_text(checked, model.path).model
    wanted = {t.label for t in report.targets}
    results = check_model(new, CheckOptions(time_limit=time_limit))
    for r in results:
        if r.requirement not in wanted:
            continue
        report.rechecks.append((r.contingency, r.requirement, r.status, r.reason))
        if r.contingency is None and r.status == "fails":
            step = getattr(model.payouts, "rounding", None)
            if step is None:
                raise SolverError(f"the repaired payout fails `{r.requirement}` when checked again")
            # the agreement's `round payouts` line moves each amount by less than a step
            report.not_covered.append(f"`{r.requirement}` fails in the baseline once the amounts are rounded "
                                      f"to {exact_str(step)} (the agreement's `round payouts` line)")
            continue
        if r.status != "holds":
            where = "the baseline" if r.contingency is None else f'contingency "{r.contingency}"'
            why = "fails" if r.status == "fails" else f"is not settled ({r.reason})"
            report.not_covered.append(f"`{r.requirement}` {why} under {where}")


def payout_literal(value: Fraction) -> str:
    """A payout expression the language reads back exactly: `12.5`, `-3`, `1 / 3`."""
    text = exact_str(value)
    if "/" not in text:
        return text
    num, den = value.numerator, value.denominator
    return f"-{abs(num)} / {den}" if num < 0 else f"{num} / {den}"
