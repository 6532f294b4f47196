"""Completion that depends on the place: the grammar decides the keywords, the place the names."""

from __future__ import annotations

import pytest

from pactlang.editor.completion import Suggestion, statement_prefix, suggestions
from pactlang.editor.names import keywords

NAMES = {"bakery": "party", "dairy": "party", "florist": "party", "loads": "attribute", "ovens": "attribute",
         "fuel": "param"}
PARTIES = [("bakery", "party"), ("dairy", "party"), ("florist", "party")]
STATEMENTS = ["agreement", "contingency", "param", "party", "payout", "require", "shares", "worth"]
RULES = ["equal split", "nucleolus", "proportional to", "separable costs remaining benefits", "shapley"]

HEAD = 'agreement "Van"\nshares value in kEUR\nparty bakery: loads 2, ovens 1\nparam fuel = 3\n'


def offered(before_cursor: str, after_cursor: str = "") -> list[tuple[str, str]]:
    """Suggestions with the cursor at the end of `before_cursor`."""
    text = before_cursor + after_cursor
    lines = before_cursor.split("\n")
    found = suggestions(text, len(lines), len(lines[-1]) + 1, NAMES)
    assert found is not None, "the statement could not be read"
    return [(s.label, s.kind) for s in found]


def labels(before_cursor: str, kind: str | None = None) -> list[str]:
    return [label for label, k in offered(before_cursor) if kind is None or k == kind]


@pytest.mark.parametrize("before", [
    "worth {", "worth {bak", "worth {florist,\n  ", "contingency \"x\" { worth {", "cannot form {",
])
def test_inside_a_coalitions_braces_only_parties_not_yet_listed(before):
    if before.startswith("cannot") and "cannot" not in keywords():
        pytest.skip("`cannot form` is not in this grammar yet")
    expected = [p for p in PARTIES if p[0] + "," not in before]
    assert offered(HEAD + before) == expected


@pytest.mark.parametrize("function", ["sum", "max", "min"])
def test_after_an_aggregate_only_attributes(function):
    assert offered(HEAD + f"worth S = 2 * {function}(") == [("loads", "attribute"), ("ovens", "attribute")]
    assert offered(HEAD + f"worth S = 2 * {function}(ov") == [("loads", "attribute"), ("ovens", "attribute")]


@pytest.mark.parametrize("before", ["payout by ", "payout rest by ", "payout by shap"])
def test_after_by_the_rules_in_full(before):
    assert offered(HEAD + before) == [(rule, "keyword") for rule in RULES]


def test_after_proportional_to_only_attributes():
    assert offered(HEAD + "payout rest by proportional to ") == [("loads", "attribute"), ("ovens", "attribute")]


@pytest.mark.parametrize("before", ["", HEAD, HEAD + "\n# a note\n", HEAD + "pa", HEAD + "  wor"])
def test_at_the_start_of_a_line_the_statement_words(before):
    assert offered(before) == [(word, "keyword") for word in STATEMENTS]


def test_a_line_after_a_finished_contingency_block_starts_a_statement():
    assert labels(HEAD + 'contingency "x" {\n  without dairy\n}\n') == STATEMENTS


def test_inside_a_contingency_block_its_line_words_and_names():
    inside = HEAD + 'contingency "x" {\n  without dairy\n  '
    assert offered(inside) == [("loads", "attribute"), ("ovens", "attribute"), ("fuel", "param"),
                               ("without", "keyword"), ("worth", "keyword")]
    assert offered(HEAD + 'contingency "x" { without ') == PARTIES
    assert offered(HEAD + 'contingency "x" {\n  loads of ') == PARTIES


def test_requirements_and_other_places():
    assert labels(HEAD + "require ") == ["balanced budget", "individually rational", "stable"]
    assert labels(HEAD + "require stable ") == ["within"]
    assert offered('agreement "Van"\nshares ') == [("cost", "keyword"), ("value", "keyword")]
    assert offered(HEAD + "payout ") == PARTIES + [("by", "keyword"), ("rest by", "keyword")]
    assert offered(HEAD + "party crumb: ") == [("loads", "attribute"), ("ovens", "attribute")]
    assert offered(HEAD + "party ") == []  # a new name
    formula = offered(HEAD + "worth S = ")
    assert [s for s in formula if s[1] == "function"] == [(f, "function") for f in ("sum", "max", "min", "count")]
    assert ("fuel", "param") in formula and ("bakery", "party") in formula and ("if", "keyword") in formula


def test_text_after_the_cursor_and_strings_do_not_matter():
    assert offered(HEAD + 'payout by ', "shapley\nrequire stable\n") == [(rule, "keyword") for rule in RULES]
    assert statement_prefix('agreement "a { b"\npa', 2, 3) == ""


def test_a_statement_that_cannot_be_read_gives_none():
    assert suggestions(HEAD + "payout = = ", 5, 12, NAMES) is None


def test_suggestion_is_a_plain_value():
    assert Suggestion("bakery", "party") == Suggestion("bakery", "party")
