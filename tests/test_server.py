"""The language server driven by a real LSP client (pytest-lsp) over stdio.

One server process (`python -m pactlang serve`) serves every test of this
module; each test opens its own document. Diagnostics are awaited with a
deadline, never assumed after a fixed sleep.
"""

from __future__ import annotations

import asyncio
import json
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


async def completion_labels(client: LanguageClient, uri: str, position: types.Position) -> dict:
    result = await client.text_document_completion_async(types.CompletionParams(
        text_document=types.TextDocumentIdentifier(uri=uri), position=position))
    return {item.label: item for item in (result.items if isinstance(result, types.CompletionList) else result)}


async def test_completion_depends_on_the_place_even_while_broken(client: LanguageClient):
    uri = open_doc(client, "completion", VAN)
    broken = VAN + "payout b"
    change_doc(client, uri, broken, 2)
    await diagnostics(client, uri, "syntax", "the syntax error of the unfinished line")
    # after `payout`: a party (names of the last text that parsed) or `by` / `rest by`
    items = await completion_labels(client, uri, where(client, broken, "payout b", 8))
    assert sorted(items) == ["bakery", "by", "dairy", "florist", "rest by"]
    assert items["bakery"].kind == types.CompletionItemKind.Variable and items["bakery"].detail == "party"
    assert items["rest by"].kind == types.CompletionItemKind.Keyword
    # inside a coalition's braces: the parties not yet listed
    items = await completion_labels(client, uri, where(client, broken, "bakery, dairy} = 52", len("bakery, ")))
    assert sorted(items) == ["dairy", "florist"]
    # after `by`: the rules in full
    items = await completion_labels(client, uri, where(client, broken, "proportional to loads"))
    assert sorted(items) == ["equal split", "nucleolus", "proportional to", "separable costs remaining benefits",
                             "shapley"]
    # after `proportional to`: attributes
    items = await completion_labels(client, uri, where(client, broken, "loads\n\ncontingency"))
    assert sorted(items) == ["loads"] and items["loads"].kind == types.CompletionItemKind.Field
    # at the start of a line: the statement words
    items = await completion_labels(client, uri, where(client, broken, "require individually"))
    assert sorted(items) == ["agreement", "contingency", "param", "parties from", "party", "payout", "require",
                             "round payouts to", "shares", "worth"]
    # a formula: names, functions and expression words
    items = await completion_labels(client, uri, where(client, broken, "48 + fuel"))
    assert items["fuel"].detail == "param" and items["sum"].kind == types.CompletionItemKind.Function
    assert "if" in items and "require" not in items
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


# ---------------------------------------------------------------- bounded work, no stale results


def party_lines(buses: list[int]) -> str:
    return "".join(f"party op{i:02d}: buses {b}\n" for i, b in enumerate(buses))


def yard(buses: list[int], rule: str = "nucleolus") -> str:
    """24 bus operators share a yard; the nucleolus of 24 parties takes the
    payout rule seconds and hundreds of megabytes, so unfinished work shows."""
    return ('agreement "Shared yard"\nshares cost in kEUR\n\n' + party_lines(buses)
            + "\nworth S = 8 * max(buses in S) + 20 * count(S)\n\n"
            + f"payout by {rule}\n\nrequire stable\nrequire individually rational\n")


YARD_BUSES = [10 + (i * 7) % 31 for i in range(24)]


def process_tree(pid: int) -> list[int]:
    """`pid` and every process below it (Linux /proc)."""
    children: dict[int, list[int]] = {}
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            try:
                stat = (entry / "stat").read_text()
            except OSError:
                continue
            parent = int(stat[stat.rindex(")") + 2:].split()[1])
            children.setdefault(parent, []).append(int(entry.name))
    tree, todo = [], [pid]
    while todo:
        tree.append(todo.pop())
        todo.extend(children.get(tree[-1], []))
    return tree


def status_field(pid: int, name: str) -> int:
    """A number from /proc/PID/status (kB for memory), 0 once the process is gone."""
    try:
        for line in Path(f"/proc/{pid}/status").read_text().splitlines():
            if line.startswith(name + ":"):
                return int(line.split()[1])
    except OSError:
        pass
    return 0


def tree_rss_mb(pid: int) -> float:
    return sum(status_field(p, "VmRSS") for p in process_tree(pid)) / 1024


def alive(pid: int) -> bool:
    try:
        return "\nState:\tZ" not in Path(f"/proc/{pid}/status").read_text()
    except OSError:
        return False


