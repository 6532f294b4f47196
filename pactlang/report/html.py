"""An agreement file -> one self-contained HTML page for the people at the table.

Inline CSS and inline SVG charts; no scripts, fonts or anything else fetched
from the network, and a print stylesheet for A4. The numbers and sentences
are those of `check` (shared tables and words); the charts come from
`report.charts`.
"""

from __future__ import annotations

from ..verdict_rules import allowed_excess, is_relative
from dataclasses import dataclass, field
from fractions import Fraction
from html import escape

from ..check import CheckOptions
from ..results import FAILS, HOLDS, UNKNOWN, FileReport
from .charts import MAX_CURVE_PARTIES, SAMPLES, Chart
from .parties import MAX_SOLUTION_PARTIES, scenario_model
from .tables import (PartyViews, RenderOptions, Table, absolute_bound, counterexample_table, headline,
                     party_table, percent_bound, values_words, worst_worth)
from .words import sentence, where_words

CAUTION = ("These results support negotiation; they do not replace legal, financial or regulatory "
           "advice, nor the local rules that govern your agreement.")

CSS = """
@page { size: A4; margin: 14mm; }
body { font-family: system-ui, -apple-system, "Segoe UI", Roboto, "DejaVu Sans", sans-serif;
       color: #1c1c1c; max-width: 182mm; margin: 1.5em auto; padding: 0 1em; line-height: 1.4; }
h1 { font-size: 1.5em; margin-bottom: 0.2em; } h2 { font-size: 1.15em; border-bottom: 1px solid #ccc;
  margin-top: 1.6em; } h3 { font-size: 1em; margin-bottom: 0.3em; }
.meta { color: #555; margin-top: 0; }
.caution { border-left: 4px solid #f9a825; background: #fff8e1; padding: 0.5em 0.8em; }
.status { display: inline-block; min-width: 4.2em; font-weight: 600; }
.holds { color: #2e7d32; } .fails { color: #c62828; } .unknown { color: #8d6e00; }
ul.findings { padding-left: 1.2em; } ul.findings li { margin: 0.25em 0; }
table { border-collapse: collapse; font-size: 0.85em; margin: 0.4em 0 0.8em; }
th, td { padding: 0.15em 0.6em; border-bottom: 1px solid #e0e0e0; vertical-align: top; }
th { text-align: left; background: #f5f5f5; } td.num { text-align: right; font-variant-numeric: tabular-nums; }
tr.member td { background: #ffebee; }
figure { margin: 0.8em 0; page-break-inside: avoid; break-inside: avoid; }
figure svg { max-width: 100%; height: auto; } figcaption { font-size: 0.85em; color: #555; }
.finding { page-break-inside: avoid; break-inside: avoid; }
pre.source { font-size: 0.8em; background: #fafafa; border: 1px solid #e0e0e0; padding: 0.5em 0;
  white-space: pre-wrap; }
pre.source span.line { display: block; padding: 0 0.6em; }
pre.source span.no { color: #999; display: inline-block; min-width: 2.5em; user-select: none; }
pre.source span.marked-fails { background: #ffebee; } pre.source span.marked-holds { background: #e8f5e9; }
pre.source span.marked-unknown { background: #fff8e1; }
pre.source em { color: #555; font-style: normal; font-size: 0.9em; }
.note { color: #555; font-size: 0.85em; }
@media print { body { max-width: none; margin: 0; padding: 0; } h2 { page-break-after: avoid; } }
"""


@dataclass
class Page:
    report: FileReport
    model: object
    options: RenderOptions
    charts: list[Chart] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)


def _table_html(table: Table) -> str:
    head = "".join(f"<th>{escape(h)}</th>" for h in table.head)
    rows = []
    for row, marked in zip(table.rows, table.marked or [False] * len(table.rows)):
        cells = "".join(f"<td class=\"num\">{escape(c)}</td>" if r else f"<td>{escape(c)}</td>"
                        for c, r in zip(row, table.right))
        css = ' class="member"' if marked else ""
        rows.append(f"<tr{css}>{cells}</tr>")
    return f"<table><thead><tr>{head}</tr></thead><tbody>{''.join(rows)}</tbody></table>"


