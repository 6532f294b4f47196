"""`SolveReport` / `Repair` -> text tables and the JSON documents of `solve` and `repair`."""

from __future__ import annotations

import json

from .numbers import exact_str, human

SHORT = {"separable costs remaining benefits": "scrb", "equal split": "equal", "least core": "lc nearest"}


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
    lines += _least_core_words(r)
    if r.has_percentage:
        lines.append("  smallest percentage any split meets as `stable within P%`: "
                     + (_percent(r.least_percentage) if r.least_percentage is not None else "none"))
    usable = [a for a in r.allocations if a.payout is not None]
    short = dict(SHORT, nucleolus=r.nucleolus_kind)
    head = ["party"] + [short.get(a.rule, a.rule.replace("proportional to ", "prop. ")) for a in usable]
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


def _least_core_words(r: SolveReport) -> list[str]:
    """What the least-core column is, which splits each concept ranges over,
    and, when the nucleolus ends above the least-core value, why."""
    unit = f" {r.unit}" if r.unit else ""
    cost = r.kind == "cost"
    alone = "charge each party at most what it would pay alone" if cost else \
        "give each party at least what it earns alone"
    lines = [
        "  the least core is a set: every split of worth(all) whose worst excess is at most that value;",
        f"  the `lc nearest` column is the one nearest to the {'agreement' + chr(39) + 's payout' if r.least_core_anchor == 'payout' else 'equal split'}"
        " (least money moved)",
        "  the least core ranges over every split of worth(all); "
        + ("the nucleolus only over splits that" if r.nucleolus_kind == "nucleolus" else "no split can"),
        f"  {alone}" + ("" if r.nucleolus_kind == "nucleolus" else
                        ", so the prenucleolus (over every split) stands in for the nucleolus"),
    ]
    nuc = next((a for a in r.allocations if a.rule == "nucleolus" and a.payout is not None), None)
    if nuc is None or r.nucleolus_kind != "nucleolus" or nuc.worst_excess <= r.least_core_value:
        return lines
    sign = -1 if cost else 1
    short = [i for i, (x, v) in enumerate(zip(r.least_core_payout, r.alone)) if sign * (x - v) < 0]
    lines.append(f"  the nucleolus' worst excess ({human(nuc.worst_excess)}{unit}) is above the least-core value: "
                 "every least-core split")
    lines.append("  leaves some party worse off than on its own, which the nucleolus does not allow")
    if short:
        i = short[0]
        verb, alone_verb = ("pays", "would pay") if cost else ("receives", "earns")
        lines.append(f"  (in the column shown, {r.parties[i]} {verb} {human(r.least_core_payout[i])}{unit}"
                     f" where it {alone_verb} {human(r.alone[i])}{unit} alone)")
    return lines


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
        "least_core_nearest_to": r.least_core_anchor,
        "nucleolus_over": ("splits giving each party at least its stand-alone worth"
                           if r.nucleolus_kind == "nucleolus" else "every split of worth(all) (the prenucleolus)"),
        "worst_excess": worst,
    }
    if r.has_percentage:
        doc["least_percentage"] = None if r.least_percentage is None else exact_str(r.least_percentage * 100)
    if unavailable:
        doc["unavailable"] = unavailable
    return json.dumps(doc, indent=2, ensure_ascii=False)


def _percent(fraction) -> str:
    """1/20 -> `5%`; 1/3 -> `33.33% (exactly 100/3%)`."""
    text = exact_str(fraction * 100)
    return f"{float(fraction * 100):.4g}% (exactly {text}%)" if "/" in text else f"{text}%"