@pytest_lsp.fixture(
    scope="module",
    config=ClientServerConfig(server_command=[sys.executable, "-m", "pactlang", "serve", "--time-limit", "20"],
                              client_factory=make_client),
)
async def heavy_client(lsp_client: LanguageClient):
    """A server of its own, so that its memory and processes are this test's alone."""
    result = await lsp_client.initialize_session(types.InitializeParams(
        capabilities=client_capabilities("neovim@v0.11.0"), root_uri=FOLDER.as_uri()))
    lsp_client.encoding = result.capabilities.position_encoding or types.PositionEncodingKind.Utf16
    yield
    await lsp_client.shutdown_session()


needs_proc = pytest.mark.skipif(not Path("/proc/self/status").exists(), reason="reads memory from Linux /proc")


@needs_proc
async def test_a_hundred_edits_with_hovers_keep_memory_flat_and_publish_only_the_last_version(
        heavy_client: LanguageClient):
    client = heavy_client
    server = client._server.pid
    uri = open_doc(client, "yard", yard(YARD_BUSES))
    hover_at = where(client, yard(YARD_BUSES), "op03")

    async def hover() -> str:
        return markdown(await client.text_document_hover_async(types.HoverParams(
            text_document=types.TextDocumentIdentifier(uri=uri), position=hover_at)))

    # warm up: the payout job starts the worker and loads the solvers
    assert "**party** `op03`" in await hover()
    await asyncio.sleep(1.0)
    before = tree_rss_mb(server)
    threads_before = status_field(server, "Threads")

    # edit-and-hover pairs as a user types: every edit supersedes the last
    # version, whose payout job (started by the hover) must stop, not pile up;
    # every twentieth pause lets the nucleolus get going before it is stopped
    hovers = []
    for version in range(2, 102):
        buses = list(YARD_BUSES)
        buses[version % 24] += version
        change_doc(client, uri, yard(buses), version)
        hovers.append(asyncio.ensure_future(hover()))
        await asyncio.sleep(1.5 if version % 20 == 0 else 0.05)
    answered = await asyncio.wait_for(asyncio.gather(*hovers), DEADLINE)
    assert all(text.startswith("**party** `op03`") for text in answered)
    peak = tree_rss_mb(server)
    threads = status_field(server, "Threads")
    assert len([p for p in process_tree(server) if alive(p)]) <= 2, "more than one worker process is running"

    # the last version pays by loads: cheap to check, and its verdict (`stable` fails) is its own
    final = 102
    change_doc(client, uri, yard(YARD_BUSES, "proportional to buses"), final)
    published = await until(lambda: next((p for p in client.published if p.uri == uri and p.version == final
                                          and any(d.code == "requirement-fails" for d in p.diagnostics)), None),
                            "the verdicts of the final version")
    after = tree_rss_mb(server)
    mine = [p.version for p in client.published if p.uri == uri]
    assert mine == sorted(mine), f"an older version was published after a newer one: {mine}"
    assert [p.version for p in client.published if p.uri == uri][-1] == final
    assert published.diagnostics[0].message.startswith("`stable` fails")
    print(f"server and worker RSS: {before:.0f} MB before, {peak:.0f} MB after 100 edits, {after:.0f} MB "
          f"after the final check; server threads {threads_before} -> {threads}")
    # the old server ran every payout in a thread of its own: gigabytes and a thread per hover
    assert peak < before + 250 and after < before + 250
    # a small pool may grow (asyncio's default executor holds up to cpu + 4 threads),
    # but not with the number of hovers: the old server's 100 hovers meant 100 threads
    assert threads <= threads_before + 8
    close_doc(client, uri)


@needs_proc
async def test_closing_a_document_stops_its_running_work(heavy_client: LanguageClient):
    client = heavy_client
    server = client._server.pid
    text = yard([b + 1 for b in YARD_BUSES])
    uri = open_doc(client, "yard_closed", text)
    hover = markdown(await client.text_document_hover_async(types.HoverParams(
        text_document=types.TextDocumentIdentifier(uri=uri), position=where(client, text, "op05"))))
    assert "still being computed" in hover  # the nucleolus of 24 parties takes longer than a hover waits
    workers = [p for p in process_tree(server) if p != server and alive(p)]
    assert len(workers) == 1, "the payouts should run in one worker process"
    close_doc(client, uri)
    await until(lambda: not alive(workers[0]), "the worker to be stopped after didClose")


# ---------------------------------------------------------------- a crash in the analysis

CRASHING_SERVER = """
import sys
import pactlang.server as server
real = server.analyse
def analyse(uri, version, text, path):
    if "crash here" in text:
        raise RecursionError("maximum recursion depth exceeded")
    return real(uri, version, text, path)
server.analyse = analyse
sys.argv = ["pactlang", "serve", "--check-delay", "0"]
from pactlang.cli import main
main()
"""


