"""The language server driven by a real LSP client (pytest-lsp) over stdio.

One server process (`python -m pactlang serve`) serves every test of this
module; each test opens its own document. Diagnostics are awaited with a
deadline, never assumed after a fixed sleep.
"""

from __future__ import annotations

import asyncio
import sys
import tempfile
from pathlib import Path

import pytest

pytest.importorskip("pytest_lsp", reason="the server tests need the test extra (pytest-lsp, pygls 2)")

import pytest_lsp  # noqa: E402
from lsprotocol import types  # noqa: E402
from pygls.protocol import default_converter  # noqa: E402
from pytest_lsp import ClientServerConfig, LanguageClient, client_capabilities  # noqa: E402
from pytest_lsp.client import DEFAULT_CLIENT_FEATURES, register_lsp_features  # noqa: E402

from pactlang.format import format_text  # noqa: E402

pytestmark = pytest.mark.asyncio(loop_scope="module")

DEADLINE = 20.0  # seconds; generous for a loaded CI machine, a pass takes well under one
FOLDER = Path(tempfile.gettempdir()) / "pactlang-server-tests"  # URIs only: nothing is written

# Three shops share a delivery van. Hand-computed: worth(all) = 48 + fuel = 51;
# the florist's fixed 5 leaves 46 shared 2:1 by loads, so bakery 92/3 and
# dairy 46/3. {bakery, dairy} could earn 52 alone and is paid 46: excess 6,
# above the allowed 2, and no other coalition has a positive excess
# ({florist}: 0 - 5 = -5 is the worst singleton).
VAN = """\
# Three shops share one delivery van.
agreement "Shared delivery van"
shares value in kEUR

party bakery:  loads 2
party dairy:   loads 1
party florist: loads 1

param fuel = 3

worth {bakery} = 10
worth {dairy} = 5
worth {florist} = 0
worth {bakery, dairy} = 52
worth {bakery, florist} = 15
worth {dairy, florist} = 10
worth all = 48 + fuel

payout florist = 5
payout rest by proportional to loads

contingency "florist leaves" { without florist }

require stable within 2
require individually rational
"""

# The same, except that the pair earns 40 alone: paid 46, it has no reason to leave.
VAN_STABLE = VAN.replace("worth {bakery, dairy} = 52", "worth {bakery, dairy} = 40")

MESSY = """\
agreement "Shared delivery van"
shares value in kEUR
party bakery: loads 2
party dairy:loads 1
require stable within 2
party florist:   loads 1
worth all=48
worth otherwise = 0
payout   by equal split
"""

PUBLISH = types.TEXT_DOCUMENT_PUBLISH_DIAGNOSTICS


def make_client() -> LanguageClient:
    """The pytest-lsp client, also keeping every diagnostics notification in order."""
    client = LanguageClient(converter_factory=default_converter)
    client.published = []

    def publish(client: LanguageClient, params: types.PublishDiagnosticsParams) -> None:
        client.diagnostics[params.uri] = params.diagnostics
        client.published.append(params)

    register_lsp_features(client, {**DEFAULT_CLIENT_FEATURES, PUBLISH: publish})
    return client


@pytest_lsp.fixture(
    scope="module",
    config=ClientServerConfig(server_command=[sys.executable, "-m", "pactlang", "serve"],
                              client_factory=make_client),
)
async def client(lsp_client: LanguageClient):
    result = await lsp_client.initialize_session(types.InitializeParams(
        capabilities=client_capabilities("neovim@v0.11.0"), root_uri=FOLDER.as_uri()))
    lsp_client.encoding = result.capabilities.position_encoding or types.PositionEncodingKind.Utf16
    yield
    await lsp_client.shutdown_session()


@pytest_lsp.fixture(
    scope="module",
    config=ClientServerConfig(server_command=[sys.executable, "-m", "pactlang", "serve"],
                              client_factory=make_client),
)
async def utf16_client(lsp_client: LanguageClient):
    """A second server, for a client that knows only UTF-16 positions (VS Code's default)."""
    result = await lsp_client.initialize_session(types.InitializeParams(
        capabilities=client_capabilities("visual-studio-code"), root_uri=FOLDER.as_uri()))
    lsp_client.encoding = result.capabilities.position_encoding or types.PositionEncodingKind.Utf16
    yield
    await lsp_client.shutdown_session()


# ---------------------------------------------------------------- helpers


def uri_for(name: str) -> str:
    return (FOLDER / f"{name}.deal").as_uri()