# ---- data for the charts -------------------------------------------------------------

def _rule_series(model) -> dict[str, list[Fraction]]:
    """The agreement's payout and the reference splits, in the agreement's sign."""
    from .. import solutions
    from ..worths import Worths, payout

    worths = Worths(model)
    series = {"agreement": payout(worths)}
    if model.n > MAX_SOLUTION_PARTIES:
        series["alone"] = [worths.exact(1 << i) for i in range(model.n)]
        return series
    game = worths.game()
    sign = -1 if model.kind == "cost" else 1
    for name, compute in (("Shapley", solutions.shapley), ("nucleolus", solutions.nucleolus),
                          ("equal split", solutions.equal_split),
                          ("SCRB", solutions.separable_costs_remaining_benefits)):
        try:
            series[name] = [v * sign for v in compute(game)]
        except (solutions.NotApplicable, solutions.SolverError, ValueError):
            continue
    return series


def _coalition_requirement(model):
    """The requirement the curves and the triangle draw: the first `stable`
    or `stable within`, else `individually rational` (None if neither)."""
    for kind in (("stable", "within"), ("rational",)):
        for req in model.requirements:
            if req.kind in kind:
                return req
    return None


def _worst_excess(model, req) -> Fraction:
    """max over the coalitions `req` speaks of of excess - allowed + allowed... exactly: the worst excess."""
    from ..worths import Worths, excess, paid_by, payout

    worths = Worths(model)
    paid = payout(worths)
    masks = [1 << i for i in range(model.n)] if req.kind == "rational" else range(1, model.full)
    return max(excess(model, worths.exact(m), paid_by(paid, m)) for m in masks)


def ranged_charts(page: Page) -> None:
    from ..formula import EvaluationError
    from ..scenario import scenario_of
    from ..worths import PayoutUnavailable
    from .charts import ranged_chart

    model = page.model
    req = _coalition_requirement(model)
    if req is None:
        return
    req_text = next((r.requirement for r in page.report.results if r.line == req.span.line), "stable") \
        if req.span else "stable"
    bound = None if is_relative(req) else allowed_excess(req, Fraction(0))
    for cont in model.contingencies:
        scenario = scenario_of(model, cont)
        if not scenario.ranged:
            continue
        if scenario.model.n > MAX_CURVE_PARTIES:
            page.notes.append(f"no curve for \u201c{cont.name}\u201d: {scenario.model.n} parties is above "
                              f"the {MAX_CURVE_PARTIES} the sampled curves evaluate")
            continue
        result = next((r for r in page.report.results if r.contingency == cont.name and r.line == req.span.line), None)
        worst = dict(result.counterexamples[0].parameters) if result and result.counterexamples else {}
        for quantity in scenario.ranged:
            held = {r.key: worst.get(r.key, r.high) for r in scenario.ranged if r.key != quantity.key}
            xs, ys = [], []
            for k in range(SAMPLES):
                value = quantity.low + (quantity.high - quantity.low) * Fraction(k, SAMPLES - 1)
                try:
                    concrete = scenario_model(model, cont.name, held | {quantity.key: value})
                    ys.append(float(_worst_excess(concrete, req)))
                except (EvaluationError, PayoutUnavailable):
                    continue
                xs.append(float(value))
            if not xs:
                continue
            others = values_words(held, page.options)
            title = f"\u201c{cont.name}\u201d: {req_text} as {quantity.key} varies" + (f" ({others})" if others else "")
            at = float(worst[quantity.key]) if quantity.key in worst else None
            page.charts.append(ranged_chart(title, quantity.key, xs, ys, None if bound is None else float(bound),
                                            model.unit, at))


