"""Editor events -> diagnostics, hovers, edits and locations: the language server.

Built on pygls (`pip install pactlang[editor]`) and run by `pactlang serve`.
Every answer comes from the library, never from a parser of its own:
`parse_text` and `resolve` for syntax and name errors, the linter for advice,
`check_model` for verdicts, `worths.payout` for payouts and `format_text` for
layout.

Syntax, name and lint diagnostics are published at once on every change. The
stability check waits for a pause in typing (`DELAY`), runs in a background
thread so that typing and requests are never held up, and its results are
dropped when the text changed while it ran. Until fresh verdicts arrive, the
previous ones stay on requirement lines whose text and place did not change,
so squiggles do not flicker on every keystroke.

Positions: the library's spans count lines and characters from 1 with an
exclusive end column; the editor counts from 0 in the code units agreed at
start-up (UTF-16 unless the client offers another), so every position that
crosses the boundary is converted here.
"""

from __future__ import annotations

import asyncio
import logging
import re
import threading
import traceback
from dataclasses import dataclass, field
from fractions import Fraction
from functools import lru_cache
from typing import Callable, Iterator

from lsprotocol import types
from pygls.lsp.server import LanguageServer
from pygls.uris import to_fs_path

from . import __version__, ast
from .check import CheckOptions, check_model
from .diagnostics import AgreementError, Diagnostic
from .formula import EvaluationError, is_aggregate
from .load import FILE_START, Loaded
from .model import Model
from .numbers import human
from .parse import parse_text, parser
from .resolve import resolve
from .results import FAILS, HOLDS, Result
from .run import lint_diagnostics

DELAY = 0.5  # seconds of quiet typing before the stability check starts
TIME_LIMIT = 30.0  # seconds per requirement before the editor is told `unknown`
HOVER_WAIT = 2.0  # seconds a hover waits for a check or payout still running
SOURCE = "pactlang"

log = logging.getLogger(__name__)

_SEVERITY = {"error": types.DiagnosticSeverity.Error, "warning": types.DiagnosticSeverity.Warning}


# ---------------------------------------------------------------- one version of a document


@dataclass
class Snapshot:
    """What the library says about one version of one document.

    `document` is None when the text does not parse and `model` when it does
    not resolve; `results` stays None until the stability check has run.
    `shown` holds the verdict diagnostics on display, keyed by the
    requirement's span and text: this version's own once checked, else those
    carried over from the previous version.
    """

    uri: str
    version: int | None
    text: str
    document: ast.Document | None
    model: Model | None
    problems: list[Diagnostic]
    results: list[Result] | None = None
    check_problems: list[Diagnostic] = field(default_factory=list)
    shown: list[tuple[tuple, Diagnostic]] = field(default_factory=list)
    done: asyncio.Event = field(default_factory=asyncio.Event)
    payouts: asyncio.Future | None = None

    def finish(self, results: list[Result], problems: list[Diagnostic]) -> None:
        """Record the check's outcome and wake whoever waits for it."""
        self.results, self.check_problems = results, problems
        self.shown = verdict_diagnostics(results, self.model) if self.model else []
        self.done.set()


def analyse(uri: str, version: int | None, text: str) -> Snapshot:
    """Parse, resolve and lint one version of a document (no stability check)."""
    path = to_fs_path(uri) or uri
    try:
        document = parse_text(text)
    except AgreementError as exc:
        return Snapshot(uri, version, text, None, None, list(exc.diagnostics))
    try:
        model = resolve(document, path)
    except AgreementError as exc:
        # the linter's syntax-only rules still apply when names do not resolve
        problems = list(exc.diagnostics) + _lint(Loaded(path, text, document, None))
        return Snapshot(uri, version, text, document, None, problems)
    return Snapshot(uri, version, text, document, model, _lint(Loaded(path, text, document, model)))


def _lint(loaded: Loaded) -> list[Diagnostic]:
    try:
        return lint_diagnostics(loaded)
    except Exception:  # advice must never take the diagnostics of errors down with it
        log.exception("the linter failed")
        return []


