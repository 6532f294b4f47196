"""`round payouts to STEP by largest remainder`: payouts rounded by Hamilton's method, checks on the rounded amounts."""

from __future__ import annotations

from fractions import Fraction as F

from pactlang.check import CheckOptions, check_model
from pactlang.load import load_text
from pactlang.worths import Worths, largest_remainder, payout


def test_largest_remainder_keeps_the_total_and_breaks_ties_by_party_order() -> None:
    # [practice] Hamilton's method: round every quota down, hand the leftover
    # units to the largest remainders. 100 / 3 each, in cents: one cent left,
    # three equal remainders, so the first party declared gets it.
    third = F(100, 3)
    assert largest_remainder([third] * 3, F(1, 100)) == [F("33.34"), F("33.33"), F("33.33")]
    # Quotas 10.4, 20.35, 30.25 (total 61) to whole units: floors 10, 20, 30,
    # one unit left, largest remainder 0.4 -> the first party [derived].
    assert largest_remainder([F("10.4"), F("20.35"), F("30.25")], F(1)) == [11, 20, 30]
    # Negative amounts (a party paid to take part) round down too.
    assert largest_remainder([F("-0.4"), F("10.4")], F(1)) == [0, 10]


def test_amounts_already_on_the_step_are_unchanged() -> None:
    amounts = [F("12.25"), F("7.75"), F(-3)]
    assert largest_remainder(amounts, F("0.25")) == amounts


AGREEMENT = """\
agreement "Shared licence income"
shares value in EUR
party ash
party birch
party cedar
worth {ash} = 30
worth {birch} = 33.333
worth {cedar} = 30
worth S = 40 * count(S)
worth all = 100
payout by equal split
{rounding}
require individually rational
require balanced budget
"""


def results(rounding: str) -> dict:
    model = load_text(AGREEMENT.replace("{rounding}", rounding)).model
    return {r.requirement: r for r in check_model(model, CheckOptions())}


def test_a_requirement_that_holds_only_before_rounding_is_reported() -> None:
    exact = results("")
    assert exact["individually rational"].status == "holds"
    rounded = results("round payouts to 0.01 by largest remainder")
    # ash gets the leftover cent (first declared); birch gets 33.33 < 33.333.
    model = load_text(AGREEMENT.replace("{rounding}", "round payouts to 0.01 by largest remainder")).model
    assert payout(Worths(model)) == [F("33.34"), F("33.33"), F("33.33")]
    rational = rounded["individually rational"]
    assert rational.status == "fails" and rational.worst_excess == F("0.003")
    assert [c.coalition for c in rational.counterexamples] == [("birch",)]
    assert rounded["balanced budget"].status == "holds"


def test_a_total_off_the_step_breaks_the_budget_by_less_than_a_step() -> None:
    text = AGREEMENT.replace("worth all = 100", "worth all = 100.005").replace(
        "{rounding}", "round payouts to 0.01 by largest remainder")
    by = {r.requirement: r for r in check_model(load_text(text).model, CheckOptions())}
    assert by["balanced budget"].status == "fails"
    assert abs(by["balanced budget"].worst_excess) < F("0.01")


def test_rounding_is_applied_again_when_a_party_withdraws() -> None:
    text = AGREEMENT.replace("{rounding}", "round payouts to 0.01 by largest remainder").replace(
        "require individually rational", 'contingency "cedar leaves" { without cedar }\nrequire individually rational')
    by = {(r.requirement, r.contingency): r for r in check_model(load_text(text).model, CheckOptions())}
    # {ash, birch} is worth 80, split 40 / 40: no rounding needed, both rational.
    assert by[("individually rational", "cedar leaves")].status == "holds"
    assert by[("balanced budget", "cedar leaves")].status == "holds"


def test_ranged_contingencies_with_rounding_are_unknown_with_the_reason() -> None:
    text = AGREEMENT.replace("{rounding}", "round payouts to 0.01 by largest remainder\nparam grant = 0").replace(
        "worth all = 100", "worth all = 100 + grant").replace(
        "require individually rational", 'contingency "grant" { grant in 0 .. 1 }\nrequire individually rational')
    ranged = [r for r in check_model(load_text(text).model, CheckOptions()) if r.contingency == "grant"]
    assert ranged and all(r.status == "unknown" and "rounded" in r.reason for r in ranged)


def test_two_rounding_lines_and_a_zero_step_are_errors() -> None:
    import pytest

    from pactlang.diagnostics import AgreementError

    for extra, code in (("round payouts to 0.01 by largest remainder\nround payouts to 1 by largest remainder",
                         "duplicate-rounding"), ("round payouts to 0 by largest remainder", "rounding-step")):
        with pytest.raises(AgreementError) as caught:
            load_text(AGREEMENT.replace("{rounding}", extra))
        assert code in [d.code for d in caught.value.diagnostics]
