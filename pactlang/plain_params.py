"""A command-line option's text -> its value, for plain annotations, without pydantic.

Used by `cli` in place of typer's pydantic adapters (about a third of a
small check's start-up) for `str`, `int`, `float`, an `Enum` of strings and
`List[str]`; `min`/`max` of the option are enforced the same way. Messages
read like typer's own (`Invalid value for '--top': ...`, exit 2).
"""

from __future__ import annotations

from enum import Enum
from typing import Any, get_args, get_origin

import typer


def _one(annotation, info, value: Any):
    if annotation is str:
        return str(value)
    if annotation is bool:
        return value if isinstance(value, bool) else str(value).lower() in ("1", "true", "yes", "on")
    if annotation in (int, float):
        try:
            number = annotation(value)
        except (TypeError, ValueError):
            kind = "an integer" if annotation is int else "a number"
            raise typer.BadParameter(f"`{value}` is not {kind}") from None
        low, high = getattr(info, "min", None), getattr(info, "max", None)
        if low is not None and number < low:
            raise typer.BadParameter(f"{value} is below the minimum {low}")
        if high is not None and number > high:
            raise typer.BadParameter(f"{value} is above the maximum {high}")
        return number
    if isinstance(annotation, type) and issubclass(annotation, Enum):
        if isinstance(value, annotation):
            return value
        for member in annotation:
            if str(member.value) == str(value):
                return member
        choices = ", ".join(f"`{m.value}`" for m in annotation)
        raise typer.BadParameter(f"`{value}` is not one of {choices}")
    raise TypeError(annotation)


def _supported(annotation) -> bool:
    if annotation in (str, int, float, bool):
        return True
    if isinstance(annotation, type) and issubclass(annotation, Enum):
        return all(isinstance(m.value, str) for m in annotation)
    return get_origin(annotation) is list and get_args(annotation) == (str,)


def plain_runtime_param(base: type, descriptor):
    """A `base` (typer's RuntimeParam) subclass instance for the descriptor's
    annotation, or None when the annotation is not a plain one."""
    annotation = descriptor.annotation
    if not _supported(annotation) or getattr(descriptor, "file_annotation", None) is not None:
        return None

    class PlainParam(base):
        def _coerce_value(self, value, param, ctx):
            try:
                if get_origin(self.annotation) is list:
                    items = value if isinstance(value, (list, tuple)) else [value]
                    return [str(v) for v in items]
                return _one(self.annotation, self.parameter_info, value)
            except typer.BadParameter as exc:
                exc.ctx, exc.param = ctx, param
                raise

    return PlainParam(parameter_info=descriptor.parameter_info, annotation=annotation)


