"""Exact Fractions -> figures for people: rounded to a number of decimals that
keeps the numbers of one table apart, never hiding the sign of an excess.

A table's figures share one `Digits` choice: the fewest decimals (from a
floor that gives about four significant digits) at which no two different
exact values print the same. Exact decimals that are shorter print as they
are (`2.75`, not `2.7500`). JSON and `--exact` keep the exact fractions.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from math import floor

from ..numbers import exact_str

MAX_DECIMALS = 12


def _round(value: Fraction, decimals: int) -> Fraction:
    """Half away from zero, exactly."""
    scale = 10**decimals
    scaled = abs(value) * scale
    whole = floor(scaled + Fraction(1, 2))
    return Fraction(whole if value >= 0 else -whole, scale)


def _terminating_decimals(value: Fraction) -> int | None:
    """The decimals of `value` when it is a terminating decimal, else None."""
    text = exact_str(value)
    if "/" in text:
        return None
    return len(text.split(".")[1]) if "." in text else 0


def _group(text: str) -> str:
    """Thousands separators in the whole part: 12345.6 -> 12,345.6."""
    sign = "-" if text.startswith("-") else ""
    body = text.lstrip("-")
    whole, _, frac = body.partition(".")
    if len(whole) > 4:  # 1234 stays as written; 12,345 reads better
        whole = f"{int(whole):,}"
    return sign + whole + ("." + frac if frac else "")


def fixed(value: Fraction, decimals: int) -> str:
    """`value` with at most `decimals` decimals: exact when it fits, else rounded."""
    value = Fraction(value)
    places = _terminating_decimals(value)
    if places is not None and places <= decimals:
        return _group(exact_str(value))
    rounded = _round(value, decimals)
    text = f"{'-' if rounded < 0 else ''}{abs(rounded.numerator) * 10**decimals // rounded.denominator}"
    if decimals:
        digits = text.lstrip("-").rjust(decimals + 1, "0")
        text = ("-" if rounded < 0 else "") + digits[:-decimals] + "." + digits[-decimals:]
    if rounded == 0:
        text = text.lstrip("-")
    return _group(text)


def decimals_of(step: Fraction) -> int:
    """The decimals needed to write `step` (or any multiple of it) exactly; 12 at most."""
    places = _terminating_decimals(Fraction(step))
    return MAX_DECIMALS if places is None else min(places, MAX_DECIMALS)


def is_rounded(value: Fraction, decimals: int) -> bool:
    places = _terminating_decimals(Fraction(value))
    return places is None or places > decimals


def floor_decimals(values) -> int:
    """Decimals for about four significant digits of the largest value, 0 to 2."""
    largest = max((abs(Fraction(v)) for v in values), default=Fraction(0))
    if largest == 0:
        return 0
    return max(0, min(2, 3 - _magnitude(largest)))


def _magnitude(value: Fraction) -> int:
    """floor(log10(value)) for a positive Fraction, exactly (no float: values
    past the float range are amounts too)."""
    whole = value.numerator // value.denominator
    if whole >= 1:
        return len(str(whole)) - 1
    k = 0
    while value < 1 and k < MAX_DECIMALS + 2:  # below 10**-14 the floor of 0 decimals is reached anyway
        value *= 10
        k += 1
    return -k


def decimals_apart(values, start: int) -> int:
    """The fewest decimals >= start at which different values print differently."""
    distinct = sorted({Fraction(v) for v in values})
    for decimals in range(start, MAX_DECIMALS + 1):
        shown = {Fraction(fixed(v, decimals).replace(",", "")) for v in distinct}
        if len(shown) == len(distinct):
            return decimals
    return MAX_DECIMALS


@dataclass(frozen=True)
class Figures:
    """How one table writes its amounts: exact, or rounded to `decimals`."""

    decimals: int = 2
    exact: bool = False

    @classmethod
    def for_values(cls, values, digits: int | None = None, exact: bool = False, at_least: int = 0) -> "Figures":
        """`digits` fixes the decimals (`--digits N`); otherwise the fewest that
        tell `values` apart (include 0 and the bound so an excess never
        rounds onto them), and never fewer than `at_least` (the decimals of
        a `round payouts` step, so rounded payouts print as billed)."""
        values = [Fraction(v) for v in values]
        if digits is not None:
            return cls(digits, exact)
        return cls(decimals_apart(values, max(at_least, floor_decimals(values))), exact)

    def amount(self, value: Fraction | None) -> str:
        if value is None:
            return ""
        if self.exact:
            text = exact_str(Fraction(value))
            return text if "/" in text else _group(text)
        return fixed(value, self.decimals)

    def excess(self, value: Fraction | None) -> str:
        """Like `amount`, but a nonzero excess never prints as 0."""
        if value is None:
            return ""
        text = self.amount(value)
        if not self.exact and value != 0 and Fraction(text.replace(",", "")) == 0:
            return "just above 0" if value > 0 else "just below 0"
        return text

    def rounded(self, values) -> bool:
        """Whether any of `values` prints rounded (to say so once)."""
        return not self.exact and any(is_rounded(Fraction(v), self.decimals) for v in values if v is not None)


def percent(part: Fraction, whole: Fraction) -> Fraction | None:
    """`part` as a percentage of |whole| (None when the worth is 0)."""
    if whole == 0:
        return None
    return Fraction(part) * 100 / abs(Fraction(whole))


def percent_text(value: Fraction | None, decimals: int = 1, exact: bool = False) -> str:
    """A percentage; a nonzero one never prints as 0%."""
    if value is None:
        return "n/a"
    if exact:
        return exact_str(value) + "%"
    text = fixed(value, decimals)
    if value != 0 and Fraction(text.replace(",", "")) == 0:
        return "just above 0%" if value > 0 else "just below 0%"
    return text + "%"