def open_doc(client: LanguageClient, name: str, text: str, version: int = 1) -> str:
    uri = uri_for(name)
    client.text_document_did_open(types.DidOpenTextDocumentParams(
        text_document=types.TextDocumentItem(uri=uri, language_id="pactlang", version=version, text=text)))
    return uri


def change_doc(client: LanguageClient, uri: str, text: str, version: int) -> None:
    client.text_document_did_change(types.DidChangeTextDocumentParams(
        text_document=types.VersionedTextDocumentIdentifier(uri=uri, version=version),
        content_changes=[types.TextDocumentContentChangeWholeDocument(text=text)]))


def close_doc(client: LanguageClient, uri: str) -> None:
    client.text_document_did_close(types.DidCloseTextDocumentParams(
        text_document=types.TextDocumentIdentifier(uri=uri)))


async def until(condition, what: str):
    """Await `condition()` becoming truthy (checked after every message), or fail."""
    loop = asyncio.get_running_loop()
    end = loop.time() + DEADLINE
    while not (value := condition()):
        if loop.time() > end:
            pytest.fail(f"timed out after {DEADLINE}s waiting for {what}")
        await asyncio.sleep(0.02)
    return value


async def diagnostics(client: LanguageClient, uri: str, code: str, what: str) -> list[types.Diagnostic]:
    """The diagnostics with `code` in the first publication for `uri` that has any."""
    def found():
        for params in client.published:
            mine = [d for d in params.diagnostics if d.code == code]
            if params.uri == uri and mine:
                return mine
        return None
    return await until(found, what)


def units(client: LanguageClient, text: str) -> int:
    """The length of `text` in the position units agreed with the server."""
    if client.encoding == types.PositionEncodingKind.Utf8:
        return len(text.encode("utf-8"))
    if client.encoding == types.PositionEncodingKind.Utf32:
        return len(text)
    return len(text.encode("utf-16-le")) // 2


def where(client: LanguageClient, text: str, needle: str, offset: int = 0) -> types.Position:
    """The position of the first `needle` (plus `offset` characters) in `text`."""
    index = text.index(needle) + offset
    line = text.count("\n", 0, index)
    start = text.rfind("\n", 0, index) + 1
    return types.Position(line=line, character=units(client, text[start:index]))


def span_of(client: LanguageClient, text: str, needle: str, offset: int = 0, length: int | None = None) -> types.Range:
    start = where(client, text, needle, offset)
    length = len(needle) - offset if length is None else length
    end_index = text.index(needle) + offset + length
    line_start = text.rfind("\n", 0, end_index) + 1
    return types.Range(start=start, end=types.Position(
        line=start.line, character=units(client, text[line_start:end_index])))


def markdown(hover: types.Hover | None) -> str:
    assert hover is not None, "no hover"
    assert isinstance(hover.contents, types.MarkupContent)
    return hover.contents.value


# ---------------------------------------------------------------- diagnostics


async def test_syntax_error_has_its_range_at_once(client: LanguageClient):
    text = VAN.replace("param fuel = 3", "param fuel = = 3")
    uri = open_doc(client, "syntax", text)
    found = await diagnostics(client, uri, "syntax", "the syntax error")
    assert len(found) == 1
    d = found[0]
    # the second `=` of `param fuel = = 3`, one character wide
    assert d.range == span_of(client, text, "fuel = = 3", offset=len("fuel = "), length=1)
    assert d.severity == types.DiagnosticSeverity.Error
    assert d.message.startswith("unexpected `=`")
    assert d.source == "pactlang"
    close_doc(client, uri)


async def emoji_error_range(client: LanguageClient, name: str) -> None:
    # A character outside the Basic Multilingual Plane is 1 code point, 2 UTF-16
    # units and 4 UTF-8 bytes; the error after it must land on `42` all the same.
    text = VAN.replace('agreement "Shared delivery van"', 'agreement "Van \U0001F69A" 42')
    uri = open_doc(client, name, text)
    found = await diagnostics(client, uri, "syntax", "the syntax error after the emoji")
    assert found[0].range.start == where(client, text, "42")
    assert found[0].range.end == where(client, text, "42", offset=2)
    close_doc(client, uri)
    return found[0].range.start.character


async def test_range_counts_in_utf8_when_the_client_prefers_it(client: LanguageClient):
    assert client.encoding == types.PositionEncodingKind.Utf8  # Neovim 0.11 offers utf-8 first
    assert await emoji_error_range(client, "units8") == len('agreement "Van ') + 4 + len('" ')


async def test_range_counts_in_utf16_by_default(utf16_client: LanguageClient):
    assert utf16_client.encoding == types.PositionEncodingKind.Utf16
    assert await emoji_error_range(utf16_client, "units16") == len('agreement "Van ') + 2 + len('" ')


