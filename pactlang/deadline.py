"""`--time-limit` seconds -> one deadline for a whole command, checked cooperatively.

The command line creates one `Deadline` when a command starts; every stage
(each file, each scenario, each requirement, the payout computation and long
loops) asks `passed` at its boundary and, once it is, reports what is left as
`unknown` with `REASON` instead of starting new work. A stage that hands time
to a solver gives it `left()` seconds, never more, so the command as a whole
ends close to the limit.
"""

from __future__ import annotations

import math
import time
from contextlib import contextmanager
from contextvars import ContextVar

REASON = "time limit reached"


class TimeLimitReached(Exception):
    """Raised by `Deadline.check` when the command's time is used up."""

    def __init__(self, message: str = REASON):
        super().__init__(message)


def parse_seconds(value: object) -> float:
    """A time limit from the command line: a positive, finite number of
    seconds, else ValueError with a message for people."""
    try:
        seconds = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise ValueError(f"`{value}` is not a number of seconds") from None
    if math.isnan(seconds) or math.isinf(seconds) or seconds <= 0:
        raise ValueError(f"the time limit must be a positive, finite number of seconds, not `{value}`")
    return seconds


class Deadline:
    """The end of the time a whole command may use (`seconds` None: no end)."""

    def __init__(self, seconds: float | None, clock=time.monotonic):
        self.seconds = seconds
        self._clock = clock
        self.end = None if seconds is None else clock() + seconds

    @classmethod
    def none(cls) -> "Deadline":
        return cls(None)

    @property
    def limited(self) -> bool:
        return self.end is not None

    @property
    def passed(self) -> bool:
        return self.end is not None and self._clock() >= self.end

    def left(self, default: float | None = None) -> float | None:
        """Seconds left (at least 0.001 so a solver never reads 0 as "no limit");
        `default` when there is no deadline."""
        if self.end is None:
            return default
        return max(self.end - self._clock(), 0.001)

    def cap(self, seconds: float | None) -> float | None:
        """`seconds` for one step, cut to what is left of the command."""
        left = self.left()
        if left is None:
            return seconds
        return left if seconds is None else min(seconds, left)

    def check(self) -> None:
        """Raise TimeLimitReached once the deadline has passed."""
        if self.passed:
            raise TimeLimitReached()

    def __repr__(self) -> str:
        return f"Deadline({self.seconds!r})"


# The deadline of the command running in this thread, for stages that are
# reached without an options object (the payout rules of `solutions`).
_current: ContextVar[Deadline | None] = ContextVar("pactlang_deadline", default=None)


@contextmanager
def active(deadline: Deadline | None):
    """Make `deadline` the one `checkpoint()` reads inside the block (None: keep the outer one)."""
    if deadline is None:
        yield
        return
    token = _current.set(deadline)
    try:
        yield
    finally:
        _current.reset(token)


def checkpoint() -> None:
    """Raise TimeLimitReached when the active deadline has passed (cheap: one clock read)."""
    deadline = _current.get()
    if deadline is not None and deadline.end is not None and deadline._clock() >= deadline.end:
        raise TimeLimitReached()
