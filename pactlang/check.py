"""`Model` -> `Result`s: every requirement, in the baseline and each contingency.

Coalition requirements (`stable`, `stable within ...`) are decided by one
sweep over all coalitions (`sweep.excess_chunks`); chunks whose excesses were
recovered exactly are judged with integer comparisons, the others through a
pool of candidates that the float bounds cannot rule out, each evaluated in
Fractions. Every counterexample and every worst excess printed is evaluated
again from the model in Fractions before it is returned. From MILP_FROM
parties on (and always above MAX_ENUMERATED) the worst coalitions are found
by integer programming instead (`search_milp`) when the formula allows it.
"""

from __future__ import annotations

import heapq
import time
from dataclasses import dataclass, field, replace
from fractions import Fraction
from math import floor

import numpy as np

from . import ast
from .diagnostics import AgreementError, error
from .formula import EvaluationError
from .model import Model
from .sweep import _conv
from .results import FAILS, HOLDS, UNKNOWN, Counterexample, Result
from .verdict_rules import allowed_excess, bound_ratio, counterexample_order, is_relative, rank, status_of
from .worths import PayoutUnavailable, Worths, excess, paid_by, payout

MAX_ENUMERATED = 24
# From this many parties on, an integer program finds the worst coalition faster
# than enumeration. The solve alone wins from about 20 parties
# (bench/bench_contingencies.py), but a command that needs it also pays about
# a second to import scipy, while enumerating 2**20 coalitions takes 0.3 s.
MILP_FROM = 21
POOL_LIMIT = 200_000
DEFAULT_TOP = 5


@dataclass(frozen=True)
class CheckOptions:
    top: int = DEFAULT_TOP
    time_limit: float | None = None
    low_bits: int | None = None  # tests lower it to exercise several chunks
    search: str = "auto"  # "auto" | "enumeration" | "milp": how coalition requirements are searched
    progress: object | None = field(default=None, compare=False)  # a progress.Progress, or None
    deadline: object | None = field(default=None, compare=False)  # a deadline.Deadline for the whole command