async def test_name_error_is_reported_with_its_help(client: LanguageClient):
    text = VAN.replace("worth {dairy} = 5", "worth {diary} = 5")
    uri = open_doc(client, "names", text)
    found = await diagnostics(client, uri, "unknown-party", "the unknown party")
    assert found[0].range == span_of(client, text, "diary")
    assert "`diary`" in found[0].message
    close_doc(client, uri)


async def test_failing_requirement_is_an_error_on_its_line(client: LanguageClient):
    uri = open_doc(client, "fails", VAN)
    found = await diagnostics(client, uri, "requirement-fails", "the failing requirement")
    assert len(found) == 1
    d = found[0]
    assert d.severity == types.DiagnosticSeverity.Error
    assert d.range == span_of(client, VAN, "require stable within 2")
    assert d.message == ("`stable within 2` fails: worst coalition `{bakery, dairy}` has excess 6 kEUR "
                         "(allowed 2 kEUR)")
    # individually rational holds: nothing on its line
    rational = where(client, VAN, "require individually rational").line
    assert not [x for x in client.diagnostics[uri] if x.range.start.line == rational and x.code == "requirement-fails"]
    close_doc(client, uri)


async def test_check_waits_for_typing_to_pause_and_drops_stale_text(client: LanguageClient):
    uri = open_doc(client, "debounce", VAN)  # fails...
    change_doc(client, uri, VAN_STABLE, 2)  # ...but is fixed before the pause is over
    # version 2 is published twice: syntax and lint at once, then with the verdicts
    await until(lambda: len([p for p in client.published if p.uri == uri and p.version == 2]) >= 2,
                "the checked diagnostics of version 2")
    mine = [p for p in client.published if p.uri == uri]
    assert all(p.version == 2 for p in mine[1:])
    assert not any(d.code == "requirement-fails" for p in mine for d in p.diagnostics), \
        "a verdict on the replaced text was published"
    close_doc(client, uri)


async def test_verdicts_stay_while_an_unrelated_line_changes(client: LanguageClient):
    uri = open_doc(client, "carry", VAN)
    await diagnostics(client, uri, "requirement-fails", "the failing requirement")
    change_doc(client, uri, VAN + "# a note at the end\n", 2)
    first = await until(lambda: next((p for p in client.published if p.uri == uri and p.version == 2), None),
                        "the first diagnostics of version 2")
    assert [d.code for d in first.diagnostics].count("requirement-fails") == 1
    close_doc(client, uri)


# ---------------------------------------------------------------- hover


async def test_hover_on_a_party_gives_attributes_and_exact_payout(client: LanguageClient):
    uri = open_doc(client, "hover_party", VAN)
    at = where(client, VAN, "bakery, dairy} = 52")
    text = markdown(await client.text_document_hover_async(types.HoverParams(
        text_document=types.TextDocumentIdentifier(uri=uri), position=at)))
    assert "**party** `bakery`" in text
    assert "- loads: 2" in text
    assert "- receives 92/3 (~30.67) kEUR (`payout rest by proportional to loads`)" in text
    text = markdown(await client.text_document_hover_async(types.HoverParams(
        text_document=types.TextDocumentIdentifier(uri=uri), position=where(client, VAN, "florist = 5", 2))))
    assert "- receives 5 kEUR (`payout florist = 5`)" in text
    close_doc(client, uri)


async def test_hover_on_a_requirement_gives_each_verdict(client: LanguageClient):
    uri = open_doc(client, "hover_require", VAN)
    await diagnostics(client, uri, "requirement-fails", "the failing requirement")
    text = markdown(await client.text_document_hover_async(types.HoverParams(
        text_document=types.TextDocumentIdentifier(uri=uri),
        position=where(client, VAN, "require stable within 2", 3))))
    assert text.startswith("**require stable within 2**")
    assert "- baseline: **fails**, worst excess 6 kEUR for `{bakery, dairy}`" in text
    # without the florist the pair shares its own 52 by loads, 104/3 and 52/3:
    # the worst coalition is {dairy} with 5 - 52/3 = -37/3
    assert "- under `florist leaves`: **holds**, worst excess -37/3 (~-12.33) kEUR for `{dairy}`" in text
    text = markdown(await client.text_document_hover_async(types.HoverParams(
        text_document=types.TextDocumentIdentifier(uri=uri),
        position=where(client, VAN, "require individually rational"))))
    # the worst singleton is the florist: 0 - 5
    assert "- baseline: **holds**, worst excess -5 kEUR for `{florist}`" in text
    assert "- under `florist leaves`: **holds**, worst excess -37/3 (~-12.33) kEUR for `{dairy}`" in text
    close_doc(client, uri)


