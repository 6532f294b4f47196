"""Exact Fractions -> text: exact decimals where they terminate, else p/q."""

from __future__ import annotations

from fractions import Fraction


def exact_str(value: Fraction) -> str:
    """A string `fractions.Fraction(...)` reads back exactly: `12.5`, `-4`, `1/3`."""
    value = Fraction(value)
    den = value.denominator
    twos = fives = 0
    while den % 2 == 0:
        den //= 2
        twos += 1
    while den % 5 == 0:
        den //= 5
        fives += 1
    if den != 1:
        return f"{value.numerator}/{value.denominator}"
    digits = max(twos, fives)
    if digits == 0:
        return str(value.numerator)
    scaled = value * 10**digits
    sign = "-" if scaled < 0 else ""
    text = str(abs(scaled.numerator)).rjust(digits + 1, "0")
    return f"{sign}{text[:-digits]}.{text[-digits:]}"


def human(value: Fraction) -> str:
    """For people: the exact decimal, or `1/3 (~0.3333)` when it does not terminate."""
    text = exact_str(value)
    if "/" in text:
        return f"{text} (~{_approx(value)})"
    return text


def _approx(value: Fraction) -> str:
    """Four significant digits, also past the float range."""
    try:
        return f"{float(value):.4g}"
    except OverflowError:
        exponent = len(str(abs(value.numerator) // value.denominator)) - 1
        mantissa = Fraction(value) / Fraction(10) ** exponent
        return f"{float(mantissa):.4g}e+{exponent}"