def run_check(model: Model, time_limit: float | None = TIME_LIMIT) -> tuple[list[Result], list[Diagnostic]]:
    """The verdicts of every requirement, or the input error that stopped them."""
    try:
        return check_model(model, CheckOptions(time_limit=time_limit)), []
    except AgreementError as exc:
        return [], list(exc.diagnostics)


def compute_payouts(model: Model) -> tuple[dict[str, Fraction] | None, str | None]:
    """Every party's exact payout in the baseline, or why it cannot be computed."""
    from .worths import PayoutUnavailable, Worths, payout  # numpy only once asked

    try:
        values = payout(Worths(model))
    except PayoutUnavailable as exc:
        return None, str(exc)
    except EvaluationError as exc:
        return None, exc.message
    return dict(zip(model.parties, values)), None


def in_thread(fn: Callable, *args) -> asyncio.Future:
    """Run `fn(*args)` in a daemon thread; the future settles on the event loop.

    A daemon thread rather than an executor: a long check still running when
    the editor quits must not keep the process alive.
    """
    loop = asyncio.get_running_loop()
    future = loop.create_future()

    def settle(result, error) -> None:
        if future.done():
            return
        if error is None:
            future.set_result(result)
        else:
            future.set_exception(error)

    def work() -> None:
        try:
            outcome = (fn(*args), None)
        except Exception as exc:
            outcome = (None, exc)
        try:
            loop.call_soon_threadsafe(settle, *outcome)
        except RuntimeError:  # the loop closed while we worked: nobody is waiting
            pass

    threading.Thread(target=work, name="pactlang-check", daemon=True).start()
    return future


# ---------------------------------------------------------------- verdicts as diagnostics


def _unit(model: Model) -> str:
    return f" {model.unit}" if model.unit else ""


def _coalition(names) -> str:
    return "`{" + ", ".join(names) + "}`"


def _scenario_parties(model: Model, contingency: str | None) -> tuple[str, ...]:
    gone = set()
    for c in model.contingencies:
        if c.name == contingency:
            gone = {line.party.name for line in c.lines if isinstance(line, ast.Without)}
    return tuple(p for p in model.parties if p not in gone)


def _at(parameters: dict[str, Fraction]) -> str:
    if not parameters:
        return ""
    return " at " + ", ".join(f"{k} = {human(v)}" for k, v in sorted(parameters.items()))


def explain(result: Result, model: Model) -> str:
    """Why a requirement fails: the worst coalition and its excess (with the
    allowance and the values of ranged quantities where they matter), and a
    payout total that misses worth(all)."""
    unit = _unit(model)
    everyone = _scenario_parties(model, result.contingency)
    budget = next((c for c in result.counterexamples if c.coalition == everyone), None)
    budget_text = "" if budget is None else (
        f"the payouts add up to {human(budget.payout)}{unit}, "
        f"worth(all) is {human(budget.worth)}{unit}{_at(budget.parameters)}")
    if result.requirement == "balanced budget" or not result.worst_coalition or result.worst_excess is None:
        return budget_text or "see the counterexamples of `pactlang check`"
    worst = f"worst coalition {_coalition(result.worst_coalition)} has excess {human(result.worst_excess)}{unit}"
    match = next((c for c in result.counterexamples if c.coalition == result.worst_coalition), None)
    if match is None:  # no coalition gains too much: only the budget is off
        return f"{budget_text} ({worst})" if budget_text else worst
    if match.allowed:
        worst += f" (allowed {human(match.allowed)}{unit})"
    worst += _at(match.parameters)
    return f"{worst}; {budget_text}" if budget_text else worst


