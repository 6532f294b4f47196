"""Text and Markdown output for people: rounded amounts that keep a table's
numbers apart and never hide an excess's sign, percentages of worth,
`everyone except` coalitions, the per-party view, and plain sentences."""

from __future__ import annotations

import re
import time
from fractions import Fraction as F
from pathlib import Path

import pytest

from pactlang.load import load_file
from pactlang.render_markdown import render_markdown
from pactlang.render_text import render_text
from pactlang.report.amounts import Figures, decimals_apart, fixed, percent_text
from pactlang.report.parties import party_view
from pactlang.report.tables import RenderOptions, coalition_words
from pactlang.report.words import sentence
from pactlang.results import FAILS
from pactlang.run import check_file, check_files

ROOT = Path(__file__).resolve().parent.parent
AGREEMENTS = sorted(str(p) for p in (ROOT / "agreements").glob("*.deal"))
RAW_FRACTION = re.compile(r"(?<![\w.])-?\d+/\d+(?![\w.])")

# Three kilns: {a, b} earns 40 alone and is paid 15 + 15, so its excess is 10,
# 25% of its worth [derived by hand from the table below].
KILNS = """agreement "Three kilns"
shares value in kEUR

party a
party b
party c

worth {a} = 10
worth {b} = 10
worth {c} = 10
worth {a, b} = 40
worth {a, c} = 20
worth {b, c} = 20
worth all = 60

payout a = 15
payout b = 15
payout c = 30

require stable within 10%
require stable within 30%
"""


@pytest.fixture(scope="module")
def bundled():
    return check_files(AGREEMENTS)


@pytest.fixture
def kilns(tmp_path):
    path = tmp_path / "kilns.deal"
    path.write_text(KILNS)
    return check_file(str(path))


# ---- figures --------------------------------------------------------------------------

def test_fixed_rounds_half_away_from_zero_and_keeps_short_exact_decimals():
    assert fixed(F(11, 4), 4) == "2.75"  # exact and short: not padded to 2.7500
    assert fixed(F(8339), 0) == "8339"
    assert fixed(F(4994820, 599), 0) == "8339"  # 8338.6...
    assert fixed(F(5, 2), 0) == "3" and fixed(F(-5, 2), 0) == "-3"
    assert fixed(F(123456789, 10), 1) == "12,345,678.9"
    assert fixed(F(-1, 1000), 2) == "0.00"  # never `-0.00`


def test_decimals_grow_until_the_numbers_of_a_table_differ():
    # 60 and 60.00001 must not both print as 60 (a failing excess against its bound)
    assert decimals_apart([F(60), F(60) + F(1, 10**5), F(0)], 0) == 5
    figures = Figures.for_values([F(60), F(60) + F(1, 10**5), F(0)])
    assert figures.amount(F(60) + F(1, 10**5)) != figures.amount(F(60))
    assert Figures.for_values([F(80), F(392, 10), F(0)]).decimals == 2


def test_a_nonzero_excess_never_prints_as_zero():
    assert Figures(2).excess(F(1, 1000)) == "just above 0"
    assert Figures(2).excess(F(-1, 1000)) == "just below 0"
    assert Figures(2).excess(F(0)) == "0"
    assert Figures(0, exact=True).excess(F(1, 1000)) == "0.001"
    assert percent_text(F(1, 10**6), 1) == "just above 0%"
    assert percent_text(F(25), 1) == "25%"


def test_coalitions_are_written_the_shorter_way():
    parties = tuple(f"p{i}" for i in range(12))
    assert coalition_words(parties[:10], parties) == "everyone except {p10, p11}"
    assert coalition_words(parties[:2], parties) == "{p0, p1}"
    assert coalition_words(parties, parties) == "everyone"
    assert coalition_words(parties[:10], parties, full=True) == "{" + ", ".join(parties[:10]) + "}"
    # no member is hidden behind "... N more": two coalitions differing by one member read differently
    a = coalition_words(parties[:6] + parties[7:], parties)
    b = coalition_words(parties[:5] + parties[6:], parties)
    assert a == "everyone except {p6}" and b == "everyone except {p5}"


# ---- text output ----------------------------------------------------------------------

def test_no_raw_fraction_in_any_bundled_text_output_unless_exact(bundled):
    run, models = bundled
    text = render_text(run, models=models)
    assert not RAW_FRACTION.search(text), RAW_FRACTION.findall(text)[:5]
    assert "(~" not in text
    exact = render_text(run, models=models, options=RenderOptions(exact=True))
    assert "8289/280" in exact  # water main, baseline worst excess, exactly as JSON has it


