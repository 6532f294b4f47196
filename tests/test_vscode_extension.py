"""The packaged VS Code extension (.vsix) -> its contents, and its language client talking to `pactlang serve`.

`editors/vscode/build.sh` (run by `.ci/run`) installs the client from the npm
registry and packages `editors/vscode/dist/pactlang-deal.vsix`. These tests
read that package: its listing, its manifest, and, under node, the client
code unpacked from it starting the real server (with a stand-in for the
`vscode` module, see tests/js/vscode_client.js). Without node or the package
they skip with the reason on a developer machine and fail under CI.
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
VSCODE = ROOT / "editors" / "vscode"
VSIX = VSCODE / "dist" / "pactlang-deal.vsix"
CLIENT = Path(__file__).resolve().parent / "js" / "vscode_client.js"


def _unavailable(reason: str) -> None:
    """Skip on a developer machine; fail under CI, which must run every check."""
    if os.environ.get("CI", "").strip().lower() not in ("", "0", "false", "no"):
        pytest.fail(f"{reason} (CI must build it, see .ci/run; these tests never skip under CI)", pytrace=False)
    pytest.skip(reason)


@pytest.fixture(scope="module")
def vsix() -> zipfile.ZipFile:
    if not VSIX.is_file():
        _unavailable(f"{VSIX.relative_to(ROOT)} is not built: run editors/vscode/build.sh (needs npm)")
    with zipfile.ZipFile(VSIX) as package:
        yield package


def test_the_package_holds_manifest_entry_grammar_and_client(vsix: zipfile.ZipFile):
    names = set(vsix.namelist())
    manifest = json.loads(vsix.read("extension/package.json"))
    assert {"extension.vsixmanifest", "[Content_Types].xml", "extension/package.json"} <= names
    # the entry point and everything the manifest points at are in the package
    assert manifest["main"] == "./extension.js"
    assert {"extension/extension.js", "extension/server.js"} <= names
    (grammar,) = manifest["contributes"]["grammars"]
    (language,) = manifest["contributes"]["languages"]
    assert "extension/" + grammar["path"].removeprefix("./") in names
    assert "extension/" + language["configuration"].removeprefix("./") in names
    grammar_file = VSCODE / "syntaxes" / "deal.tmLanguage.json"
    assert vsix.read("extension/syntaxes/deal.tmLanguage.json") == grammar_file.read_bytes()
    assert manifest["activationEvents"] == ["onLanguage:" + language["id"]]
    # the language client travels with it; the packaging tool does not
    assert "extension/node_modules/vscode-languageclient/package.json" in names
    assert "extension/node_modules/vscode-jsonrpc/package.json" in names
    assert not any(n.startswith("extension/node_modules/@vscode/vsce/") for n in names)
    assert not any(n.startswith("extension/dist/") or n.endswith(".vsix") for n in names)
    settings = manifest["contributes"]["configuration"]["properties"]
    assert settings["pactlang.server.command"]["default"] == "pactlang"
    assert settings["pactlang.server.args"]["default"] == ["serve"]


def test_the_packaged_client_starts_the_server_and_receives_diagnostics(vsix: zipfile.ZipFile, tmp_path: Path):
    pytest.importorskip("pygls", reason="the server needs the editor extra (pygls 2)")
    node = shutil.which("node")
    if node is None:
        _unavailable("node is not installed: the extension's client cannot run")
    vsix.extractall(tmp_path / "unpacked")
    document = tmp_path / "van.deal"
    text = "party bakery: loads 2\nparam fuel = = 3\n"
    document.write_text(text, encoding="utf-8")
    run = subprocess.run([node, str(CLIENT), str(tmp_path / "unpacked" / "extension"), sys.executable, str(document)],
                         capture_output=True, text=True, timeout=120, cwd=ROOT)
    assert run.returncode == 0, run.stderr
    answer = json.loads(run.stdout.strip().splitlines()[-1])
    assert answer["serverName"] == "pactlang"
    capabilities = answer["capabilities"]
    for feature in ("hoverProvider", "definitionProvider", "documentFormattingProvider", "completionProvider"):
        assert capabilities.get(feature) not in (None, False), feature
    (diagnostic,) = answer["diagnostics"]
    # the second `=` of `param fuel = = 3`: line 1 (from 0), characters 13 to 14
    assert diagnostic["range"] == {"start": {"line": 1, "character": 13}, "end": {"line": 1, "character": 14}}
    assert diagnostic["code"] == "syntax" and diagnostic["source"] == "pactlang" and diagnostic["severity"] == 1
    assert diagnostic["message"].startswith("unexpected `=`")
    assert answer["hover"] is None  # answered: nothing to show on a text that does not parse


def test_the_extension_source_is_what_was_packaged(vsix: zipfile.ZipFile):
    """A stale package would test old code: build.sh must run after every change."""
    for name in ("extension.js", "server.js", "package.json"):
        assert vsix.read(f"extension/{name}") == (VSCODE / name).read_bytes(), f"rebuild: {name} changed"
