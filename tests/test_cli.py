"""The command line contract of language.md: exit codes, JSON shape, several files."""

from __future__ import annotations

import json
import subprocess
import sys
from fractions import Fraction
from pathlib import Path

import pytest

HOLDS = """agreement "two"
shares value
party a
party b
worth {a} = 1
worth {b} = 1
worth all = 4
payout by equal split
require stable
"""


def run(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "pactlang", *args], capture_output=True, text=True, cwd=cwd)


@pytest.fixture
def files(tmp_path: Path):
    (tmp_path / "ok.deal").write_text(HOLDS)
    (tmp_path / "bad.deal").write_text(HOLDS.replace("payout by equal split", "payout a = 4\npayout b = 0"))
    (tmp_path / "broken.deal").write_text(HOLDS.replace("party b", "party b:"))
    (tmp_path / "unknown.deal").write_text(HOLDS.replace("payout by equal split", "payout by equal split\n"
                                                          "contingency \"later\" { without a }"))
    return tmp_path


def test_exit_codes(files):
    assert run("check", str(files / "ok.deal")).returncode == 0
    assert run("check", str(files / "bad.deal")).returncode == 1
    assert run("check", str(files / "ok.deal"), str(files / "bad.deal")).returncode == 1
    broken = run("check", str(files / "broken.deal"))
    assert broken.returncode == 2
    assert "Traceback" not in broken.stderr + broken.stdout
    # `party b:` with nothing after the colon: the line ends too early
    assert "broken.deal:4:9: error: unexpected end of line" in broken.stderr  # diagnostics on stderr
    assert run("check", str(files / "missing.deal")).returncode == 2


def test_json_document(files):
    out = run("check", str(files / "bad.deal"), str(files / "ok.deal"), "--format", "json", "--top", "1")
    doc = json.loads(out.stdout)
    assert [f["agreement"] for f in doc["files"]] == ["two", "two"]
    (result,) = doc["files"][0]["results"]
    assert result["status"] == "fails" and result["requirement"] == "stable" and result["line"] == 10
    assert result["contingency"] is None and result["method"]
    # b alone earns 1 and receives 0 [derived]
    assert Fraction(result["worst_excess"]) == 1
    assert len(result["counterexamples"]) == 1
    cex = result["counterexamples"][0]
    assert cex["coalition"] == ["b"] and Fraction(cex["excess"]) == 1 and Fraction(cex["worth"]) == 1
    assert Fraction(cex["payout"]) == 0 and cex["parameters"] == {}
    assert doc["files"][1]["results"][0]["status"] == "holds"


def test_text_report_names_the_worst_coalition(files):
    out = run("check", str(files / "bad.deal"))
    assert "fails" in out.stdout and "{b}" in out.stdout
    assert "do not replace legal" in out.stdout


def test_relative_paths_in_output(files):
    out = run("check", "bad.deal", cwd=files)
    assert out.stdout.startswith("bad.deal:")


def test_large_coalitions_are_shortened_in_text_only():
    from pactlang.render_text import coalition_text

    parties = tuple(f"p{i}" for i in range(12))
    assert coalition_text(("p1", "p2"), parties) == "{p1, p2}"
    assert coalition_text(parties[:10], parties) == "all except {p10, p11}"
    assert coalition_text(parties[:7], parties) == "{p0, p1, p2, p3, ... 3 more}"
    assert coalition_text(parties, parties) == "all"
