"""`pactlang diff OLD NEW`: verdicts and payouts compared across versions, files or `REV:PATH`.

Exercised in a temporary git repository with two commits: a payout change that
breaks a requirement, a renamed contingency, a removed party, and a file that
did not exist in the older commit.
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
from fractions import Fraction
from pathlib import Path

import pytest

pytestmark = pytest.mark.skipif(shutil.which("git") is None, reason="git is not installed")

# Three towns share a pumping station (invented). Costs alone 60, 50, 40; any
# two 80; all three 105. Equal split pays 35 each: every pair pays 70 <= 80.
OLD = """\
agreement "Pumping station"
shares cost in kEUR
party aston: people 3
party brook: people 2
party colby: people 1
party delft: people 1
worth {aston} = 60
worth {brook} = 50
worth {colby} = 40
worth {delft} = 40
worth S = 30 * count(S) + 20
worth all = 125
payout by equal split
contingency "colby leaves" { without colby }
require stable
"""

# Newer: delft is gone, aston pays more of a fixed share, the contingency is renamed.
NEW = """\
agreement "Pumping station"
shares cost in kEUR
party aston: people 3
party brook: people 2
party colby: people 1
worth {aston} = 60
worth {brook} = 50
worth {colby} = 40
worth S = 30 * count(S) + 20
worth all = 105
payout aston = 20
payout rest by equal split
contingency "without colby" { without colby }
require stable
require individually rational
"""


def _git(repo: Path, *args: str) -> None:
    env = dict(os.environ, GIT_AUTHOR_NAME="t", GIT_AUTHOR_EMAIL="t@example.org",
               GIT_COMMITTER_NAME="t", GIT_COMMITTER_EMAIL="t@example.org")
    subprocess.run(["git", *args], cwd=repo, check=True, capture_output=True, env=env)


@pytest.fixture()
def repo(tmp_path: Path) -> Path:
    _git(tmp_path, "init", "-q")
    (tmp_path / "pump.deal").write_text(OLD, encoding="utf-8")
    _git(tmp_path, "add", ".")
    _git(tmp_path, "commit", "-qm", "first")
    (tmp_path / "pump.deal").write_text(NEW, encoding="utf-8")
    (tmp_path / "extra.deal").write_text(NEW, encoding="utf-8")
    _git(tmp_path, "add", ".")
    _git(tmp_path, "commit", "-qm", "second")
    return tmp_path


def run_diff(repo: Path, *args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "pactlang", "diff", *args], cwd=repo,
                          capture_output=True, text=True, timeout=120)


def test_json_matches_requirements_by_text_and_contingencies_by_lines(repo: Path) -> None:
    done = run_diff(repo, "HEAD~1:pump.deal", "HEAD:pump.deal", "--format", "json")
    assert "Traceback" not in done.stderr
    doc = json.loads(done.stdout)
    changes = {(r["requirement"], r["contingency"]): r for r in doc["requirements"]}
    # Baseline core: old equal split of 125 (31.25 each) holds; aston's 20 leaves
    # brook+colby paying 85 > 80 for the pair, so it now fails.
    base = changes[("stable", None)]
    assert base["change"] == "newly fails"
    assert base["before"]["status"] == "holds" and base["after"]["status"] == "fails"
    assert Fraction(base["after"]["worst_excess"]) == 5  # 42.5 + 42.5 - 80
    assert ["brook", "colby"] in base["newly_failing"]
    # The contingency kept its line and changed its name: matched as renamed.
    renamed = changes[("stable", "without colby")]
    assert renamed["renamed_from"] == "colby leaves"
    assert renamed["before"] is not None and renamed["after"] is not None
    # A requirement added in NEW.
    assert changes[("individually rational", None)]["change"] == "new"
    assert changes[("individually rational", None)]["before"] is None
    # Payouts: delft removed, aston from 31.25 to 20.
    pay = {p["party"]: p for p in doc["payouts"]}
    assert pay["delft"]["after"] is None and Fraction(pay["delft"]["before"]) == Fraction(125, 4)
    assert Fraction(pay["aston"]["change"]) == 20 - Fraction(125, 4)
    assert done.returncode == 1  # something that held now fails


def test_file_absent_in_old_revision_counts_as_new(repo: Path) -> None:
    done = run_diff(repo, "HEAD~1:extra.deal", "extra.deal", "--format", "json")
    doc = json.loads(done.stdout)
    assert doc["old"]["exists"] is False
    assert {r["change"] for r in doc["requirements"]} == {"new"}
    assert done.returncode == 0  # nothing held before, so nothing newly fails


def test_text_and_markdown_name_the_change(repo: Path) -> None:
    text = run_diff(repo, "HEAD~1:pump.deal", "pump.deal")
    assert "newly fails" in text.stdout and "{brook, colby}" in text.stdout
    assert 'renamed from "colby leaves"' in text.stdout
    assert "delft" in text.stdout and "removed" in text.stdout
    assert "do not replace legal" in text.stdout
    md = run_diff(repo, "HEAD~1:pump.deal", "pump.deal", "--format", "markdown")
    assert md.stdout.startswith("### Pumping station")
    assert "| newly fails | stable | baseline |" in md.stdout
    assert md.returncode == 1


def test_identical_versions_exit_zero(repo: Path) -> None:
    done = run_diff(repo, "HEAD:pump.deal", "pump.deal")
    assert done.returncode == 0
    assert "unchanged" in done.stdout


def test_bad_revision_and_bad_input_exit_two(repo: Path) -> None:
    done = run_diff(repo, "nosuchrev:pump.deal", "pump.deal")
    assert done.returncode == 2 and "Traceback" not in done.stderr
    assert "nosuchrev:pump.deal:1:1:" in done.stderr
    (repo / "broken.deal").write_text('agreement "x"\nshares cost\nparty a\nparty a\n', encoding="utf-8")
    done = run_diff(repo, "pump.deal", "broken.deal")
    assert done.returncode == 2 and "broken.deal:4:" in done.stderr
    done = run_diff(repo, "pump.deal", "missing.deal")
    assert done.returncode == 2 and "missing.deal:1:1: error: no such file" in done.stderr


def test_a_revision_is_decoded_like_a_file(repo: Path) -> None:
    # A BOM and CR LF line ends, as some editors save them, in the committed version.
    (repo / "pump.deal").write_bytes(("\ufeff" + NEW).replace("\n", "\r\n").encode("utf-8"))
    _git(repo, "commit", "-qam", "windows line ends")
    done = run_diff(repo, "HEAD:pump.deal", "HEAD~1:pump.deal", "--format", "json")
    assert done.returncode == 0, done.stderr
    assert {r["change"] for r in json.loads(done.stdout)["requirements"]} == {"unchanged"}