def verdict_diagnostics(results: list[Result], model: Model) -> list[tuple[tuple, Diagnostic]]:
    """A diagnostic on the requirement for every result that is not `holds`:
    an error when it fails, a warning when it is unknown; keyed by the
    requirement's span and text so it can be carried to the next version."""
    out = []
    for r in results:
        if r.status == HOLDS or r.span is None:
            continue
        where = f" under `{r.contingency}`" if r.contingency else ""
        if r.status == FAILS:
            d = Diagnostic("requirement-fails", "error", f"`{r.requirement}` fails{where}: {explain(r, model)}", r.span)
        else:
            d = Diagnostic("requirement-unknown", "warning",
                           f"`{r.requirement}` is unknown{where}: {r.reason or 'no reason was given'}", r.span)
        out.append(((r.span, r.requirement), d))
    return out


def carry_over(old: Snapshot | None, new: Snapshot) -> list[tuple[tuple, Diagnostic]]:
    """The old verdicts whose requirement still stands, unchanged, in the same place."""
    if old is None or new.model is None:
        return []
    keys = {(req.span, ast.requirement_text(req)) for req in new.model.requirements}
    return [(key, d) for key, d in old.shown if key in keys]


# ---------------------------------------------------------------- names in a document


@dataclass(frozen=True)
class Ref:
    """A party, attribute or param name written somewhere in the document."""

    kind: str  # "party" | "attribute" | "param"
    name: str
    span: ast.Span
    declaration: bool = False


def _declared(document: ast.Document) -> dict[str, str]:
    kinds = {}
    for stmt in document.statements:
        if isinstance(stmt, ast.PartyDecl):
            kinds.setdefault(stmt.name.name, "party")
            for attr in stmt.attributes:
                kinds.setdefault(attr.name.name, "attribute")
        elif isinstance(stmt, ast.ParamDecl):
            kinds.setdefault(stmt.name.name, "param")
    return kinds


def references(document: ast.Document) -> list[Ref]:
    """Every party, attribute and param name in the document, with its span."""
    kinds = _declared(document)
    out: list[Ref] = []

    def ident(kind: str, node: ast.Ident | None, declaration: bool = False) -> None:
        if node is not None and node.span is not None:
            out.append(Ref(kind, node.name, node.span, declaration))

    for stmt in document.statements:
        if isinstance(stmt, ast.PartyDecl):
            ident("party", stmt.name, True)
            for attr in stmt.attributes:
                ident("attribute", attr.name, True)
        elif isinstance(stmt, ast.ParamDecl):
            ident("param", stmt.name, True)
        elif isinstance(stmt, ast.WorthEntry):
            for member in stmt.members:
                ident("party", member)
            out.extend(_expr_refs(stmt.expr, kinds))
        elif isinstance(stmt, (ast.WorthGrand, ast.WorthFormula)):
            out.extend(_expr_refs(stmt.expr, kinds))
        elif isinstance(stmt, ast.PayoutFixed):
            ident("party", stmt.party)
            out.extend(_expr_refs(stmt.expr, kinds))
        elif isinstance(stmt, (ast.PayoutAll, ast.PayoutRest)):
            ident("attribute", stmt.rule.attribute)
        elif isinstance(stmt, ast.Contingency):
            for line in stmt.lines:
                if isinstance(line, (ast.AttrRange, ast.AttrFixed)):
                    ident("attribute", line.attribute)
                    ident("party", line.party)
                elif isinstance(line, (ast.ParamRange, ast.ParamFixed)):
                    ident("param", line.param)
                elif isinstance(line, ast.WorthRange):
                    for member in line.members:
                        ident("party", member)
                elif isinstance(line, ast.Without):
                    ident("party", line.party)
    return out


def _expr_refs(expr: ast.Expr, kinds: dict[str, str], aggregated: bool = False) -> Iterator[Ref]:
    span = getattr(expr, "span", None)
    if isinstance(expr, ast.Name):
        if expr.name in kinds and span is not None:  # else the coalition variable
            yield Ref(kinds[expr.name], expr.name, span)
    elif isinstance(expr, ast.Member):
        if span is not None:  # the span covers `NAME in S`; the name comes first
            name_span = ast.Span(span.line, span.column, span.line, span.column + len(expr.item))
            yield Ref("attribute" if aggregated else "party", expr.item, name_span)
    elif isinstance(expr, ast.Call):
        for arg in expr.args:
            yield from _expr_refs(arg, kinds, is_aggregate(expr))
    else:
        for name in ("operand", "left", "right", "cond", "then", "otherwise"):
            child = getattr(expr, name, None)
            if child is not None:
                yield from _expr_refs(child, kinds)