def triangle(page: Page) -> None:
    from ..worths import Worths
    from .charts import triangle_chart

    model = page.model
    if model.n != 3:
        return
    req = next((r for r in model.requirements if r.kind in ("stable", "within")), None)
    worths = Worths(model)
    sign = -1 if model.kind == "cost" else 1
    value = lambda mask: float(worths.value_form(mask))  # noqa: E731
    allowed = (lambda mask: 0.0) if req is None else (lambda mask: float(allowed_excess(req, worths.exact(mask))))
    series = _rule_series(model)
    points = {name: [float(v * sign) for v in xs] for name, xs in series.items() if name != "alone"}
    total = float(worths.value_form(model.full))
    lower = [min([value(1 << i) - allowed(1 << i)] + [p[i] for p in points.values()]) for i in range(3)]
    spread = total - sum(lower)
    if spread <= 0:
        return
    lower = [v - 0.08 * spread for v in lower]  # room around the points at the edges
    what = "core" if req is None or req.kind == "stable" else "epsilon-core"
    req_text = "stable" if req is None else next((r.requirement for r in page.report.results
                                                  if req.span and r.line == req.span.line), "stable")
    title = f"Splits of the total among the three parties; shaded: the {what} ({req_text})"
    page.charts.append(triangle_chart(model.parties, value, total, lower, allowed, points, title, model.kind))


def build_charts(page: Page) -> None:
    from ..formula import EvaluationError
    from ..worths import PayoutUnavailable
    from .charts import excess_chart, payouts_chart

    f, model = page.report, page.model
    try:
        page.charts.append(payouts_chart(model.parties, _rule_series(model), model.kind, model.unit))
    except (EvaluationError, PayoutUnavailable) as exc:
        page.notes.append(f"no payout chart: {exc}")
    rows = []
    for r in f.results:
        if r.worst_excess is None or r.requirement == "balanced budget":
            continue
        bound = absolute_bound(r)
        if percent_bound(r) is not None:
            bound = r.counterexamples[0].allowed if r.counterexamples else None
        label = f"{r.requirement} ({r.contingency or 'baseline'})"
        rows.append((label, float(r.worst_excess), None if bound is None else float(bound), r.status))
    if rows:
        page.charts.append(excess_chart(rows, model.unit))
    ranged_charts(page)
    try:
        triangle(page)
    except (EvaluationError, PayoutUnavailable) as exc:
        page.notes.append(f"no triangle: {exc}")


# ---- the page ------------------------------------------------------------------------------

def _source_html(page: Page) -> str:
    """The agreement text with each requirement and contingency line marked by its findings."""
    model, f = page.model, page.report
    try:
        with open(model.path, encoding="utf-8") as fh:
            text = fh.read()
    except OSError:
        return "<p class=\"note\">the agreement text could not be read again</p>"
    marks: dict[int, list[str]] = {}
    worst: dict[int, str] = {}
    order = {UNKNOWN: 1, FAILS: 2}
    spans = {c.name: c.span for c in model.contingencies}
    for r in f.results:
        lines = [r.line]
        if r.contingency and spans.get(r.contingency) is not None:
            lines.append(spans[r.contingency].line)
        for i, line in enumerate(lines):
            if r.status == HOLDS and i:
                continue
            label = f"{r.requirement}: {r.status} {where_words(r)}" if i == 0 else f"{r.requirement} {r.status} here"
            marks.setdefault(line, []).append(label)
            if order.get(r.status, 0) >= order.get(worst.get(line, HOLDS), 0):
                worst[line] = r.status
    out = []
    for no, line in enumerate(text.splitlines(), 1):
        cls = f" marked-{worst[no]}" if no in worst else ""
        note = ""
        if no in marks:
            shown = [m for m in marks[no] if HOLDS not in m.split(":")[-1][:6]] or marks[no][:1]
            note = "  <em>\u2190 " + escape("; ".join(dict.fromkeys(marks[no] if len(marks[no]) <= 3 else shown))) + "</em>"
        out.append(f"<span class=\"line{cls}\" id=\"L{no}\"><span class=\"no\">{no}</span>{escape(line)}{note}</span>")
    return "<pre class=\"source\">" + "".join(out) + "</pre>"


