"""`SolveReport` / `Repair` -> text tables and the JSON documents of `solve` and `repair`."""

from __future__ import annotations

import json

from .numbers import exact_str, human

SHORT = {"separable costs remaining benefits": "scrb", "equal split": "equal"}


def _cell(value) -> str:
    """Exact when the decimal terminates, else rounded and marked with `~`."""
    text = exact_str(value)
    return f"~{float(value):.2f}" if "/" in text else text
from .render_text import CAUTION
from .solve import SolveReport


def _coalition(names) -> str:
    return "{" + ", ".join(names) + "}"


def solve_text(r: SolveReport) -> str:
    unit = f" {r.unit}" if r.unit else ""
    verb = "pays" if r.kind == "cost" else "receives"
    lines = [
        f"{r.agreement} (shares {r.kind}{' in ' + r.unit if r.unit else ''})",
        f"  worth(all): {human(r.worth_all)}{unit}",
        f"  least-core value: {human(r.least_core_value)}{unit}"
        f" (the smallest worst excess any split can reach)",
        "  proof: a balanced collection (each party's weights add up to 1); every split",
        "  gives these coalitions, on weighted average, at least that excess:",
    ]
    for names, weight in r.certificate:
        lines.append(f"    {human(weight):>16}  {_coalition(names)}")
    usable = [a for a in r.allocations if a.payout is not None]
    head = ["party"] + [SHORT.get(a.rule, a.rule.replace("proportional to ", "prop. ")) for a in usable]
    rows = [head]
    for i, p in enumerate(r.parties):
        rows.append([p] + [_cell(a.payout[i]) for a in usable])
    rows.append(["worst excess"] + [_cell(a.worst_excess) for a in usable])
    widths = [max(len(row[i]) for row in rows) for i in range(len(head))]
    lines.append("")
    lines.append(f"  what each party {verb}{' (' + r.unit + ')' if r.unit else ''}, by rule (a split is stable within E when its worst excess <= E):")
    for row in rows:
        lines.append("  " + "  ".join([row[0].ljust(widths[0])] + [c.rjust(w) for c, w in zip(row[1:], widths[1:])]))
    lines.append("  (scrb: separable costs remaining benefits; ~ marks a rounded exact fraction,")
    lines.append("  `--format json` gives every value exactly)")
    for a in usable:
        if a.worst_coalition:
            lines.append(f"  worst coalition under {a.rule}: {_coalition(a.worst_coalition)}")
    for a in r.allocations:
        if a.payout is None:
            lines.append(f"  {a.rule}: not available: {a.reason}")
    lines.append(CAUTION)
    return "\n".join(lines)


def solve_json(r: SolveReport) -> str:
    allocations, unavailable, worst = {}, {}, {}
    for a in r.allocations:
        if a.payout is None:
            allocations[a.rule] = None
            unavailable[a.rule] = a.reason
            continue
        allocations[a.rule] = {p: exact_str(v) for p, v in zip(r.parties, a.payout)}
        worst[a.rule] = exact_str(a.worst_excess)
    doc = {
        "agreement": r.agreement,
        "worth_all": exact_str(r.worth_all),
        "least_core_value": exact_str(r.least_core_value),
        "certificate": [{"coalition": list(names), "weight": exact_str(w)} for names, w in r.certificate],
        "allocations": allocations,
        "worst_excess": worst,
    }
    if unavailable:
        doc["unavailable"] = unavailable
    return json.dumps(doc, indent=2, ensure_ascii=False)
