"""`RunReport` -> Markdown for a pull-request comment: a summary line, one
sentence per requirement, and the counterexample and per-party tables."""

from __future__ import annotations

from .render_text import CAUTION, summary
from .report.tables import (PartyViews, RenderOptions, Table, counterexample_table, headline, party_table,
                            worst_worth)
from .report.words import sentence
from .results import FAILS, HOLDS, RunReport

_UNKNOWN = "\u2753 "
_MARK = {HOLDS: "\u2705 holds", FAILS: "\u274c fails"}


def _cell(text: str) -> str:
    return text.replace("|", "\\|")


def markdown_table(table: Table) -> list[str]:
    align = ["---:" if r else ":---" for r in table.right]
    lines = ["| " + " | ".join(_cell(h) for h in table.head) + " |", "| " + " | ".join(align) + " |"]
    for row, marked in zip(table.rows, table.marked or [False] * len(table.rows)):
        cells = [_cell(c) for c in row]
        if marked:
            cells[0] = f"**{cells[0].removesuffix(' *')}**"
        lines.append("| " + " | ".join(cells) + " |")
    return lines


def render_markdown(run: RunReport, models: dict | None = None, options: RenderOptions = RenderOptions()) -> str:
    """The `check --format markdown` document."""
    lines = [f"**pactlang check**: {summary(run)}", ""]
    for f in run.files:
        model = (models or {}).get(f.path)
        if f.agreement is None or f.has_errors:
            lines.append(f"### `{f.path}`")
            lines.extend(["", "```"] + [d.render(f.path) for d in f.diagnostics] + ["```", ""])
            if f.agreement is None:
                continue
        else:
            lines += [f"### {f.agreement} (`{f.path}`)", ""]
        views = PartyViews(model, options)
        lines += ["| requirement | scenario | verdict | worst |", "| :--- | :--- | :--- | :--- |"]
        for r in f.results:
            where = r.contingency or "baseline"
            lines.append(f"| {_cell(r.requirement)} (line {r.line}) | {_cell(where)} | "
                         f"{_MARK.get(r.status, _UNKNOWN + r.status)} | "
                         f"{_cell(headline(r, f.unit, options, worst_worth(model, r)))} |")
        lines.append("")
        for r in f.results:
            if r.status == HOLDS:
                continue
            lines += [f"- **{_cell(r.requirement)}**: {sentence(r, f.parties, f.kind, f.unit, options)}", ""]
            table = counterexample_table(r, f.parties, f.unit, options)
            if table is not None:
                lines += ["  " + line for line in markdown_table(table)] + [""]
            view = views.for_result(r)
            if view is not None:
                lines += ["  <details><summary>per party (bold: the worst coalition's members)</summary>", ""]
                lines += ["  " + line for line in markdown_table(party_table(view, options))]
                lines += [f"  - note: {n}" for n in view.notes] + ["", "  </details>", ""]
    lines.append(f"_{CAUTION}_")
    return "\n".join(lines)