def _contains(span: ast.Span, line: int, column: int) -> bool:
    if not span.line <= line <= span.end_line:
        return False
    if line == span.line and column < span.column:
        return False
    return not (line == span.end_line and column > span.end_column)


def ref_at(document: ast.Document, line: int, column: int) -> Ref | None:
    """The name under the cursor (1-based); the cursor just after a name counts too."""
    hits = [r for r in references(document) if _contains(r.span, line, column)]
    inside = [r for r in hits if column < r.span.end_column or r.span.end_line > line]
    return (inside or hits or [None])[0]


def declarations(document: ast.Document, ref: Ref) -> list[ast.Span]:
    """Where a name is declared: a party's or param's name on its line, or,
    for an attribute, its name on every party line that gives it a value."""
    spans = [r.span for r in references(document)
             if r.declaration and r.kind == ref.kind and r.name == ref.name]
    return spans if ref.kind == "attribute" else spans[:1]


def requirement_at(document: ast.Document, line: int) -> ast.Require | None:
    for stmt in document.statements:
        if isinstance(stmt, ast.Require) and stmt.span and stmt.span.line <= line <= stmt.span.end_line:
            return stmt
    return None


# ---------------------------------------------------------------- hover texts


def _source(text: str, span: ast.Span | None) -> str:
    if span is None:
        return ""
    lines = text.split("\n")
    if span.line != span.end_line or span.line > len(lines):
        return lines[span.line - 1].strip() if span.line <= len(lines) else ""
    return lines[span.line - 1][span.column - 1: span.end_column - 1]


def party_hover(snap: Snapshot, name: str, payouts: dict[str, Fraction] | None, why: str | None) -> str:
    """A party's attributes and its exact baseline payout, with the clause that sets it."""
    lines = [f"**party** `{name}`", ""]
    decl = next((s for s in snap.document.statements if isinstance(s, ast.PartyDecl) and s.name.name == name), None)
    for attr in decl.attributes if decl else ():
        lines.append(f"- {attr.name.name}: {attr.value.text}")
    model = snap.model
    if model is None or name not in model.parties:
        lines.append("- payout: shown once the agreement has no errors")
        return "\n".join(lines)
    verb = "pays" if model.kind == "cost" else "receives"
    fixed = model.payouts.fixed.get(name)
    if fixed is not None:
        clause = _source(snap.text, fixed.span)
    elif model.payouts.rule is not None:
        scope = "rest by" if model.payouts.scope == "rest" else "by"
        clause = f"payout {scope} {ast.rule_text(model.payouts.rule)}"
    else:
        clause = ""
    how = f" (`{clause}`)" if clause else ""
    if payouts is not None:
        lines.append(f"- {verb} {human(payouts[name])}{_unit(model)}{how}")
    else:
        lines.append(f"- payout{how}: {why or 'still being computed'}")
    return "\n".join(lines)


def attribute_hover(document: ast.Document, name: str) -> str:
    """An attribute's value for every party that gives one."""
    lines = [f"**attribute** `{name}`", ""]
    for stmt in document.statements:
        if isinstance(stmt, ast.PartyDecl):
            for attr in stmt.attributes:
                if attr.name.name == name:
                    lines.append(f"- {stmt.name.name}: {attr.value.text}")
    return "\n".join(lines)


def param_hover(document: ast.Document, name: str) -> str:
    value = next((s.value.text for s in document.statements
                  if isinstance(s, ast.ParamDecl) and s.name.name == name), "?")
    return f"**param** `{name}` = {value}"