@dataclass
class _Tracker:
    """Worst excess and the top-K violators of one coalition requirement."""

    req: ast.Require
    top: int
    worst: tuple[Fraction, int] | None = None  # exact (excess, mask)
    worst_pool: list[int] = field(default_factory=list)  # masks still to evaluate exactly
    worst_lb: float = -np.inf
    violators: list[tuple[Fraction, int, int]] = field(default_factory=list)  # `rank`s: (-excess, size, mask)
    viol_pool: list[int] = field(default_factory=list)
    certain_lbs: list[float] = field(default_factory=list)  # min-heap of the top-K lower bounds
    overflow: bool = False

    @property
    def relative(self) -> bool:
        return is_relative(self.req)

    @property
    def ratio(self) -> Fraction:
        return bound_ratio(self.req)

    def kth_lb(self) -> float:
        return self.certain_lbs[0] if len(self.certain_lbs) >= self.top else -np.inf

    # ---------------------------------------------------------- exact chunks
    def exact_chunk(self, masks, valid, chunk) -> None:
        k, den = chunk.e_num, chunk.e_den
        kv = np.where(valid, k, np.iinfo(np.int64).min)
        best = int(np.argmax(kv))
        if valid[best]:
            cand = (Fraction(int(k[best]), den), int(masks[best]))
            if self.worst is None or cand[0] > self.worst[0]:
                self.worst = cand
        if self.relative:
            violating = valid & self._relative_violation(chunk)
        else:
            threshold = floor(self.ratio * den)  # k/den > eps  <=>  k > floor(eps * den)
            violating = valid & (k > threshold)
        idx = np.nonzero(violating)[0]
        if idx.size == 0:
            return
        if idx.size > self.top:
            vals = k[idx]
            kth = np.partition(vals, idx.size - self.top)[idx.size - self.top]
            idx = idx[vals >= kth]
        for i in idx:
            mask = int(masks[i])
            self.violators.append(rank(Fraction(int(k[i]), den), mask))
        self.violators = heapq.nsmallest(self.top, self.violators)

    def _relative_violation(self, chunk) -> np.ndarray:
        p = self.ratio
        a_scale = chunk.v_den * p.denominator
        b_scale = p.numerator * chunk.e_den
        e_num, v_num = chunk.e_num, np.abs(chunk.v_num)
        limit = 2**62
        if (int(np.max(np.abs(e_num))) * a_scale < limit) and (int(np.max(v_num)) * b_scale < limit):
            return e_num * a_scale > v_num * b_scale
        lhs = e_num.astype(object) * a_scale
        rhs = v_num.astype(object) * b_scale
        return np.array(lhs > rhs, dtype=bool)

    # ---------------------------------------------------------- inexact chunks
    def inexact_chunk(self, masks, valid, chunk) -> None:
        lb = chunk.e - chunk.e_err
        ub = chunk.e + chunk.e_err
        lb = np.where(valid & np.isfinite(lb), lb, -np.inf)
        ub = np.where(valid, np.where(np.isnan(ub), np.inf, ub), -np.inf)
        self.worst_lb = max(self.worst_lb, float(np.max(lb)))
        # `valid &`: with unbounded errors worst_lb is -inf and the empty and
        # full coalitions (ub -inf) would otherwise enter the pool
        self.worst_pool.extend(int(m) for m in masks[valid & (ub >= self.worst_lb)])
        p = float(self.ratio)
        if self.relative:
            absv = np.abs(chunk.v)
            allowed_lo = p * np.maximum(absv - chunk.v_err, 0.0) * (1 - 4e-16)
            allowed_hi = p * (absv + chunk.v_err) * (1 + 4e-16)
        else:
            # the float epsilon may sit on either side of the exact one
            _, spread = _conv(self.ratio)
            allowed_lo, allowed_hi = p - 2 * spread - 5e-324, p + 2 * spread + 5e-324
        certain = valid & (lb > allowed_hi)
        possible = valid & (ub > allowed_lo)
        for value in np.sort(lb[certain])[-self.top:]:
            heapq.heappush(self.certain_lbs, float(value))
            if len(self.certain_lbs) > self.top:
                heapq.heappop(self.certain_lbs)
        self.viol_pool.extend(int(m) for m in masks[possible & (ub >= self.kth_lb())])
        if len(self.worst_pool) + len(self.viol_pool) > POOL_LIMIT:
            self.overflow = True
            self.worst_pool.clear()
            self.viol_pool.clear()

    def settle(self, exact_excess) -> None:
        """Evaluate the pools exactly and merge them into the exact results."""
        for mask in set(self.worst_pool) | set(self.viol_pool):
            e, w = exact_excess(mask)
            if self.worst is None or e > self.worst[0]:
                self.worst = (e, mask)
            if e > allowed_excess(self.req, w):
                self.violators.append(rank(e, mask))
        self.violators = heapq.nsmallest(self.top, self.violators)
        self.worst_pool, self.viol_pool = [], []