def repair_text(r, path: str) -> tuple[str, int]:
    """A `RepairReport` -> the text `repair` prints (payout lines to paste, the
    rest as `#` comments) and the exit code: 0 met everywhere checked, 1 no
    payout meets the targets or the repaired lines fail under a contingency,
    3 something could not be settled."""
    unit = f" {r.unit}" if r.unit else ""
    named = ", ".join(f"`{t.label}`" for t in r.targets)
    lines = []
    if not r.feasible:
        single = r.targets[0].allowance if len(r.targets) == 1 else None
        if single is not None and single.relative:
            if r.least_percentage is None:
                lines.append(f"{path}: no payout is {named} at any percentage: {r.unreachable_reason}")
            else:
                lines.append(f"{path}: no payout is {named}: the smallest percentage any split reaches is "
                             f"{_percent(r.least_percentage)}")
            lines.append("proof: a balanced collection (each party's weights add up to 1); every split leaves")
            lines.append("these coalitions, on weighted average, more than the target allows:")
        elif single is not None:
            lines.append(f"{path}: no payout is {named}: the least-core value is "
                         f"{human(r.least_core_value)}{unit}, above the target")
            lines.append("proof: a balanced collection (each party's weights add up to 1) that every split")
            lines.append("leaves, on weighted average, with at least that excess:")
        else:
            lines.append(f"{path}: no payout meets {named} together: every split leaves some coalition")
            lines.append(f"at least {human(r.least_core_value)}{unit} above what these requirements allow it")
            lines.append("proof: a balanced collection (each party's weights add up to 1); every split leaves")
            lines.append("these coalitions, on weighted average, at least that far above their allowance:")
        for names, weight in r.certificate:
            lines.append(f"  {human(weight):>16}  {{{', '.join(names)}}}")
        lines.append(CAUTION)
        return "\n".join(lines), 1
    where = ", ".join(f"line {t.line}" for t in r.targets if t.line is not None)
    meets = named + (f" ({where})" if where else "")
    if r.total_change == 0:
        lines.append(f"# {path}: the current payout already meets {meets}")
    else:
        lines.append(f"# {path}: nearest payout meeting {meets}: moves {human(r.total_change)}{unit}"
                     f" in total, at most {human(r.max_change)}{unit} for one party")
    for line in r.lines:
        name = line.split()[1] if not line.startswith("payout rest ") else r.balancer
        was = ""
        i = r.parties.index(name)
        if line.startswith("payout rest "):
            was = f"  # {name}: {human(r.payout[i])}, the rest of worth(all)"
        if r.current is not None and r.current[i] != r.payout[i]:
            was += ("  #" if not was else ";") + f" was {human(r.current[i])}"
        lines.append(f"{line}{was}")
    code = 0
    contingencies = sorted({c for c, *_ in r.rechecks if c is not None})
    if r.rechecks:
        lines.append(("# checked again with these lines pasted in: baseline" if r.lines else "# checked: baseline")
                     + (", " + ", ".join(f'"{c}"' for c in contingencies) if contingencies else ""))
    if r.balancer is not None:
        lines.append(f"# {r.balancer} takes what is left of worth(all), so the payouts still add up to it"
                     " when a contingency removes a party or moves worth(all)")
    if r.not_covered:
        lines.append("# not covered by this repair (it moves payouts to meet the requirements in the baseline,")
        lines.append("# then checks every contingency with the lines above):")
        for note in r.not_covered:
            lines.append(f"#   {note}")
        code = 1 if any(" fails " in n for n in r.not_covered) else 3
    elif contingencies:
        lines.append("# every repaired requirement holds under every contingency too")
    lines.append(f"# {CAUTION}")
    return "\n".join(lines), code


def repair_json(r) -> tuple[str, int]:
    """A `RepairReport` -> the JSON document of `repair` and the exit code (as `repair_text`)."""
    doc = {"agreement": r.agreement, "target": r.target, "feasible": r.feasible,
           "requirements": [{"requirement": t.label, "line": t.line} for t in r.targets]}
    if r.feasible:
        doc["payout"] = {p: exact_str(v) for p, v in zip(r.parties, r.payout)}
        doc["total_change"] = exact_str(r.total_change)
        doc["max_change"] = exact_str(r.max_change)
        doc["lines"] = r.lines
        doc["checked"] = [{"contingency": c, "requirement": q, "status": s, **({"reason": why} if why else {})}
                          for c, q, s, why in r.rechecks]
        doc["not_covered"] = r.not_covered
        code = (1 if any(s == "fails" for _, _, s, _ in r.rechecks) else
                3 if any(s != "holds" for _, _, s, _ in r.rechecks) else 0)
    else:
        doc["least_core_value"] = exact_str(r.least_core_value)
        if r.least_percentage is not None:
            doc["least_percentage"] = exact_str(r.least_percentage * 100)
        doc["certificate"] = [{"coalition": list(c), "weight": exact_str(w)} for c, w in r.certificate]
        code = 1
    return json.dumps(doc, indent=2, ensure_ascii=False), code