def render_page(page: Page) -> str:
    f, model, options = page.report, page.model, page.options
    parts = ["<!DOCTYPE html>", "<html lang=\"en\"><head><meta charset=\"utf-8\">",
             f"<title>{escape(f.agreement or f.path)}: pactlang report</title>",
             "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">",
             f"<style>{CSS}</style></head><body>"]
    parts.append(f"<h1>{escape(f.agreement or f.path)}</h1>")
    parts.append(f"<p class=\"meta\">{escape(f.path)}: {len(f.parties)} parties share "
                 f"{'a cost' if f.kind == 'cost' else 'a value'}{' in ' + escape(f.unit) if f.unit else ''}. "
                 f"{sum(r.status == HOLDS for r in f.results)} findings hold, "
                 f"{sum(r.status == FAILS for r in f.results)} fail, "
                 f"{sum(r.status == UNKNOWN for r in f.results)} unknown.</p>")
    parts.append(f"<p class=\"caution\">{escape(CAUTION)}</p>")
    parts.append("<h2>Summary</h2><ul class=\"findings\">")
    for r in f.results:
        parts.append(f"<li><span class=\"status {r.status}\">{r.status}</span> "
                     f"<a href=\"#L{r.line}\">{escape(r.requirement)}</a>: "
                     f"{escape(sentence(r, f.parties, f.kind, f.unit, options))}</li>")
    parts.append("</ul>")
    if page.charts:
        parts.append("<h2>Charts</h2>")
        for c in page.charts:
            parts.append(f"<figure class=\"chart chart-{c.kind}\"><h3>{escape(c.title)}</h3>{c.svg}"
                         f"<figcaption>{escape(c.caption)}</figcaption></figure>")
    parts.extend(f"<p class=\"note\">{escape(n)}</p>" for n in page.notes)
    failing = [r for r in f.results if r.status != HOLDS]
    if failing:
        parts.append("<h2>Findings in detail</h2>")
        views = PartyViews(model, options)
        for r in failing:
            parts.append(f"<div class=\"finding\"><h3><span class=\"status {r.status}\">{r.status}</span> "
                         f"{escape(r.requirement)} (line {r.line}, {escape(where_words(r))})</h3>")
            head = headline(r, f.unit, options, worst_worth(model, r))
            if head:
                parts.append(f"<p>{escape(head)}</p>")
            if r.reason:
                parts.append(f"<p class=\"note\">reason: {escape(r.reason)}</p>")
            table = counterexample_table(r, f.parties, f.unit, options)
            if table is not None:
                parts.append(_table_html(table))
            view = views.for_result(r)
            if view is not None:
                at = values_words(view.at, options)
                parts.append(f"<p>Per party{' at ' + escape(at) if at else ''}: what each "
                             f"{'pays' if view.kind == 'cost' else 'receives'}, what it would "
                             f"{'pay' if view.kind == 'cost' else 'earn'} alone, and the reference splits "
                             f"(shaded: the worst coalition's members).</p>")
                parts.append(_table_html(party_table(view, options)))
                parts.extend(f"<p class=\"note\">{escape(n)}</p>" for n in view.notes)
            parts.append("</div>")
    parts.append("<h2>The agreement</h2>")
    parts.append(_source_html(page))
    parts.append(f"<p class=\"caution\">{escape(CAUTION)}</p>")
    parts.append("<p class=\"note\">Made by pactlang report. The charts are pictures; the verdicts are exact.</p>")
    parts.append("</body></html>")
    return "\n".join(parts)


class ReportInputError(Exception):
    """The agreement cannot be read; `diagnostics` say why."""

    def __init__(self, report: FileReport):
        super().__init__("the agreement has errors")
        self.report = report


def build_report(path: str, options: RenderOptions = RenderOptions()) -> str:
    """The HTML page for one agreement file; raises ReportInputError on bad input."""
    from ..run import check_file

    report, model = check_file(path, CheckOptions(time_limit=options.time_limit))
    if model is None or report.has_errors:
        raise ReportInputError(report)
    page = Page(report, model, options)
    build_charts(page)
    return render_page(page)