class Checker:
    """Checks the requirements of one model (one scenario)."""

    def __init__(self, model: Model, options: CheckOptions, contingency: str | None = None,
                 parameters: dict[str, Fraction] | None = None):
        self.model = model
        self.options = options
        self.contingency = contingency
        self.parameters = parameters or {}

    def run(self) -> list[Result]:
        """Results for the model's requirements; a division by zero in the
        baseline is an input error, under a contingency an `unknown`."""
        from .deadline import TimeLimitReached

        requirements = self.model.requirements
        try:
            return self._run(requirements)
        except TimeLimitReached:
            return self.out_of_time()
        except PayoutUnavailable as exc:
            return [self._result(r, UNKNOWN, None, "payout", reason=f"the payout cannot be computed: {exc}")
                    for r in requirements]
        except EvaluationError as exc:
            if self.contingency is None:
                raise AgreementError([error("evaluation", exc.message, exc.span or ast.Span(1, 1, 1, 2))]) from None
            return [self._result(r, UNKNOWN, None, "evaluation", reason=exc.message) for r in requirements]

    def out_of_time(self) -> list[Result]:
        """`unknown` for every requirement: the command's deadline passed first."""
        from .deadline import REASON

        return [self._result(r, UNKNOWN, None, "deadline", reason=REASON) for r in self.model.requirements]

    def _run(self, requirements) -> list[Result]:
        from .deadline import checkpoint

        model = self.model
        self.worths = Worths(model)
        checkpoint()  # the payout rules and the sweep are the long stages
        self.payouts = payout(self.worths)
        checkpoint()
        worth_all = self.worths.worth_all
        self.worth_all = worth_all
        self.budget_excess = excess(model, worth_all, sum(self.payouts, Fraction(0)))
        coalition_reqs = [r for r in requirements if r.kind in ("stable", "within")]
        sweep_results = self._sweep(coalition_reqs) if coalition_reqs else {}
        results = []
        for req in requirements:
            if req.kind in ("stable", "within"):
                results.append(sweep_results[id(req)])
            elif req.kind == "rational":
                results.append(self._rational(req))
            else:
                results.append(self._budget(req))
        return results

    # ---------------------------------------------------------- helpers
    def _result(self, req, status, worst, method, reason=None, counterexamples=(), worst_mask=None) -> Result:
        return Result(
            requirement=ast.requirement_text(req), line=req.span.line if req.span else 0,
            contingency=self.contingency, status=status, worst_excess=worst, method=method,
            reason=reason, counterexamples=tuple(counterexamples), span=req.span,
            worst_coalition=tuple(self.model.names_of(worst_mask)) if worst_mask is not None else None,
        )

    def exact_excess(self, mask: int) -> tuple[Fraction, Fraction]:
        """(excess, worth) of a coalition, exactly from the model."""
        worth = self.worths.exact(mask)
        return excess(self.model, worth, paid_by(self.payouts, mask)), worth

    def counterexample(self, req, mask: int) -> Counterexample:
        e, w = self.exact_excess(mask)
        return Counterexample(tuple(self.model.names_of(mask)), w, paid_by(self.payouts, mask), e,
                              allowed_excess(req, w), dict(self.parameters))

    def _budget_counterexample(self) -> Counterexample:
        m = self.model
        return Counterexample(m.parties, self.worth_all, sum(self.payouts, Fraction(0)), self.budget_excess,
                              Fraction(0), dict(self.parameters))

    # ---------------------------------------------------------- requirements
    def _rational(self, req) -> Result:
        worst, worst_mask, violators = None, None, []
        for i in range(self.model.n):
            e, w = self.exact_excess(1 << i)
            if worst is None or e > worst:
                worst, worst_mask = e, 1 << i
            if e > allowed_excess(req, w):
                violators.append(1 << i)
        return self.coalition_result(req, worst, worst_mask, violators, "singletons")

    def _budget(self, req) -> Result:
        ok = self.budget_excess == 0
        cex = [] if ok else [self._budget_counterexample()]
        return self._result(req, HOLDS if ok else FAILS, self.budget_excess, "exact sum",
                            counterexamples=cex, worst_mask=self.model.full)

    def _sweep(self, reqs) -> dict[int, Result]:
        from .sweep import excess_chunks  # numpy work only when coalitions are checked

        model = self.model
        if self._use_milp():
            from .search_milp import search

            found = search(self, reqs, self.options.time_limit)
            if model.n > MAX_ENUMERATED or self.options.search == "milp" \
                    or all(r.status != UNKNOWN for r in found.values()):
                return found
        trackers = [_Tracker(r, self.options.top) for r in reqs]
        full = model.full
        deadline = None if self.options.time_limit is None else time.monotonic() + self.options.time_limit
        for chunk in excess_chunks(self.worths, self.payouts, self.options.low_bits):
            if deadline is not None and time.monotonic() > deadline:
                reason = f"the time limit of {self.options.time_limit:g} s was reached while enumerating coalitions"
                return {id(r): self._result(r, UNKNOWN, None, "enumeration", reason=reason) for r in reqs}
            masks = chunk.masks
            valid = (masks != 0) & (masks != full)
            for t in trackers:
                if chunk.e_num is not None:
                    t.exact_chunk(masks, valid, chunk)
                else:
                    t.inexact_chunk(masks, valid, chunk)
        out = {}
        for t in trackers:
            req = t.req
            if t.overflow:
                out[id(req)] = self._result(req, UNKNOWN, None, "enumeration", reason=(
                    f"more than {POOL_LIMIT} coalitions could not be told apart in floating point "
                    "and were too many to evaluate exactly"))
                continue
            t.settle(self.exact_excess)
            out[id(req)] = self._verdict(t)
        return out

    def _use_milp(self) -> bool:
        """Integer programming above MILP_FROM parties when the formula allows it
        (and always above MAX_ENUMERATED, where it is the only way)."""
        options, n = self.options, self.model.n
        if options.search == "milp":
            return True
        if options.search == "enumeration" or options.low_bits is not None:
            return n > MAX_ENUMERATED
        if n > MAX_ENUMERATED:
            return True
        if n < MILP_FROM:
            return False
        from .search_milp import unsupported_reason

        return unsupported_reason(self.model) is None

    def _verdict(self, t: _Tracker) -> Result:
        worst_excess, worst_mask = (None, None) if t.worst is None else t.worst
        return self.coalition_result(t.req, worst_excess, worst_mask, [mask for _, _, mask in t.violators],
                                     "enumeration")

    def coalition_result(self, req, worst_excess, worst_mask, violators, method, note=None) -> Result:
        """The result of a coalition requirement from a complete search: the
        exact worst excess (attained by `worst_mask`) and the masks of the
        worst violating coalitions (at least the first `top` in `rank` order,
        or all of them). Everything printed is re-derived from the model here;
        the status comes from `status_of`."""
        if worst_mask is not None:
            # the printed worst excess is re-derived from the model, exactly
            worst_excess = self.exact_excess(worst_mask)[0]
        found = []
        for mask in violators:
            c = self.counterexample(req, mask)
            if not c.excess > c.allowed:
                raise AssertionError(f"internal: counterexample {c.coalition} did not re-check exactly")
            found.append(c)
        cex = [self._budget_counterexample()] if req.kind != "rational" and self.budget_excess != 0 else []
        cex += found
        cex.sort(key=counterexample_order(self.model.mask_of, self.model.full))
        status = status_of(req, worst_excess, len(found), self.budget_excess)
        return self._result(req, status, worst_excess, method if note is None else method + note,
                            counterexamples=cex[: self.options.top], worst_mask=worst_mask)


