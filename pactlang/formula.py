"""Expression + exact environment -> Fraction: the reference evaluator.

Everything that decides a verdict ends here: worths of single coalitions,
payout lines, table entries. Truth values are 1 and 0; any non-zero value
counts as true. The vectorised sweep in `sweep.py` only guides the search
and is checked against this evaluator.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

from . import ast


class EvaluationError(Exception):
    """An expression cannot be evaluated (division by zero); carries the span."""

    def __init__(self, message: str, span: ast.Span | None):
        super().__init__(message)
        self.message = message
        self.span = span


@dataclass(frozen=True)
class Env:
    """What an expression may read.

    `members` is the tuple of party names in the coalition (None outside a
    formula), `var` the formula's coalition name, `worth_all` the value of
    `worth(all)` and `percent_base` what a bare percentage is a share of
    (worth(all) in payout lines; None elsewhere, where 40% is 0.4).
    """

    params: dict[str, Fraction]
    attributes: dict[str, dict[str, Fraction]]
    members: tuple[str, ...] | None = None
    var: str | None = None
    worth_all: Fraction | None = None
    percent_base: Fraction | None = None


ONE, ZERO = Fraction(1), Fraction(0)


def truth(value: bool) -> Fraction:
    return ONE if value else ZERO


def evaluate(expr: ast.Expr, env: Env) -> Fraction:
    """The exact value of `expr` in `env`."""
    match expr:
        case ast.Num(value=value):
            return value
        case ast.Percent(value=value):
            return value if env.percent_base is None else value * env.percent_base
        case ast.Name(name=name):
            return env.params[name]
        case ast.Member(item=item):
            assert env.members is not None
            return truth(item in env.members)
        case ast.WorthOfAll():
            assert env.worth_all is not None
            return env.worth_all
        case ast.Neg(operand=operand):
            return -evaluate(operand, env)
        case ast.Not(operand=operand):
            return truth(evaluate(operand, env) == 0)
        case ast.If(cond=cond, then=then, otherwise=otherwise):
            return evaluate(then if evaluate(cond, env) != 0 else otherwise, env)
        case ast.Call(func=func, args=args):
            return _call(func, args, env, expr.span)
        case ast.Chain():
            return _chain(expr, env)
        case ast.Binary(op=op, left=left, right=right):
            a, b = evaluate(left, env), evaluate(right, env)
            return _binary(op, a, b, expr.span)
    raise TypeError(f"not an expression: {expr!r}")


def _chain(chain: ast.Chain, env: Env) -> Fraction:
    """A chain folded left to right; `and`/`or` stop at the first operand
    that decides them, as they always have."""
    op = chain.rest[0][0]
    if op == "and":
        return truth(all(evaluate(x, env) != 0 for x in chain.operands))
    if op == "or":
        return truth(any(evaluate(x, env) != 0 for x in chain.operands))
    value = evaluate(chain.first, env)
    for k, (op, operand) in enumerate(chain.rest):
        value = _binary(op, value, evaluate(operand, env), chain.prefix_span(k))
    return value


def _binary(op: str, a: Fraction, b: Fraction, span) -> Fraction:
    match op:
        case "+":
            return a + b
        case "-":
            return a - b
        case "*":
            return a * b
        case "/":
            if b == 0:
                raise EvaluationError("division by zero", span)
            return a / b
        case "==":
            return truth(a == b)
        case "!=":
            return truth(a != b)
        case "<":
            return truth(a < b)
        case "<=":
            return truth(a <= b)
        case ">":
            return truth(a > b)
        case ">=":
            return truth(a >= b)
    raise ValueError(op)


def is_aggregate(call: ast.Call) -> bool:
    """`sum(ATTR in S)`, `max(ATTR in S)`, `min(ATTR in S)`: one membership
    argument. (Which of party/attribute the item names is checked earlier.)"""
    return call.func in ("sum", "max", "min") and len(call.args) == 1 and isinstance(call.args[0], ast.Member)


def _call(func: str, args, env: Env, span) -> Fraction:
    if func == "count":
        assert env.members is not None
        return Fraction(len(env.members))
    if is_aggregate(ast.Call(func, args)):
        assert env.members is not None
        values = env.attributes[args[0].item]
        items = [values[p] for p in env.members]
        if func == "sum":
            return sum(items, ZERO)
        return max(items) if func == "max" else min(items)
    values = [evaluate(a, env) for a in args]
    return max(values) if func == "max" else min(values)


def depends_on_coalition(expr: ast.Expr) -> bool:
    """Whether an expression reads the coalition (membership, count, aggregates)."""
    return any(isinstance(node, ast.Member) or (isinstance(node, ast.Call) and node.func == "count")
               for node in walk(expr))


def walk(expr: ast.Expr):
    """Every node of an expression, parents first, left to right (iterative)."""
    stack = [expr]
    while stack:
        node = stack.pop()
        yield node
        stack.extend(reversed(ast.children(node)))
