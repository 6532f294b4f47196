"""The hooks in .pre-commit-hooks.yaml, run by the real pre-commit framework.

The project is copied into a temporary git repository and committed (the
framework installs a hook repository from a commit), then used from a second
temporary repository holding agreements: once through `pre-commit try-repo`
and once through a `.pre-commit-config.yaml` as a team would write it. Each
builds the hook environment from PyPI, so this is slow and needs the network.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from pactlang.format import format_text

pytestmark = pytest.mark.slow

ROOT = Path(__file__).resolve().parent.parent
IGNORE = shutil.ignore_patterns(".git", ".hypothesis", ".pytest_cache", "__pycache__", "node_modules", ".venv",
                                ".benchmarks", "build", "dist", "*.egg-info")

STABLE_MESSY = """agreement "Two growers share a cold store"
shares cost in kEUR
party orchard:pallets 400
party berries:pallets 120
worth S=0.1*sum(pallets in S)
payout by proportional to pallets
require stable
"""

UNSTABLE = format_text("""agreement "An unstable split"
shares value
party a
party b
worth {a} = 8
worth {b} = 1
worth all = 10
payout by equal split
require stable
""")


def git(*args: str, cwd: Path) -> str:
    env = dict(os.environ, GIT_AUTHOR_NAME="t", GIT_AUTHOR_EMAIL="t@example.invalid",
               GIT_COMMITTER_NAME="t", GIT_COMMITTER_EMAIL="t@example.invalid")
    return subprocess.run(["git", *args], cwd=cwd, check=True, capture_output=True, text=True, env=env).stdout


def pre_commit(*args: str, cwd: Path, home: Path) -> subprocess.CompletedProcess:
    env = dict(os.environ, PRE_COMMIT_HOME=str(home), NO_COLOR="1")
    env.pop("PYTHONPATH", None)  # the hooks must run from their own installed environment
    return subprocess.run([sys.executable, "-m", "pre_commit", *args, "--color", "never"], cwd=cwd,
                          capture_output=True, text=True, env=env, timeout=900)


@pytest.fixture(scope="module")
def hook_repo(tmp_path_factory) -> tuple[Path, str]:
    if shutil.which("git") is None:
        pytest.skip("git is not installed")
    pytest.importorskip("pre_commit")
    repo = tmp_path_factory.mktemp("hooks") / "pactlang"
    shutil.copytree(ROOT, repo, ignore=IGNORE)
    git("init", "-q", cwd=repo)
    git("add", "-A", cwd=repo)
    git("commit", "-q", "-m", "snapshot", cwd=repo)
    return repo, git("rev-parse", "HEAD", cwd=repo).strip()


@pytest.fixture
def work(tmp_path: Path) -> Path:
    git("init", "-q", cwd=tmp_path)
    (tmp_path / "cold_store.deal").write_text(STABLE_MESSY)
    (tmp_path / "unstable.deal").write_text(UNSTABLE)
    git("add", "-A", cwd=tmp_path)
    return tmp_path


def test_try_repo_runs_both_hooks(hook_repo, work: Path, tmp_path_factory) -> None:
    repo, _ = hook_repo
    result = pre_commit("try-repo", str(repo), "--files", "cold_store.deal", "unstable.deal",
                        cwd=work, home=tmp_path_factory.mktemp("pc-home"))
    out = result.stdout + result.stderr
    assert result.returncode == 1, out
    assert "pactlang fmt" in out and "files were modified by this hook" in out
    assert "cold_store.deal: rewritten in canonical layout" in out
    assert (work / "cold_store.deal").read_text() == format_text(STABLE_MESSY)
    assert (work / "unstable.deal").read_text() == UNSTABLE  # already canonical: untouched
    check_part = out[out.index("pactlang check"):]
    assert "Failed" in check_part.splitlines()[0]
    assert "fails" in check_part  # `require stable` fails for the unstable split


def test_config_as_a_team_writes_it(hook_repo, work: Path, tmp_path_factory) -> None:
    repo, rev = hook_repo
    (work / ".pre-commit-config.yaml").write_text(
        f"repos:\n  - repo: {repo}\n    rev: {rev}\n    hooks:\n      - id: pactlang-fmt\n      - id: pactlang-check\n")
    (work / "cold_store.deal").write_text(format_text(STABLE_MESSY))
    home = tmp_path_factory.mktemp("pc-home")
    clean = pre_commit("run", "--files", "cold_store.deal", cwd=work, home=home)
    assert clean.returncode == 0, clean.stdout + clean.stderr
    assert clean.stdout.count("Passed") == 2
    blocked = pre_commit("run", "--files", "unstable.deal", cwd=work, home=home)
    assert blocked.returncode == 1
    assert "pactlang check" in blocked.stdout and "Failed" in blocked.stdout