def check_model(model: Model, options: CheckOptions = CheckOptions()) -> list[Result]:
    """All results: the baseline, then each contingency."""
    from .deadline import active

    progress = options.progress
    if progress is not None:
        progress.start_file(model.path, 1 + len(model.contingencies))
        progress.scenario("baseline")
    try:
        with active(options.deadline):
            if _out_of_time(options):
                results = Checker(model, options).out_of_time()
            else:
                results = Checker(model, _within(options)).run()
            results.extend(_contingency_results(model, options))
    finally:
        if progress is not None:
            progress.end_file()
    return results


def _out_of_time(options: CheckOptions) -> bool:
    return options.deadline is not None and options.deadline.passed


def _within(options: CheckOptions) -> CheckOptions:
    """The options of the next scenario: its time limit cut to what is left of the command."""
    if options.deadline is None:
        return options
    return replace(options, time_limit=options.deadline.cap(options.time_limit))


def _contingency_results(model: Model, options: CheckOptions) -> list[Result]:
    if not model.contingencies:
        return []  # Z3 and the range machinery are imported only when needed
    from .contingencies import check_contingency
    from .deadline import TimeLimitReached

    results = []
    for c in model.contingencies:
        if options.progress is not None:
            options.progress.scenario(c.name)
        if _out_of_time(options):
            results.extend(Checker(model, options, contingency=c.name).out_of_time())
            continue
        try:
            results.extend(check_contingency(model, c, _within(options)))
        except TimeLimitReached:
            results.extend(Checker(model, options, contingency=c.name).out_of_time())
    return results
