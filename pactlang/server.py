"""Editor events -> diagnostics, hovers, edits and locations: the language server.

Built on pygls (`pip install pactlang[editor]`) and run by `pactlang serve`.
Every answer comes from the library, never from a parser of its own:
`parse_text` and `resolve` for syntax and name errors, the linter for advice,
`check_model` for verdicts, `worths.payout` for payouts and `format_text` for
layout. What to answer is worked out in `pactlang.editor`, which knows
nothing of the protocol; this module converts positions, builds the protocol's
messages and schedules the work.

Syntax, name and lint diagnostics are published at once on every change; a
crash of the library there becomes an error diagnostic on that version, so
nothing is ever shown for text that is gone. The stability check waits for a
pause in typing (`DELAY`) and, like the payouts a hover on a party asks for,
runs in one child process (`editor.worker`): one job at a time, the newest
version wins, and the work of a replaced or closed version is stopped by
killing the child, so memory stays flat however fast the text changes.
Results that arrive for replaced text are dropped. Until fresh verdicts
arrive, the previous ones stay on requirement lines whose text and place did
not change, so squiggles do not flicker on every keystroke. A request whose
parameters do not fit its method gets an `InvalidParams` error.

Positions: the library's spans count lines and characters from 1 with an
exclusive end column; the editor counts from 0 in the code units agreed at
start-up (UTF-16 unless the client offers another), so every position that
crosses the boundary is converted here.
"""

from __future__ import annotations

import asyncio
import logging
from fractions import Fraction

from lsprotocol import types
from pygls.exceptions import JsonRpcException, JsonRpcInvalidParams
from pygls.lsp.server import LanguageServer
from pygls.protocol import LanguageServerProtocol
from pygls.uris import to_fs_path

from . import __version__, ast
from .diagnostics import AgreementError, Diagnostic
from .editor.completion import Suggestion, suggestions
from .editor.hovers import attribute_hover, param_hover, party_hover, requirement_hover
from .editor.names import FUNCTIONS, declarations, declared_names, keywords, ref_at, requirement_at
from .editor.snapshot import TIME_LIMIT, Snapshot, analyse, carry_over
from .editor.worker import CHECK, PAYOUTS, Superseded, Worker, WorkerFailed
from .load import FILE_START

DELAY = 0.5  # seconds of quiet typing before the stability check starts
HOVER_WAIT = 2.0  # seconds a hover waits for a check or payout still running
SOURCE = "pactlang"

log = logging.getLogger("pactlang.server")

_SEVERITY = {"error": types.DiagnosticSeverity.Error, "warning": types.DiagnosticSeverity.Warning}


# ---------------------------------------------------------------- documents and background work


def analyse_uri(uri: str, version: int | None, text: str) -> Snapshot:
    """`analyse` one version of a document, reading the file path from its URI.

    A crash of the library becomes an error diagnostic on this version, so
    nothing of the previous version (its diagnostics, its hovers) stays on
    screen for text that is gone.
    """
    path = to_fs_path(uri) or uri
    try:
        return analyse(uri, version, text, path)
    except Exception as exc:
        log.exception("analysing %s failed", uri)
        return Snapshot(uri, version, text, None, None, [internal_error("the analysis", exc)])


def internal_error(what: str, exc: BaseException | str) -> Diagnostic:
    """An error diagnostic at the start of the file for a crash inside pactlang."""
    reason = exc if isinstance(exc, str) else f"{type(exc).__name__}: {exc}"
    reason = reason.strip().splitlines()[-1] if reason.strip() else "no reason was given"
    return Diagnostic("internal", "error", f"{what} stopped with an internal error ({reason})", FILE_START,
                      "the server log has the details; please report it with the file attached")


# ---------------------------------------------------------------- completion


_ITEM_KIND = {
    "party": types.CompletionItemKind.Variable,
    "attribute": types.CompletionItemKind.Field,
    "param": types.CompletionItemKind.Constant,
}


def completion_item(suggestion: Suggestion) -> types.CompletionItem:
    """A word that fits at the cursor, names before functions before keywords."""
    kind = _ITEM_KIND.get(suggestion.kind) or (
        types.CompletionItemKind.Function if suggestion.kind == "function" else types.CompletionItemKind.Keyword)
    order = {"function": 1, "keyword": 2}.get(suggestion.kind, 0)
    return types.CompletionItem(label=suggestion.label, kind=kind, detail=suggestion.kind,
                                sort_text=f"{order}{suggestion.label}")


def completions(document: ast.Document | None) -> list[types.CompletionItem]:
    """Party, attribute and param names first, then functions and keywords."""
    items, seen = [], set()
    for name, kind in (declared_names(document) if document else {}).items():
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
    """A library span (the start of the file when there is none) as an editor range."""
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
    """A library diagnostic as the protocol's, its help line appended to the message."""
    message = diagnostic.message + (f"\nhelp: {diagnostic.help}" if diagnostic.help else "")
    return types.Diagnostic(
        range=to_range(lines, codec, diagnostic.span), message=message, source=SOURCE,
        severity=_SEVERITY.get(diagnostic.severity, types.DiagnosticSeverity.Information),
        code=diagnostic.code)


# ---------------------------------------------------------------- the server


class _Ignored:
    """Stands for a message that was answered with an error while being read."""

    jsonrpc = None


