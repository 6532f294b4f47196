"""`Model` + one contingency -> `Scenario`: fixed lines and withdrawals applied, ranges collected.

The lines of a contingency apply together. Fixed values (`ATTR of PARTY =
X`, `PARAM = X`, a range whose ends agree) and withdrawals give a smaller or
changed agreement; what stays ranged is listed as `Ranged` quantities of that
agreement, for the ranged check to decide over every value.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from fractions import Fraction
from itertools import product

from . import ast
from .encode_z3 import Ranged
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
    for line in contingency.lines:
        match line:
            case ast.AttrFixed(attribute=a, party=p, value=v):
                attrs[(a.name, p.name)] = v.value
                fixed[f"{a.name} of {p.name}"] = v.value
            case ast.ParamFixed(param=p, value=v):
                params[p.name] = v.value
                fixed[p.name] = v.value
            case ast.AttrRange(attribute=a, party=p, low=lo, high=hi):
                if lo.value == hi.value:
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
    notes = []
    scenario = model.with_values(attributes=attrs, params=params)
    for party in gone:
        if party in scenario.parties:
            scenario = scenario.without(party)
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


def corners(ranged: list[Ranged]):
    """Every vertex of the box of ranges (for tests and small cross-checks)."""
    for ends in product(*[(r.low, r.high) for r in ranged]):
        yield {r.key: v for r, v in zip(ranged, ends)}
