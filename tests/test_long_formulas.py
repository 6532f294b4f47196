"""Long and deep formulas, huge numbers and reserved words: each decided or refused in words, never a crash."""

from __future__ import annotations

import subprocess
import sys
from fractions import Fraction

import pytest

from pactlang import ast
from pactlang.check import check_model
from pactlang.diagnostics import AgreementError
from pactlang.format import format_text
from pactlang.lint import lint_model
from pactlang.load import load_text
from pactlang.parse import MAX_DIGITS, parse_text, reserved_words

HEAD = 'agreement "long"\nshares value\nparty a: w 1\nparty b: w 2\nparty c: w 3\nparty d: w 4\n'
PARTIES = "abcd"


def agreement(formula: str, tail: str = "payout by equal split\nrequire stable\n") -> str:
    return HEAD + f"worth S = {formula}\n" + tail


def outcome(text: str) -> list[tuple[str, Fraction | None, tuple]]:
    loaded = load_text(text)
    return [(r.status, r.worst_excess, tuple(c.coalition for c in r.counterexamples))
            for r in check_model(loaded.model)]


def refusal(text: str) -> tuple[str, int, int]:
    with pytest.raises(AgreementError) as info:
        load_text(text)
    d = info.value.diagnostics[0]
    return d.message, d.span.line, d.span.column


def cli(tmp_path, command: str, text: str):
    path = tmp_path / "x.deal"
    path.write_text(text)
    return subprocess.run([sys.executable, "-m", "pactlang", command, str(path)], capture_output=True, text=True)


# ------------------------------------------------------------------ long chains

def _membership_chain(terms: int) -> str:
    # term k adds (k % 5) to S's worth when party PARTIES[k % 4] is in S
    return " + ".join(f"{k % 5} * ({PARTIES[k % 4]} in S)" for k in range(terms)) + " - count(S)"


def _short_equivalent(terms: int) -> str:
    weights = [sum(k % 5 for k in range(terms) if k % 4 == i) for i in range(4)]
    return " + ".join(f"{w} * ({p} in S)" for w, p in zip(weights, PARTIES)) + " - count(S)"


@pytest.mark.parametrize("terms", [350, 490, 5000])
def test_long_sum_checks_like_its_short_equivalent(terms):
    long_text, short_text = agreement(_membership_chain(terms)), agreement(_short_equivalent(terms))
    assert outcome(long_text) == outcome(short_text)
    loaded = load_text(long_text)
    # a single node holds the whole chain: no stage sees a deep tree
    assert isinstance(loaded.model.formula.expr, ast.Chain)
    assert len(loaded.model.formula.expr.rest) == terms


@pytest.mark.parametrize("terms", [350, 5000])
def test_long_sum_formats_and_lints(terms):
    text = agreement(_membership_chain(terms))
    formatted = format_text(text)
    assert format_text(formatted) == formatted
    assert parse_text(formatted) == parse_text(text)
    loaded = load_text(text)
    lint_model(loaded.document, loaded.model)


def test_long_chains_of_every_operator_evaluate_exactly():
    n = 5000
    product = " * ".join(["count(S)"] + ["1"] * n)  # = count(S)
    quotient = " / ".join(["count(S)"] + ["1"] * n)
    both = " and ".join(["(a in S)"] * n)  # = a in S
    either = " or ".join(["(a in S)"] * n)
    differences = " - ".join(["count(S)"] + ["0"] * n)
    expected = outcome(agreement("count(S) + (a in S) + (a in S) + count(S) + count(S)"))
    got = outcome(agreement(f"({product}) + ({both}) + ({either}) + ({quotient}) + ({differences})"))
    assert got == expected


def test_long_chain_division_by_zero_is_located_at_its_operand():
    text = agreement("count(S) / 1 / 1 / (count(S) - count(S))")
    with pytest.raises(AgreementError) as info:
        check_model(load_text(text).model)
    span = info.value.diagnostics[0].span
    # from the chain's start to the divisor that is zero
    assert (span.line, span.column, span.end_column) == (7, 11, 50)


def test_bracketed_chains_print_back_with_their_brackets():
    text = agreement("count(S) - (1 - (2 - 3)) + ((4 + 5) + 6) * (7 / (8 * 9)) or (a in S) and ((b in S) or (c in S))")
    formatted = format_text(text)
    assert "worth S = count(S) - (1 - (2 - 3)) + (4 + 5 + 6) * (7 / (8 * 9)) or a in S and (b in S or c in S)" in formatted
    assert parse_text(formatted) == parse_text(text)


# ------------------------------------------------------------------ deep nesting

@pytest.mark.parametrize("formula, column", [
    ("-" * 5000 + "count(S)", 11 + ast.MAX_DEPTH),
    ("count(S) * (" + "not " * 5000 + "(a in S))", 23 + 4 * (ast.MAX_DEPTH - 1)),
    ("if (a in S) then 1 else " * 2000 + "0", None),
    ("count(S) - (" * 2000 + "1" + ")" * 2000, None),
])
def test_deep_nesting_is_refused_with_its_place(formula, column, tmp_path):
    message, line, col = refusal(agreement(formula))
    assert message == f"formula nested too deeply (more than {ast.MAX_DEPTH} levels)"
    assert line == 7
    if column is not None:
        assert col == column
    for command in ("check", "fmt", "lint", "solve", "repair"):
        run = cli(tmp_path, command, agreement(formula))
        assert run.returncode == 2, (command, run.stderr[-500:])
        assert "Traceback" not in run.stderr + run.stdout
        assert "nested too deeply" in run.stderr + run.stdout