def requirement_hover(snap: Snapshot, req: ast.Require) -> str:
    """The verdict, worst excess and worst coalition of a requirement, for the
    baseline and each contingency."""
    text = ast.requirement_text(req)
    lines = [f"**require {text}**", ""]
    if snap.results is None:
        lines.append("checking…")
        return "\n".join(lines)
    unit = _unit(snap.model)
    for r in snap.results:
        if r.span != req.span:
            continue
        where = f"under `{r.contingency}`" if r.contingency else "baseline"
        if r.status in (HOLDS, FAILS):
            worst = "" if r.worst_excess is None else f", worst excess {human(r.worst_excess)}{unit}"
            if worst and r.worst_coalition and r.requirement != "balanced budget":
                worst += f" for {_coalition(r.worst_coalition)}"
            lines.append(f"- {where}: **{r.status}**{worst}")
        else:
            lines.append(f"- {where}: **{r.status}**: {r.reason or 'no reason was given'}")
    if len(lines) == 2:
        lines.append("no verdict (the agreement could not be checked)")
    return "\n".join(lines)


# ---------------------------------------------------------------- completion


@lru_cache(maxsize=1)
def keywords() -> tuple[str, ...]:
    """The words of the grammar, plus the share kinds it matches by pattern."""
    words = {t.pattern.value for t in parser().terminals if t.pattern.type == "str"}
    words = {w for w in words if re.fullmatch(r"[A-Za-z_]\w*", w)} | {"cost", "value"}
    return tuple(sorted(words))


FUNCTIONS = ("sum", "max", "min", "count")

_ITEM_KIND = {
    "party": types.CompletionItemKind.Variable,
    "attribute": types.CompletionItemKind.Field,
    "param": types.CompletionItemKind.Constant,
}


def completions(document: ast.Document | None) -> list[types.CompletionItem]:
    """Party, attribute and param names first, then functions and keywords."""
    items, seen = [], set()
    for name, kind in (_declared(document) if document else {}).items():
        seen.add(name)
        items.append(types.CompletionItem(label=name, kind=_ITEM_KIND[kind], detail=kind, sort_text=f"0{name}"))
    for name in FUNCTIONS:
        items.append(types.CompletionItem(label=name, kind=types.CompletionItemKind.Function,
                                          detail="function", sort_text=f"1{name}"))
    for word in keywords():
        if word not in seen:
            items.append(types.CompletionItem(label=word, kind=types.CompletionItemKind.Keyword,
                                              detail="keyword", sort_text=f"2{word}"))
    return items


# ---------------------------------------------------------------- positions


def to_position(lines: list[str], codec, line: int, column: int) -> types.Position:
    """A 1-based (line, character column) as an editor position."""
    if line > len(lines):
        return types.Position(line=len(lines) - 1, character=codec.client_num_units(lines[-1]))
    index = max(line - 1, 0)
    text = lines[index]
    return types.Position(line=index, character=codec.client_num_units(text[: max(column - 1, 0)]))


def to_range(lines: list[str], codec, span: ast.Span | None) -> types.Range:
    span = span or FILE_START
    return types.Range(start=to_position(lines, codec, span.line, span.column),
                       end=to_position(lines, codec, span.end_line, span.end_column))


def from_position(lines: list[str], codec, position: types.Position) -> tuple[int, int]:
    """An editor position as a 1-based (line, character column)."""
    text = lines[position.line] if position.line < len(lines) else ""
    units = 0
    for index, char in enumerate(text):
        if units >= position.character:
            return position.line + 1, index + 1
        units += codec.client_num_units(char)
    return position.line + 1, len(text) + 1


def to_lsp(diagnostic: Diagnostic, lines: list[str], codec) -> types.Diagnostic:
    message = diagnostic.message + (f"\nhelp: {diagnostic.help}" if diagnostic.help else "")
    return types.Diagnostic(
        range=to_range(lines, codec, diagnostic.span), message=message, source=SOURCE,
        severity=_SEVERITY.get(diagnostic.severity, types.DiagnosticSeverity.Information),
        code=diagnostic.code)


# ---------------------------------------------------------------- the server


