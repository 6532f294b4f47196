"""`parties from "FILE.csv"`: parties and exact attributes from a CSV file, with errors naming row and column."""

from __future__ import annotations

import subprocess
import sys
from fractions import Fraction
from pathlib import Path

import pytest

from pactlang.check import CheckOptions, check_model
from pactlang.diagnostics import AgreementError
from pactlang.format import format_text
from pactlang.lint import lint_model
from pactlang.load import load_file

ROOT = Path(__file__).resolve().parent.parent

HEAD = 'agreement "Cold chain"\nshares cost in EUR\n'
BODY = "worth S = 50 + 2 * sum(pallets in S)\npayout by proportional to pallets\nrequire stable\n"


def write(tmp_path: Path, csv: str | bytes, deal: str | None = None) -> Path:
    data = csv if isinstance(csv, bytes) else csv.encode("utf-8")
    (tmp_path / "members.csv").write_bytes(data)
    path = tmp_path / "pool.deal"
    path.write_text(deal or HEAD + 'parties from "members.csv"\n' + BODY, encoding="utf-8")
    return path


def test_rows_become_parties_with_exact_attributes(tmp_path: Path) -> None:
    path = write(tmp_path, "name,pallets,region\nfarm_a,12.5,1\nfarm_b,0.1,2\nfarm_c,7,3\n")
    model = load_file(str(path)).model
    assert model.parties == ("farm_a", "farm_b", "farm_c")
    assert model.attributes["pallets"] == {"farm_a": Fraction(25, 2), "farm_b": Fraction(1, 10), "farm_c": 7}
    inline = tmp_path / "inline.deal"
    inline.write_text(HEAD + "party farm_a: pallets 12.5, region 1\nparty farm_b: pallets 0.1, region 2\n"
                      "party farm_c: pallets 7, region 3\n" + BODY, encoding="utf-8")
    same = load_file(str(inline)).model
    strip = lambda rs: [(r.requirement, r.status, r.worst_excess, r.counterexamples) for r in rs]  # noqa: E731
    assert strip(check_model(model, CheckOptions())) == strip(check_model(same, CheckOptions()))


def test_path_is_relative_to_the_agreement_not_the_working_directory(tmp_path: Path) -> None:
    path = write(tmp_path, "name,pallets\nfarm_a,1\nfarm_b,2\n")
    done = subprocess.run([sys.executable, "-m", "pactlang", "check", str(path)], cwd=ROOT / "tests",
                          capture_output=True, text=True, timeout=120)
    assert done.returncode in (0, 1), done.stderr
    assert "farm_a" in done.stdout or "holds" in done.stdout


def test_byte_order_mark_and_blank_trailing_lines_are_accepted(tmp_path: Path) -> None:
    path = write(tmp_path, "\ufeffname,pallets\r\nfarm_a,1\r\nfarm_b,2\r\n\r\n".encode("utf-8"))
    assert load_file(str(path)).model.parties == ("farm_a", "farm_b")


@pytest.mark.parametrize("csv, words", [
    ('name,pallets\nfarm_a,"1,200"\nfarm_b,2\n', ["`members.csv` row 2, column `pallets`", "thousands separator"]),
    ("name,pallets\nfarm_a,\nfarm_b,2\n", ["`members.csv` row 2, column `pallets`", "empty"]),
    ("name,pallets\nfarm_a,12 EUR\nfarm_b,2\n", ["row 2, column `pallets`", "not a decimal number"]),
    ("party,pallets\nfarm_a,1\nfarm_b,2\n", ["row 1", "no `name` column"]),
    ("name,pallets\nfarm_a,1\nfarm_b\n", ["row 3", "1 cells where the header has 2"]),
    ("name,pallets\n3rd,1\nfarm_b,2\n", ["row 2, column `name`", "`3rd` cannot name a party"]),
    ("name,pallets,pallets\nfarm_a,1,1\n", ["row 1", "`pallets` appears twice"]),
    ("", ["is empty"]),
])
def test_errors_name_file_row_and_column(tmp_path: Path, csv: str, words: list[str]) -> None:
    path = write(tmp_path, csv)
    with pytest.raises(AgreementError) as caught:
        load_file(str(path))
    (diag, *_) = caught.value.diagnostics
    assert diag.code == "party-table" and diag.span.line == 3  # the `parties from` line
    for word in words:
        assert word in diag.message


def test_missing_file_and_bad_encoding_are_input_errors_on_the_command_line(tmp_path: Path) -> None:
    path = tmp_path / "pool.deal"
    path.write_text(HEAD + 'parties from "nowhere.csv"\n' + BODY, encoding="utf-8")
    done = subprocess.run([sys.executable, "-m", "pactlang", "check", str(path)], capture_output=True, text=True,
                          timeout=120)
    assert done.returncode == 2 and "Traceback" not in done.stderr
    assert f"{path}:3:1:" in done.stdout + done.stderr and "no such file `nowhere.csv`" in done.stdout + done.stderr
    write(tmp_path, b"name,pallets\nfarm_\xff,1\n")
    with pytest.raises(AgreementError, match="not valid UTF-8"):
        load_file(str(path))


def test_a_party_in_both_the_file_and_a_party_line_is_declared_twice(tmp_path: Path) -> None:
    deal = HEAD + 'party farm_a: pallets 3\nparties from "members.csv"\n' + BODY
    path = write(tmp_path, "name,pallets\nfarm_a,1\nfarm_b,2\n", deal)
    with pytest.raises(AgreementError) as caught:
        load_file(str(path))
    assert [d.code for d in caught.value.diagnostics] == ["duplicate-party"]


def test_lint_reports_unused_columns_and_fmt_keeps_the_statement(tmp_path: Path) -> None:
    path = write(tmp_path, "name,pallets,region\nfarm_a,1,1\nfarm_b,2,2\n")
    loaded = load_file(str(path))
    found = [(d.code, d.message) for d in lint_model(loaded.document, loaded.model)]
    assert ("unused-column", "column `region` of `members.csv` is never used") in found
    text = path.read_text(encoding="utf-8")
    formatted = format_text(text)
    assert 'parties from "members.csv"' in formatted
    assert format_text(formatted) == formatted


def test_the_bundled_freight_pool_reads_its_shippers_from_a_csv() -> None:
    model = load_file(str(ROOT / "agreements" / "freight_pool_large.deal")).model
    assert model.n == 60 and model.parties[0] == "shipper_00"
    assert model.attributes["tons"]["shipper_00"] == 17 and model.attributes["lanes"]["shipper_59"] == 1