@pytest_lsp.fixture(
    scope="module",
    config=ClientServerConfig(server_command=[sys.executable, "-c", CRASHING_SERVER], client_factory=make_client),
)
async def crashing_client(lsp_client: LanguageClient):
    """A server whose analysis crashes on any text with `crash here` in it."""
    result = await lsp_client.initialize_session(types.InitializeParams(
        capabilities=client_capabilities("neovim@v0.11.0"), root_uri=FOLDER.as_uri()))
    lsp_client.encoding = result.capabilities.position_encoding or types.PositionEncodingKind.Utf16
    yield
    await lsp_client.shutdown_session()


async def test_a_crash_in_the_analysis_replaces_the_old_versions_results(crashing_client: LanguageClient):
    client = crashing_client
    uri = open_doc(client, "crash", VAN)
    await diagnostics(client, uri, "requirement-fails", "the failing requirement")
    crashed = VAN + "# crash here\n"
    change_doc(client, uri, crashed, 2)
    published = await until(lambda: next((p for p in client.published if p.uri == uri and p.version == 2), None),
                            "the diagnostics of the version that crashed")
    assert [(d.code, d.severity) for d in published.diagnostics] == [("internal", types.DiagnosticSeverity.Error)]
    assert published.diagnostics[0].message.startswith("the analysis stopped with an internal error (RecursionError")
    # no hover on text that is gone
    hover = await client.text_document_hover_async(types.HoverParams(
        text_document=types.TextDocumentIdentifier(uri=uri), position=where(client, crashed, "bakery")))
    assert hover is None
    await asyncio.sleep(0.5)  # a late verdict of version 1 would arrive now
    assert [p.version for p in client.published if p.uri == uri][-1] == 2
    close_doc(client, uri)


# ---------------------------------------------------------------- invalid requests


class RawClient:
    """A bare JSON-RPC client that sends what a typed client cannot: malformed parameters."""

    def __init__(self, process: asyncio.subprocess.Process):
        self.process, self.next_id = process, 0

    def send(self, message: dict) -> None:
        body = json.dumps({"jsonrpc": "2.0", **message}).encode()
        self.process.stdin.write(b"Content-Length: %d\r\n\r\n" % len(body) + body)

    async def receive(self) -> dict:
        length = 0
        while (line := await self.process.stdout.readline()) != b"\r\n":
            if line.lower().startswith(b"content-length:"):
                length = int(line.split(b":")[1])
        return json.loads(await self.process.stdout.readexactly(length))

    async def request(self, method: str, params) -> dict:
        self.next_id += 1
        self.send({"id": self.next_id, "method": method, **({} if params is None else {"params": params})})
        while (answer := await self.receive()).get("id") != self.next_id:
            pass
        return answer


INVALID_REQUESTS = [
    ("textDocument/hover", {"textDocument": {"uri": "file:///x.deal"}}, "invalid parameters for `textDocument/hover`"),
    ("textDocument/hover", None, "invalid parameters for `textDocument/hover`"),
    ("textDocument/completion", {"textDocument": {"uri": "file:///x.deal"}, "position": {"line": -1, "character": 0}},
     "invalid parameters for `textDocument/completion`"),
    ("textDocument/definition", {"textDocument": {"uri": "file:///no/such/folder/x.deal"},
                                 "position": {"line": 0, "character": 0}},
     "the document `file:///no/such/folder/x.deal` is not open and cannot be read: No such file or directory"),
    ("textDocument/formatting", {"textDocument": {"uri": "file:///no/such/folder/x.deal"},
                                 "options": {"tabSize": 4, "insertSpaces": True}},
     "the document `file:///no/such/folder/x.deal` is not open and cannot be read: No such file or directory"),
]


async def test_requests_with_invalid_parameters_get_an_error_answer():
    process = await asyncio.create_subprocess_exec(
        sys.executable, "-m", "pactlang", "serve", stdin=asyncio.subprocess.PIPE, stdout=asyncio.subprocess.PIPE,
        stderr=asyncio.subprocess.DEVNULL)
    raw = RawClient(process)
    try:
        await asyncio.wait_for(raw.request("initialize", {"processId": None, "rootUri": None, "capabilities": {}}),
                               DEADLINE)
        raw.send({"method": "initialized", "params": {}})
        for method, params, message in INVALID_REQUESTS:
            answer = await asyncio.wait_for(raw.request(method, params), DEADLINE)
            assert answer.get("error") == {"code": -32602, "message": message}, (method, params)
        # the server still answers a good request afterwards
        answer = await asyncio.wait_for(raw.request("shutdown", None), DEADLINE)
        assert answer == {"jsonrpc": "2.0", "id": raw.next_id, "result": None}
        raw.send({"method": "exit"})
        await asyncio.wait_for(process.wait(), DEADLINE)
    finally:
        if process.returncode is None:
            process.kill()
            await process.wait()