class PactServer(LanguageServer):
    """The language server: one `Snapshot` per open document."""

    def __init__(self, delay: float = DELAY, time_limit: float | None = TIME_LIMIT):
        super().__init__(SOURCE, __version__)
        self.delay = delay
        self.time_limit = time_limit
        self.snapshots: dict[str, Snapshot] = {}
        self.last_parsed: dict[str, ast.Document] = {}  # names to complete while the text is broken
        self.check_lock = asyncio.Lock()  # one check at a time: they share two cores with the editor
        self.background: set[asyncio.Task] = set()

    # ------------------------------------------------------------ documents
    def update(self, uri: str) -> None:
        """Analyse the current text, publish at once, and schedule the check."""
        doc = self.workspace.get_text_document(uri)
        old = self.snapshots.get(uri)
        snap = analyse(uri, doc.version, doc.source)
        snap.shown = carry_over(old, snap)
        self.snapshots[uri] = snap
        if old is not None:
            old.done.set()  # a hover waiting on the old version gives up at once
        if snap.document is not None:
            self.last_parsed[uri] = snap.document
        self.publish(snap)
        if snap.model is None:
            snap.finish([], [])
            return
        task = asyncio.get_running_loop().create_task(self.check_later(snap))
        self.background.add(task)
        task.add_done_callback(self.background.discard)

    def close(self, uri: str) -> None:
        old = self.snapshots.pop(uri, None)
        self.last_parsed.pop(uri, None)
        if old is not None:
            old.done.set()
        self.text_document_publish_diagnostics(types.PublishDiagnosticsParams(uri=uri, diagnostics=[]))

    def current(self, snap: Snapshot) -> bool:
        return self.snapshots.get(snap.uri) is snap

    def snapshot(self, uri: str) -> Snapshot:
        snap = self.snapshots.get(uri)
        if snap is None:  # a request for a document we were never told about
            doc = self.workspace.get_text_document(uri)
            snap = analyse(uri, doc.version, doc.source)
        return snap

    async def check_later(self, snap: Snapshot) -> None:
        """Debounce, check in a thread, and publish unless the text moved on."""
        await asyncio.sleep(self.delay)
        if not self.current(snap):
            return
        async with self.check_lock:
            if not self.current(snap):  # newer text arrived while another check ran
                return
            try:
                results, problems = await in_thread(run_check, snap.model, self.time_limit)
            except Exception:
                self.log(types.MessageType.Error, "the stability check failed:\n" + traceback.format_exc())
                results, problems = [], [Diagnostic(
                    "internal", "warning", "the stability check stopped with an internal error",
                    FILE_START, "the server log has the details; please report it with the file attached")]
        if not self.current(snap):  # stale: the text changed while the check ran
            return
        snap.finish(results, problems)
        self.publish(snap)

    def publish(self, snap: Snapshot) -> None:
        lines, codec = snap.text.split("\n"), self.workspace.position_codec
        found = snap.problems + snap.check_problems + [d for _, d in snap.shown]
        self.text_document_publish_diagnostics(types.PublishDiagnosticsParams(
            uri=snap.uri, version=snap.version, diagnostics=[to_lsp(d, lines, codec) for d in found]))

    def log(self, kind: types.MessageType, message: str) -> None:
        self.window_log_message(types.LogMessageParams(type=kind, message=message))

    async def payouts(self, snap: Snapshot) -> tuple[dict[str, Fraction] | None, str | None]:
        if snap.model is None:
            return None, None
        if snap.payouts is None:
            snap.payouts = in_thread(compute_payouts, snap.model)
        try:
            return await asyncio.wait_for(asyncio.shield(snap.payouts), HOVER_WAIT)
        except asyncio.TimeoutError:
            return None, "still being computed"
        except Exception as exc:
            return None, f"internal error: {exc}"

    # ------------------------------------------------------------ requests
    async def hover(self, params: types.HoverParams) -> types.Hover | None:
        snap = self.snapshot(params.text_document.uri)
        if snap.document is None:
            return None
        lines, codec = snap.text.split("\n"), self.workspace.position_codec
        line, column = from_position(lines, codec, params.position)
        ref = ref_at(snap.document, line, column)
        if ref is not None:
            if ref.kind == "party":
                text = party_hover(snap, ref.name, *(await self.payouts(snap)))
            elif ref.kind == "attribute":
                text = attribute_hover(snap.document, ref.name)
            else:
                text = param_hover(snap.document, ref.name)
            span = ref.span
        else:
            req = requirement_at(snap.document, line)
            if req is None:
                return None
            if snap.results is None:
                try:
                    await asyncio.wait_for(snap.done.wait(), self.delay + HOVER_WAIT)
                except asyncio.TimeoutError:
                    pass
            text, span = requirement_hover(snap, req), req.span
        return types.Hover(contents=types.MarkupContent(kind=types.MarkupKind.Markdown, value=text),
                           range=to_range(lines, codec, span))

    def definition(self, params: types.DefinitionParams) -> list[types.Location] | None:
        snap = self.snapshot(params.text_document.uri)
        if snap.document is None:
            return None
        lines, codec = snap.text.split("\n"), self.workspace.position_codec
        ref = ref_at(snap.document, *from_position(lines, codec, params.position))
        if ref is None:
            return None
        spans = declarations(snap.document, ref)
        return [types.Location(uri=snap.uri, range=to_range(lines, codec, s)) for s in spans] or None

    def formatting(self, params: types.DocumentFormattingParams) -> list[types.TextEdit] | None:
        """One edit replacing the whole text; none when it would not change
        or the text does not parse."""
        from .format import FormatError, format_text

        text = self.workspace.get_text_document(params.text_document.uri).source
        try:
            formatted = format_text(text)
        except AgreementError:
            return None
        except FormatError as exc:
            self.log(types.MessageType.Error, f"the formatter left the text unchanged: {exc}")
            return None
        if formatted == text:
            return []
        lines, codec = text.split("\n"), self.workspace.position_codec
        end = types.Position(line=len(lines) - 1, character=codec.client_num_units(lines[-1]))
        return [types.TextEdit(range=types.Range(start=types.Position(line=0, character=0), end=end),
                               new_text=formatted)]

    def completion(self, params: types.CompletionParams) -> types.CompletionList:
        uri = params.text_document.uri
        snap = self.snapshots.get(uri)
        document = snap.document if snap and snap.document else self.last_parsed.get(uri)
        return types.CompletionList(is_incomplete=False, items=completions(document))