def test_nesting_up_to_the_limit_is_decided():
    depth = ast.MAX_DEPTH - 3  # each `-` a level, then the call, then its argument
    text = agreement("-" * (depth - 1) + "-count(S)" if depth % 2 == 0 else "-" * depth + "(-count(S))")
    results = outcome(text)
    assert results == outcome(agreement("count(S)"))
    ifs = "if count(S) > 3 then 2 else " * 20 + "count(S)"
    assert outcome(agreement(ifs)) == outcome(agreement("if count(S) > 3 then 2 else count(S)"))
    formatted = format_text(agreement(ifs))
    assert parse_text(formatted) == parse_text(agreement(ifs))


def test_deep_parentheses_around_one_value_are_fine():
    text = agreement("(" * 5000 + "count(S)" + ")" * 5000)
    assert outcome(text) == outcome(agreement("count(S)"))
    assert "worth S = count(S)\n" in format_text(text)


# ------------------------------------------------------------------ huge numbers

def test_literal_past_the_float_range_is_decided_exactly():
    big = "9" * 309  # above the largest float (about 1.8e308)
    results = outcome(agreement(f"{big} * count(S)"))
    assert results == [("holds", Fraction(0), ())]
    # all four together are worth 2 less: each gets X - 1/2 and three walk away 3/2 better off
    results = outcome(agreement(f"{big} * count(S) - (if count(S) == 4 then 2 else 0)"))
    assert results[0][0] == "fails"
    assert results[0][1] == Fraction(3, 2)
    assert results[0][2][:4] == (("a", "b", "c"), ("a", "b", "d"), ("a", "c", "d"), ("b", "c", "d"))


def test_product_of_two_200_digit_numbers_is_decided_exactly(tmp_path):
    seven = "7" * 200
    text = HEAD.replace("shares value", "shares cost") + f"worth S = {seven} * {seven} * count(S) - 1\n" \
        "payout by equal split\nrequire stable\n"
    status, worst, coalitions = outcome(text)[0]
    # each party pays X - 1/4 and stands alone at X - 1: every single party is 3/4 over
    assert status == "fails" and worst == Fraction(3, 4)
    assert coalitions[:4] == (("a",), ("b",), ("c",), ("d",)) and () not in coalitions  # never the empty one
    run = cli(tmp_path, "check", text)
    assert run.returncode == 1 and "Traceback" not in run.stderr


def test_solvers_say_unknown_in_words_past_the_float_range(tmp_path):
    text = agreement("9" * 309 + " * count(S)")
    for command in ("solve", "repair"):
        run = cli(tmp_path, command, text)
        assert "Traceback" not in run.stderr + run.stdout
        assert run.returncode == 3, (command, run.stdout, run.stderr)
        assert "float range" in run.stdout + run.stderr


def test_number_too_long_is_refused_with_the_limit(tmp_path):
    text = HEAD.replace("party a: w 1", "party a: w " + "3" * 5000) + "worth S = sum(w in S)\npayout by equal split\n"
    message, line, col = refusal(text)
    assert (message, line, col) == (f"number with 5000 digits: at most {MAX_DIGITS} digits are allowed", 3, 12)
    run = cli(tmp_path, "check", text)
    assert run.returncode == 2 and "3:12" in run.stderr + run.stdout and "Traceback" not in run.stderr


def test_numbers_at_the_digit_limit_are_read_exactly():
    value = "1" * (MAX_DIGITS - 2) + ".5"
    doc = parse_text(f'agreement "x"\nparam big = {value}\n')
    assert doc.statements[1].value.value == Fraction(value)


# ------------------------------------------------------------------ reserved words

README_RESERVED = ("agreement shares party param worth all otherwise payout by rest contingency without of in "
                   "require stable within if then else and or not").split()
RULE_WORDS = "equal split proportional to shapley nucleolus separable costs remaining benefits".split()


def test_every_word_the_readme_lists_is_reserved():
    assert set(README_RESERVED + RULE_WORDS) <= reserved_words()
    assert "value" not in reserved_words() and "cost" not in reserved_words()


@pytest.mark.parametrize("word", README_RESERVED + RULE_WORDS)
@pytest.mark.parametrize("kind", ["party", "attribute", "param"])
def test_reserved_word_cannot_name(word, kind):
    base = 'agreement "x"\nshares cost\nparty a: w 1\nparty b: w 2\n'
    text, column = {
        "party": (base + f"party {word}\n", 7),
        "attribute": (base + f"party c: {word} 3\n", 10),
        "param": (base + f"param {word} = 3\n", 7),
    }[kind]
    message, line, col = refusal(text + "worth S = count(S)\npayout by equal split\n")
    assert message == f"`{word}` is a reserved word and cannot name a{'n' if kind == 'attribute' else ''} {kind}"
    assert (line, col) == (5, column)


def test_names_that_only_contain_reserved_words_are_fine():
    text = ('agreement "x"\nshares cost\nparty iffy: worthy 1\nparty allen: worthy 2\nparam within_ = 3\n'
            "worth S = within_ * sum(worthy in S)\npayout by equal split\n")
    assert load_text(text).model.parties == ("iffy", "allen")
