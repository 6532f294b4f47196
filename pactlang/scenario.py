"""`Model` + one contingency -> `Scenario`: fixed lines and withdrawals applied, ranges collected.

The lines of a contingency apply together. Fixed values (`ATTR of PARTY =
X`, `PARAM = X`, a range whose ends agree) and withdrawals give a smaller or
changed agreement; what stays ranged is listed as `Ranged` quantities of that
agreement, for the ranged check to decide over every value.
"""

from __future__ import annotations

from dataclasses import dataclass, field, fields, is_dataclass, replace
from fractions import Fraction
from itertools import product

from . import ast
from .encode_z3 import Ranged
from .formula import is_aggregate
from .model import Model


@dataclass
class Scenario:
    """A contingency made concrete: the agreement with its fixed lines and
    withdrawals applied, the quantities still ranged, and the fixed values
    (shown beside every counterexample)."""

    model: Model
    ranged: list[Ranged]
    fixed: dict[str, Fraction] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)

    def at(self, values: dict[str, Fraction]) -> Model:
        """The agreement with every ranged quantity at its value in `values`
        (keys as `Ranged.key`; a missing one at the low end of its range)."""
        attrs, params, worths = {}, {}, {}
        for r in self.ranged:
            value = values.get(r.key, r.low)
            if r.kind == "attribute":
                attrs[(r.attribute, r.party)] = value
            elif r.kind == "param":
                params[r.param] = value
            else:
                worths[r.mask] = value
        if not (attrs or params or worths):
            return self.model
        return self.model.with_values(attributes=attrs, params=params, worths=worths)


def worth_key(names) -> str:
    """The name users see for the worth of a listed coalition: `worth {a, b}`."""
    return "worth {" + ", ".join(names) + "}"


def scenario_of(model: Model, contingency: ast.Contingency) -> Scenario:
    """Apply the fixed lines and withdrawals of a contingency; collect its ranges."""
    attrs: dict[tuple[str, str], Fraction] = {}
    params: dict[str, Fraction] = {}
    worth_lines: list[tuple[tuple[str, ...], Fraction, Fraction]] = []
    ranges: list[tuple[str, Fraction, Fraction, tuple]] = []
    gone: list[str] = []
    fixed: dict[str, Fraction] = {}
    notes = []
    leaving = {line.party.name for line in contingency.lines if isinstance(line, ast.Without)}
    for line in contingency.lines:
        match line:
            case ast.AttrFixed(attribute=a, party=p) if p.name in leaving:
                notes.append(f"`{a.name} of {p.name}` is ignored: the party has withdrawn")
            case ast.AttrFixed(attribute=a, party=p, value=v):
                attrs[(a.name, p.name)] = v.value
                fixed[f"{a.name} of {p.name}"] = v.value
            case ast.ParamFixed(param=p, value=v):
                params[p.name] = v.value
                fixed[p.name] = v.value
            case ast.AttrRange(attribute=a, party=p, low=lo, high=hi):
                if lo.value == hi.value and p.name not in leaving:
                    attrs[(a.name, p.name)] = lo.value
                    fixed[f"{a.name} of {p.name}"] = lo.value
                else:
                    ranges.append((f"{a.name} of {p.name}", lo.value, hi.value, ("attribute", a.name, p.name)))
            case ast.ParamRange(param=p, low=lo, high=hi):
                if lo.value == hi.value:
                    params[p.name] = lo.value
                    fixed[p.name] = lo.value
                else:
                    ranges.append((p.name, lo.value, hi.value, ("param", p.name)))
            case ast.WorthRange(members=members, low=lo, high=hi):
                worth_lines.append((tuple(m.name for m in members), lo.value, hi.value))
            case ast.Without(party=p):
                gone.append(p.name)
    scenario = model.with_values(attributes=attrs, params=params)
    for party in gone:
        if party in scenario.parties:
            scenario = without_party(scenario, party)
    ranged: list[Ranged] = []
    for key, lo, hi, what in ranges:
        if what[0] == "attribute":
            if what[2] not in scenario.parties:
                notes.append(f"`{key}` is ignored: the party has withdrawn")
                continue
            ranged.append(Ranged(key, "attribute", lo, hi, attribute=what[1], party=what[2]))
        else:
            ranged.append(Ranged(key, "param", lo, hi, param=what[1]))
    pins: dict[int, Fraction] = {}
    for names, lo, hi in worth_lines:
        if any(p not in scenario.parties for p in names):
            notes.append(f"`{worth_key(names)}` is ignored: a member has withdrawn")
            continue
        mask = scenario.mask_of(names)
        key = worth_key(scenario.names_of(mask))
        if lo == hi:
            pins[mask] = lo
            fixed[key] = lo
        else:
            ranged.append(Ranged(key, "worth", lo, hi, mask=mask))
    if pins:
        scenario = scenario.with_values(worths=pins)
    # a later line on the same quantity replaces an earlier one
    by_key = {r.key: r for r in ranged}
    return Scenario(scenario, list(by_key.values()), fixed, notes)


