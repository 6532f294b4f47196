"""The checker against the brute-force oracle on random small agreements.

Both cost and value agreements, tables, formulas (with division by count(S)
to exercise the inexact path) and every kind of payout clause; also run with
tiny chunks so the chunked sweep is exercised on small games.
"""

from __future__ import annotations

from fractions import Fraction

from hypothesis import HealthCheck, given, settings

from oracle import oracle, specs
from pactlang.check import CheckOptions, check_model
from pactlang.load import load_text


def _compare(spec, low_bits=None):
    text = spec.text()
    model = load_text(text).model
    results = check_model(model, CheckOptions(top=5, low_bits=low_bits))
    expected = oracle(spec, top=5)
    assert len(results) == len(expected)
    for got, want in zip(results, expected):
        assert got.status == want["status"], (text, got)
        assert got.worst_excess == want["worst"], (text, got)
        got_cex = [(tuple(model.index(p) for p in c.coalition), c.excess) for c in got.counterexamples]
        assert got_cex == want["cex"], (text, got_cex, want["cex"])
        for c in got.counterexamples:
            mask = model.mask_of(c.coalition)
            assert c.worth == spec.worth(mask)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(specs())
def test_checker_equals_oracle(spec):
    _compare(spec)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(specs(min_n=4, max_n=7))
def test_checker_equals_oracle_in_small_chunks(spec):
    _compare(spec, low_bits=2)
