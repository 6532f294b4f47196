"""`AgreementDiff` -> text for people, JSON for tools, Markdown for a review comment."""

from __future__ import annotations

import json

from .diff import NEWLY_FAILS, UNCHANGED, AgreementDiff, RequirementChange, Version
from .numbers import exact_str
from .report.amounts import Figures
from .render_text import CAUTION
from .report.tables import coalition_words


def _scenario(c: RequirementChange) -> str:
    if c.contingency is None:
        return "baseline"
    where = f'under "{c.contingency}"'
    return f'{where}, renamed from "{c.renamed_from}"' if c.renamed_from else where


def _verdict(r, unit: str, figures: Figures) -> str:
    if r is None:
        return "absent"
    if r.worst_excess is None:
        return r.status
    return f"{r.status}, worst {figures.excess(r.worst_excess)}{unit}"


def _signed(value, figures: Figures) -> str:
    text = figures.amount(value)
    return text if text.startswith("-") or value == 0 else "+" + text


def _amount(value, figures: Figures) -> str:
    return "absent" if value is None else figures.amount(value)


def _excess_figures(d: AgreementDiff) -> Figures:
    """One rounding for every worst excess, so before and after stay apart (0 included)."""
    values = [r.worst_excess for c in d.requirements for r in (c.before, c.after)
              if r is not None and r.worst_excess is not None]
    return Figures.for_values(values + [0])


def _payout_figures(d: AgreementDiff) -> Figures:
    values = [v for p in d.payouts for v in (p.before, p.after, p.change) if v is not None]
    return Figures.for_values(values + [0])


def _headline(d: AgreementDiff) -> str:
    def side(v: Version) -> str:
        return f"{v.label} (did not exist)" if not v.exists else v.label

    return f"{side(d.old)} -> {side(d.new)}"


def _newly(c: RequirementChange, parties) -> str:
    shown = ", ".join(coalition_words(m, parties) for m in c.newly_failing[:3])
    more = len(c.newly_failing) - 3
    return shown + (f" and {more} more" if more > 0 else "")


def render_diff_text(d: AgreementDiff) -> str:
    unit = f" {d.new.unit or d.old.unit}" if (d.new.unit or d.old.unit) else ""
    lines = [_headline(d)]  # diagnostics go to stderr, apart (see commands/diff.py)
    shown = [c for c in d.requirements if c.change != UNCHANGED]
    ex, pay = _excess_figures(d), _payout_figures(d)
    for c in shown:
        lines.append(f"  {c.change:<12} {c.requirement} ({_scenario(c)}): "
                     f"{_verdict(c.before, unit, ex)} -> {_verdict(c.after, unit, ex)}")
        if c.newly_failing:
            lines.append(f"               newly broken by {_newly(c, d.new.parties)}")
    same = len(d.requirements) - len(shown)
    if same:
        lines.append(f"  {same} requirement result{'s' if same != 1 else ''} unchanged")
    moved = [p for p in d.payouts if p.before != p.after]
    if moved:
        money = f" ({(d.new.unit or d.old.unit)})" if unit else ""
        lines.append(f"  payouts{money}:")
        rows = [["party", "before", "after", "change"]]
        for p in moved:
            change = _signed(p.change, pay) if p.change is not None else ("new" if p.before is None else "removed")
            rows.append([p.party, _amount(p.before, pay), _amount(p.after, pay), change])
        widths = [max(len(r[i]) for r in rows) for i in range(4)]
        for r in rows:
            lines.append("    " + "  ".join([r[0].ljust(widths[0])] + [x.rjust(w) for x, w in zip(r[1:], widths[1:])]))
    elif d.old.payouts is not None and d.new.payouts is not None:
        lines.append("  payouts unchanged")
    for v, side in ((d.old, "before"), (d.new, "after")):
        if v.payout_note:
            lines.append(f"  payouts {side}: not computed ({v.payout_note})")
    lines.append(CAUTION)
    return "\n".join(lines)


def _result_json(r) -> dict | None:
    if r is None:
        return None
    return {"status": r.status, "line": r.line,
            "worst_excess": None if r.worst_excess is None else exact_str(r.worst_excess)}


def _version_json(v: Version) -> dict:
    return {"source": v.label, "exists": v.exists, "agreement": v.title,
            "diagnostics": [x.to_json() for x in v.diagnostics],
            "payout_note": v.payout_note}


def diff_json(d: AgreementDiff) -> dict:
    """Exact numbers as strings `fractions.Fraction` reads, as in `check --format json`."""
    def opt(x):
        return None if x is None else exact_str(x)

    return {
        "old": _version_json(d.old),
        "new": _version_json(d.new),
        "requirements": [{
            "requirement": c.requirement, "contingency": c.contingency,
            "renamed_from": c.renamed_from, "change": c.change,
            "before": _result_json(c.before), "after": _result_json(c.after),
            "newly_failing": [list(m) for m in c.newly_failing],
        } for c in d.requirements],
        "payouts": [{"party": p.party, "before": opt(p.before), "after": opt(p.after), "change": opt(p.change)}
                    for p in d.payouts],
    }


def render_diff_json(d: AgreementDiff) -> str:
    return json.dumps(diff_json(d), indent=2, ensure_ascii=False)


def _md(text: str) -> str:
    return text.replace("|", "\\|")


def render_diff_markdown(d: AgreementDiff) -> str:
    unit = d.new.unit or d.old.unit
    money = f" ({unit})" if unit else ""
    broke = sum(1 for c in d.requirements if c.change == NEWLY_FAILS)
    title = d.new.title or d.old.title or d.new.label
    lines = [f"### {_md(title)}: `{d.old.label}` → `{d.new.label}`", ""]
    if broke:
        lines.append(f"**{broke} requirement result{'s' if broke != 1 else ''} that held now fail{'s' if broke == 1 else ''}.**")
        lines.append("")
    errors = [(v, x) for v in (d.old, d.new) for x in v.diagnostics]
    for v, x in errors:
        lines.append(f"- `{_md(x.render(v.label))}`")
    if errors:
        lines.append("")
    shown = [c for c in d.requirements if c.change != UNCHANGED]
    ex, pay = _excess_figures(d), _payout_figures(d)
    if shown:
        lines += [f"| change | requirement | scenario | before{money} | after{money} | newly broken by |",
                  "|---|---|---|---|---|---|"]
        for c in shown:
            lines.append(f"| {c.change} | {_md(c.requirement)} | {_md(_scenario(c))} | "
                         f"{_md(_verdict(c.before, '', ex))} | {_md(_verdict(c.after, '', ex))} | "
                         f"{_md(_newly(c, d.new.parties))} |")
        lines.append("")
    same = len(d.requirements) - len(shown)
    if same:
        lines += [f"{same} requirement result{'s' if same != 1 else ''} unchanged.", ""]
    moved = [p for p in d.payouts if p.before != p.after]
    if moved:
        lines += [f"| party | before{money} | after{money} | change |", "|---|---:|---:|---:|"]
        for p in moved:
            change = _signed(p.change, pay) if p.change is not None else ("new" if p.before is None else "removed")
            lines.append(f"| {_md(p.party)} | {_amount(p.before, pay)} | {_amount(p.after, pay)} | {change} |")
        lines.append("")
    lines.append(f"_{CAUTION}_")
    return "\n".join(lines)
