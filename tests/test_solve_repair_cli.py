"""`solve` and `repair` end to end, on agreements with published answers."""

from __future__ import annotations

import json
import re
import subprocess
import sys
from fractions import Fraction

from pactlang.check import check_model
from pactlang.load import load_text

ESTATE = """agreement "estate of 200"
shares value
party c1: claim 100
party c2: claim 200
party c3: claim 300
param estate = 200
worth S = max(0, estate - (600 - sum(claim in S)))
payout by equal split
require stable within 10
"""

RUNWAY = """agreement "runway"
shares cost
party a: need 8
party b: need 11
party c: need 13
party d: need 18
worth S = max(need in S)
payout by equal split
require stable
"""


def run(tmp_path, text, *args):
    path = tmp_path / "a.deal"
    path.write_text(text)
    return subprocess.run([sys.executable, "-m", "pactlang", *args, str(path)], capture_output=True, text=True)


def fr(d):
    return {k: Fraction(v) for k, v in d.items()}


def test_solve_json_bankruptcy(tmp_path):
    out = run(tmp_path, ESTATE, "solve", "--format", "json")
    assert out.returncode == 0, out.stdout + out.stderr
    doc = json.loads(out.stdout)
    assert Fraction(doc["worth_all"]) == 200
    alloc = doc["allocations"]
    # Aumann & Maschler (1985) [read]: estate 200 -> nucleolus (50, 75, 75)
    assert fr(alloc["nucleolus"]) == {"c1": 50, "c2": 75, "c3": 75}
    # references.md [derived]: Shapley (33 1/3, 83 1/3, 83 1/3)
    assert fr(alloc["shapley"]) == {"c1": Fraction(100, 3), "c2": Fraction(250, 3), "c3": Fraction(250, 3)}
    assert fr(alloc["equal split"]) == {p: Fraction(200, 3) for p in ("c1", "c2", "c3")}
    assert set(alloc) >= {"payout", "shapley", "nucleolus", "equal split", "separable costs remaining benefits"}
    # the certificate is balanced and proves the least-core value
    cover = {p: Fraction(0) for p in ("c1", "c2", "c3")}
    for item in doc["certificate"]:
        for p in item["coalition"]:
            cover[p] += Fraction(item["weight"])
    assert set(cover.values()) == {1}


def test_solve_runway_cost_game_text(tmp_path):
    out = run(tmp_path, RUNWAY, "solve")
    assert out.returncode == 0
    # Littlechild & Owen (1973) [read]: Shapley (2, 3, 4, 9); nucleolus
    # (3.25, 3.25, 3.25, 8.25) [derived, references.md]
    doc = json.loads(run(tmp_path, RUNWAY, "solve", "--format", "json").stdout)
    assert fr(doc["allocations"]["shapley"]) == {"a": 2, "b": 3, "c": 4, "d": 9}
    assert fr(doc["allocations"]["nucleolus"]) == {"a": Fraction("3.25"), "b": Fraction("3.25"),
                                                   "c": Fraction("3.25"), "d": Fraction("8.25")}
    assert "least-core value" in out.stdout and "do not replace legal" in out.stdout


def test_repair_lines_paste_back_and_hold(tmp_path):
    out = run(tmp_path, ESTATE, "repair")
    assert out.returncode == 0, out.stdout
    lines = [l.split("#")[0].strip() for l in out.stdout.splitlines() if l.startswith("payout ")]
    assert len(lines) == 3
    repaired = ESTATE.replace("payout by equal split", "\n".join(lines))
    (result,) = check_model(load_text(repaired).model)
    assert result.status == "holds" and result.worst_excess <= 10


def test_repair_below_least_core_cites_the_certificate(tmp_path):
    three = """agreement "three"
shares value
party a
party b
party c
worth S = if count(S) >= 2 then 1 else 0
payout by equal split
"""
    out = run(tmp_path, three, "repair", "--target", "0.3")
    # any two earn 1: least-core value 1/3 > 0.3 [practice]
    assert out.returncode == 1
    assert "1/3" in out.stdout and re.search(r"\{a, b\}", out.stdout)
    ok = run(tmp_path, three, "repair", "--target", "0.5", "--format", "json")
    doc = json.loads(ok.stdout)
    assert doc["feasible"] and doc["total_change"] == "0"


def test_solve_on_broken_file_is_input_error(tmp_path):
    out = run(tmp_path, "agreement \"x\"\nshares value\nparty a\n", "solve")
    assert out.returncode == 2 and ":" in out.stderr and "Traceback" not in out.stderr


def test_division_by_zero_is_an_input_error_in_solve_and_repair(tmp_path):
    text = ('agreement "x"\nshares value\nparty a\nparty b\n'
            "worth S = 1 / (count(S) - 1)\npayout by equal split\nrequire stable\n")
    for command in ("solve", "repair"):
        out = run(tmp_path, text, command)
        assert out.returncode == 2, out.stdout + out.stderr
        assert "a.deal:5:11: error: division by zero" in out.stderr and "Traceback" not in out.stderr