def without_party(model: Model, party: str) -> Model:
    """The agreement read for the other parties only (`Model.without`), with
    every `PARTY in S` of the withdrawn party read as 0: no coalition of the
    smaller game contains it, so the formula still gives each of them the
    worth it had in the larger game."""
    smaller = model.without(party)
    formula = smaller.formula
    if formula is not None:
        formula = replace(formula, expr=_member_as_zero(formula.expr, party))
    table = {mask: _member_as_zero(e, party) for mask, e in smaller.table.items()}
    fixed = {p: replace(line, expr=_member_as_zero(line.expr, party)) for p, line in smaller.payouts.fixed.items()}
    return replace(smaller, formula=formula, table=table, payouts=replace(smaller.payouts, fixed=fixed))


def _children(node) -> list:
    """The syntax nodes directly below `node`, whatever its kind (so node kinds
    added later are rewritten too)."""
    out = []
    pending = [getattr(node, f.name) for f in fields(node)]
    while pending:  # fields may hold nodes, or tuples of nodes and tuples (a chain's `(op, operand)` pairs)
        value = pending.pop()
        if isinstance(value, (tuple, list)):
            pending.extend(value)
        elif _is_expr(value):
            out.append(value)
    return out


def _swap(value, done: dict):
    """`value` (a node, or a tuple holding nodes) with every rewritten node put in."""
    if isinstance(value, (tuple, list)):
        new = type(value)(_swap(v, done) for v in value)
        return value if all(a is b for a, b in zip(new, value)) else new
    if _is_expr(value):
        return done.get(id(value), value)
    return value


def _is_expr(value) -> bool:
    return is_dataclass(value) and not isinstance(value, (type, ast.Span, ast.Ident))


def _member_as_zero(expr, party: str):
    """`expr` with `party in S` replaced by 0, rebuilt bottom-up without
    recursion (long chains of `+` nest deeply); untouched subtrees are kept."""
    if expr is None:
        return None
    done: dict[int, object] = {}
    stack = [(expr, False)]
    while stack:
        node, expanded = stack.pop()
        if id(node) in done:
            continue
        if isinstance(node, ast.Member):
            done[id(node)] = ast.Num(Fraction(0), "0", span=node.span) if node.item == party else node
            continue
        if isinstance(node, ast.Call) and is_aggregate(node):
            done[id(node)] = node  # `sum(ATTR in S)` names an attribute, not a party
            continue
        kids = _children(node)
        if not expanded:
            stack.append((node, True))
            stack.extend((k, False) for k in kids if id(k) not in done)
            continue
        changes = {}
        for f in fields(node):
            value = getattr(node, f.name)
            new = _swap(value, done)
            if new is not value:
                changes[f.name] = new
        done[id(node)] = replace(node, **changes) if changes else node
    return done[id(expr)]


def corners(ranged: list[Ranged]):
    """Every vertex of the box of ranges (for tests and small cross-checks)."""
    for ends in product(*[(r.low, r.high) for r in ranged]):
        yield {r.key: v for r, v in zip(ranged, ends)}
