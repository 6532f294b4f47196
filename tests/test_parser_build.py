"""The parser: conflict-free under Lark's strict checks, and built safely at run time.

Run time must not need `interegular` (only strict mode does), and the built
parser is cached only in a private per-user folder, never in the shared temp
folder where another account could plant a pickle.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

from pactlang import parse

ROOT = Path(__file__).resolve().parent.parent


def test_grammar_has_no_conflicts_under_strict_mode() -> None:
    pytest.importorskip("interegular")  # in the test extra; strict mode needs it
    parse.build_parser(strict=True)


def _fresh_env(tmp_path: Path) -> dict[str, str]:
    env = dict(os.environ)
    env.update(TMPDIR=str(tmp_path / "tmp"), XDG_CACHE_HOME=str(tmp_path / "cache"), HOME=str(tmp_path / "home"))
    (tmp_path / "tmp").mkdir()
    (tmp_path / "home").mkdir()
    return env


def test_check_runs_without_interegular_and_with_empty_caches(tmp_path: Path) -> None:
    # Hide interegular as a fresh machine would, then run the README's first check.
    code = (
        "import sys; sys.modules['interegular'] = None\n"
        "from pactlang.cli import main\n"
        "sys.argv = ['pactlang', 'check', sys.argv[1]]\n"
        "main()\n"
    )
    done = subprocess.run(
        [sys.executable, "-c", code, str(ROOT / "agreements" / "channel_dredging.deal")],
        env=_fresh_env(tmp_path), capture_output=True, text=True, timeout=120,
    )
    assert "Traceback" not in done.stderr, done.stderr
    assert done.returncode == 0, done.stdout + done.stderr
    # The cache went to the private per-user folder, and nothing to the temp folder.
    folder = tmp_path / "cache" / "pactlang"
    assert folder.is_dir() and (folder.stat().st_mode & 0o777) == 0o700
    assert list(folder.glob("parser-*.cache"))
    assert list((tmp_path / "tmp").iterdir()) == []


def test_cache_is_ignored_when_others_could_have_written_it(tmp_path: Path, monkeypatch) -> None:
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
    monkeypatch.delenv("PACTLANG_NO_CACHE", raising=False)
    path = parse.cache_file()
    assert path is not None and path.parent == tmp_path / "pactlang"
    # A folder others may write to is not trusted.
    os.chmod(path.parent, 0o777)
    assert parse.cache_file() is None
    os.chmod(path.parent, 0o700)
    # A file others may write to is not loaded.
    path.write_bytes(b"planted")
    os.chmod(path, 0o666)
    assert parse.cache_file() is None
    os.chmod(path, 0o600)
    # A file of our own that is not a valid cache is dropped and the parser rebuilt.
    parse.parser.cache_clear()
    try:
        assert parse.parser().parse('agreement "x"\nshares value\nparty a\nparty b\nworth S = 1\npayout by equal split\n')
    finally:
        parse.parser.cache_clear()


def test_cache_owned_by_another_account_is_not_loaded(tmp_path: Path, monkeypatch) -> None:
    if os.geteuid() != 0:
        pytest.skip("changing a file's owner needs root (CI runs as root)")
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
    path = parse.cache_file()
    path.write_bytes(b"planted")
    os.chown(path, 65534, 65534)
    assert parse.cache_file() is None


def test_cache_can_be_turned_off(monkeypatch) -> None:
    monkeypatch.setenv("PACTLANG_NO_CACHE", "1")
    assert parse.cache_file() is None