def test_percentage_requirement_shows_each_excess_as_share_of_worth(kilns):
    report, model = kilns
    text = render_text_one(report, model)
    assert "worst excess 10 kEUR, up to 25% of a coalition's worth (allowed 10%)" in text
    assert re.search(r"40\s+30\s+10\s+25%\s+\{a, b\}", text)
    assert "worst excess 10 kEUR = 25% of that coalition's worth (allowed 30%)" in text


def render_text_one(report, model, options=RenderOptions()):
    from pactlang.results import RunReport

    return render_text(RunReport([report]), models={report.path: model}, options=options)


def test_per_party_view_shows_payout_alone_shapley_and_nucleolus(kilns):
    report, model = kilns
    failing = next(r for r in report.results if r.status == FAILS)
    view = party_view(model, failing)
    assert view.payout == [15, 15, 30] and view.alone == [10, 10, 10]
    assert [view.gain(i) for i in range(3)] == [5, 5, 20]
    # Shapley of a: (10 + 30 + 10 + 40) / 6 ... over the six orders = 70/3 [derived]
    assert view.shapley == [F(70, 3), F(70, 3), F(40, 3)]
    assert sum(view.nucleolus) == 60
    assert view.coalition == ("a", "b")
    text = render_text_one(report, model)
    assert re.search(r"a \*\s+15\s+10\s+5\s+23\.33", text)
    assert "receives (kEUR)" in text and "alone would earn" in text


def test_per_party_view_of_a_cost_agreement_says_pays(bundled):
    run, models = bundled
    f = next(f for f in run.files if f.path.endswith("water_main_ranges.deal"))
    text = "\n".join(render_text(type(run)([f]), models=models).splitlines())
    assert "pays (kEUR)" in text and "alone would pay" in text
    # the ranged view is taken where the worst counterexample was found
    assert "per party at pipe_price = 4" in text
    assert re.search(r"cedar \*\s+115\.7\s+110\s+-5\.7", text)  # cedar pays 115.7, 110 alone


def test_per_party_view_refuses_large_agreements_and_respects_the_time_limit(kilns):
    report, model = kilns
    failing = next(r for r in report.results if r.status == FAILS)
    small = party_view(model, failing, max_parties=2)
    assert small.shapley is None and "3 parties is above the 2" in small.notes[0]
    late = party_view(model, failing, deadline=time.monotonic() - 1)
    assert late.shapley is None and late.nucleolus is None
    assert any("time limit" in n for n in late.notes)


def test_digits_and_full_options(bundled):
    run, models = bundled
    f = next(f for f in run.files if f.path.endswith("water_main_ranges.deal"))
    text = render_text(type(run)([f]), models=models, options=RenderOptions(digits=4))
    assert "worst excess 29.6036 kEUR" in text  # 8289/280 = 29.60357...


def test_sentences_say_who_gains_what(bundled):
    run, _ = bundled
    f = next(f for f in run.files if f.path.endswith("cold_store_unstable.deal"))
    stable = next(r for r in f.results if r.requirement == "stable within 5")
    assert sentence(stable, f.parties, f.kind, f.unit) == (
        "In the baseline, two of the five parties (orchard_a and orchard_b) would earn 39.2 kEUR more on "
        "their own; the agreement allows 5 kEUR (four more groups in the table).")


def test_markdown_has_the_summary_tables_and_caution(bundled):
    run, models = bundled
    md = render_markdown(run, models)
    assert md.startswith(f"**pactlang check**: {len(run.files)} files:")
    assert "| stable within 5 (line 20) | baseline | \u274c fails | worst excess 39.2 kEUR (allowed 5 kEUR) |" in md
    assert "| 80 | 40.8 | 39.2 | {orchard_a, orchard_b} |" in md
    assert "| **orchard_a** | 20.4 | 30 | -9.6 | 44.25 | 41.67 |" in md
    assert "unknown party `lab_sooth`" in md
    assert md.rstrip().endswith("local rules._")
    assert not RAW_FRACTION.search(md)


def test_ranged_values_are_written_as_figures_not_fractions():
    from pactlang.report.tables import values_words

    assert values_words({"per_metre": F(7, 5), "need of sky_charter": F(15)}, RenderOptions()) == (
        "per_metre = 1.4, need of sky_charter = 15")
    assert values_words({"x": F(1, 3)}, RenderOptions()) == "x = 0.33"
    assert values_words({"x": F(1, 3)}, RenderOptions(exact=True)) == "x = 1/3"