def build_server(delay: float = DELAY, time_limit: float | None = TIME_LIMIT) -> PactServer:
    """A server with every feature registered; `start_io()` runs it."""
    server = PactServer(delay, time_limit)

    @server.feature(types.TEXT_DOCUMENT_DID_OPEN)
    async def did_open(ls: PactServer, params: types.DidOpenTextDocumentParams) -> None:
        ls.update(params.text_document.uri)

    @server.feature(types.TEXT_DOCUMENT_DID_CHANGE)
    async def did_change(ls: PactServer, params: types.DidChangeTextDocumentParams) -> None:
        ls.update(params.text_document.uri)

    @server.feature(types.TEXT_DOCUMENT_DID_CLOSE)
    async def did_close(ls: PactServer, params: types.DidCloseTextDocumentParams) -> None:
        ls.close(params.text_document.uri)

    @server.feature(types.TEXT_DOCUMENT_HOVER)
    async def hover(ls: PactServer, params: types.HoverParams):
        return await ls.hover(params)

    @server.feature(types.TEXT_DOCUMENT_DEFINITION)
    def definition(ls: PactServer, params: types.DefinitionParams):
        return ls.definition(params)

    @server.feature(types.TEXT_DOCUMENT_FORMATTING)
    def formatting(ls: PactServer, params: types.DocumentFormattingParams):
        return ls.formatting(params)

    @server.feature(types.TEXT_DOCUMENT_COMPLETION, types.CompletionOptions())
    def completion(ls: PactServer, params: types.CompletionParams):
        return ls.completion(params)

    return server