# ---------------------------------------------------------------- formatting


async def test_formatting_replaces_the_whole_text_with_the_formatters(client: LanguageClient):
    uri = open_doc(client, "format", MESSY)
    options = types.FormattingOptions(tab_size=4, insert_spaces=True)
    edits = await client.text_document_formatting_async(types.DocumentFormattingParams(
        text_document=types.TextDocumentIdentifier(uri=uri), options=options))
    expected = format_text(MESSY)
    assert expected != MESSY
    assert len(edits) == 1
    assert edits[0].new_text == expected
    last = MESSY.split("\n")
    assert edits[0].range == types.Range(start=types.Position(line=0, character=0),
                                         end=types.Position(line=len(last) - 1, character=len(last[-1])))
    # once formatted, there is nothing left to do
    change_doc(client, uri, expected, 2)
    edits = await client.text_document_formatting_async(types.DocumentFormattingParams(
        text_document=types.TextDocumentIdentifier(uri=uri), options=options))
    assert not edits
    # text that does not parse is left alone
    change_doc(client, uri, MESSY.replace("loads 2", "loads = 2"), 3)
    edits = await client.text_document_formatting_async(types.DocumentFormattingParams(
        text_document=types.TextDocumentIdentifier(uri=uri), options=options))
    assert edits is None
    close_doc(client, uri)


# ---------------------------------------------------------------- definition and completion


async def definition(client: LanguageClient, uri: str, position: types.Position):
    return await client.text_document_definition_async(types.DefinitionParams(
        text_document=types.TextDocumentIdentifier(uri=uri), position=position))


async def test_definition_of_party_attribute_and_param(client: LanguageClient):
    uri = open_doc(client, "definition", VAN)
    found = await definition(client, uri, where(client, VAN, "dairy, florist}"))
    assert [(loc.uri, loc.range) for loc in found] == [(uri, span_of(client, VAN, "dairy:", length=5))]
    found = await definition(client, uri, where(client, VAN, "loads\n\ncontingency", 1))
    assert [loc.range for loc in found] == [span_of(client, VAN, "loads 2", length=5),
                                            span_of(client, VAN, "loads 1", length=5),
                                            span_of(client, VAN, "loads 1\n\n", length=5)]
    found = await definition(client, uri, where(client, VAN, "fuel\n"))
    assert [loc.range for loc in found] == [span_of(client, VAN, "fuel = 3", length=4)]
    # the cursor right after a name still finds it
    found = await definition(client, uri, where(client, VAN, "without florist", len("without florist")))
    assert [loc.range for loc in found] == [span_of(client, VAN, "florist: loads", length=7)]
    assert not await definition(client, uri, where(client, VAN, "require stable"))
    close_doc(client, uri)


async def test_completion_offers_names_and_keywords_even_while_broken(client: LanguageClient):
    uri = open_doc(client, "completion", VAN)
    broken = VAN + "payout b"
    change_doc(client, uri, broken, 2)
    await diagnostics(client, uri, "syntax", "the syntax error of the unfinished line")
    result = await client.text_document_completion_async(types.CompletionParams(
        text_document=types.TextDocumentIdentifier(uri=uri), position=where(client, broken, "payout b", 8)))
    items = {item.label: item for item in (result.items if isinstance(result, types.CompletionList) else result)}
    for name, kind in [("bakery", "party"), ("dairy", "party"), ("loads", "attribute"), ("fuel", "param")]:
        assert items[name].detail == kind
    assert items["bakery"].kind == types.CompletionItemKind.Variable
    for word in ("require", "stable", "within", "contingency", "shapley", "cost"):
        assert items[word].kind == types.CompletionItemKind.Keyword
    assert items["sum"].kind == types.CompletionItemKind.Function
    close_doc(client, uri)


# ---------------------------------------------------------------- the command without pygls


async def test_serve_without_pygls_says_what_to_install():
    # `None` in sys.modules makes the import fail as if pygls were not installed
    code = ("import sys; sys.modules['pygls'] = None; sys.argv = ['pactlang', 'serve'];"
            "from pactlang.cli import main; main()")
    process = await asyncio.create_subprocess_exec(
        sys.executable, "-c", code, stdout=asyncio.subprocess.PIPE, stderr=asyncio.subprocess.PIPE)
    out, err = await asyncio.wait_for(process.communicate(), 60)
    assert process.returncode == 2
    assert "install pactlang[editor]" in err.decode()
    assert out == b""