class PactProtocol(LanguageServerProtocol):
    """pygls' protocol, except that a request whose parameters do not fit its
    method is answered with an `InvalidParams` error instead of being dropped
    (the client would wait for an answer forever)."""

    def structure_message(self, data: dict):
        try:
            return super().structure_message(data)
        except JsonRpcException as exc:
            if "id" in data and "method" in data:  # a request: it must get an answer
                what = "invalid parameters" if isinstance(exc, JsonRpcInvalidParams) else "unreadable request"
                message = f"{what} for `{data['method']}`"
                self._send_response(data["id"], error=type(exc)(message).to_response_error())
            return _Ignored()

    def handle_message(self, message) -> None:
        if not isinstance(message, _Ignored):
            super().handle_message(message)


def not_open(uri: str, exc: OSError) -> JsonRpcInvalidParams:
    """The error answer for a request about a document that is neither open nor readable."""
    return JsonRpcInvalidParams(f"the document `{uri}` is not open and cannot be read: {exc.strerror or exc}")


class PactServer(LanguageServer):
    """The language server: one `Snapshot` per open document."""

    def __init__(self, delay: float = DELAY, time_limit: float | None = TIME_LIMIT):
        super().__init__(SOURCE, __version__, protocol_cls=PactProtocol)
        self.delay = delay
        self.time_limit = time_limit
        self.snapshots: dict[str, Snapshot] = {}
        self.last_parsed: dict[str, ast.Document] = {}  # names to complete while the text is broken
        # one child process for checks and payouts, killed when its text is gone
        self.worker: Worker | None = None
        self.background: set[asyncio.Task] = set()

    def work(self, snap: Snapshot, kind: str) -> asyncio.Future:
        """Queue a check or payout job for this version; older versions' jobs are dropped."""
        if self.worker is None:
            self.worker = Worker()
        return self.worker.submit(snap.uri, snap.version, kind, snap.text, to_fs_path(snap.uri) or snap.uri,
                                  self.time_limit)

    # ------------------------------------------------------------ documents
    def update(self, uri: str) -> None:
        """Analyse the current text, publish at once, and schedule the check."""
        doc = self.workspace.get_text_document(uri)
        old = self.snapshots.get(uri)
        snap = analyse_uri(uri, doc.version, doc.source)
        snap.shown = carry_over(old, snap)
        self.snapshots[uri] = snap
        if old is not None:
            old.done.set()  # a hover waiting on the old version gives up at once
        if self.worker is not None:  # the old version's check or payouts: stop them now
            self.worker.cancel(uri, keep_version=snap.version)
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
        if self.worker is not None:
            self.worker.cancel(uri)
        self.text_document_publish_diagnostics(types.PublishDiagnosticsParams(uri=uri, diagnostics=[]))

    def current(self, snap: Snapshot) -> bool:
        return self.snapshots.get(snap.uri) is snap

    def snapshot(self, uri: str) -> Snapshot:
        snap = self.snapshots.get(uri)
        if snap is None:  # a request for a document we were never told about: read it from disk
            try:
                doc = self.workspace.get_text_document(uri)
                snap = analyse_uri(uri, doc.version, doc.source)
            except OSError as exc:
                raise not_open(uri, exc) from None
        return snap

    async def check_later(self, snap: Snapshot) -> None:
        """Debounce, check in the worker, and publish unless the text moved on."""
        await asyncio.sleep(self.delay)
        if not self.current(snap):
            return
        try:
            results, problems = await self.work(snap, CHECK)
        except Superseded:
            return
        except WorkerFailed as exc:
            log.error("the stability check of %s failed:\n%s", snap.uri, exc)
            results, problems = [], [internal_error("the stability check", str(exc))]
        if not self.current(snap):  # stale: the text changed while the check ran
            return
        try:
            snap.finish(results, problems)
        except Exception as exc:  # the verdicts could not be explained: say so on this version
            log.exception("explaining the verdicts of %s failed", snap.uri)
            snap.finish([], [internal_error("the stability check", exc)])
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
            snap.payouts = self.work(snap, PAYOUTS)
        try:
            return await asyncio.wait_for(asyncio.shield(snap.payouts), HOVER_WAIT)
        except asyncio.TimeoutError:
            return None, "still being computed"
        except Superseded:
            return None, "the text changed; hover again"
        except WorkerFailed as exc:
            log.error("the payouts of %s failed:\n%s", snap.uri, exc)
            return None, "internal error (see the server log)"

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

        try:
            text = self.workspace.get_text_document(params.text_document.uri).source
        except OSError as exc:
            raise not_open(params.text_document.uri, exc) from None
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
        """The words that fit at the cursor (see `editor.completion`); every
        name and keyword when the statement there cannot be read."""
        uri = params.text_document.uri
        snap = self.snapshots.get(uri)
        document = snap.document if snap and snap.document else self.last_parsed.get(uri)
        try:
            text = self.workspace.get_text_document(uri).source
        except OSError as exc:
            raise not_open(uri, exc) from None
        lines = text.split("\n")
        line, column = from_position(lines, self.workspace.position_codec, params.position)
        found = suggestions(text, line, column, declared_names(document) if document else {})
        items = completions(document) if found is None else [completion_item(s) for s in found]
        return types.CompletionList(is_incomplete=False, items=items)


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

    @server.feature(types.SHUTDOWN)
    def shutdown(ls: PactServer, params: None) -> None:
        if ls.worker is not None:
            ls.worker.close()

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
