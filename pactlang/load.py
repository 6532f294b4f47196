"""A path -> text -> `ast.Document` -> `Model`, with unreadable files as diagnostics."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from . import ast
from .diagnostics import AgreementError, error
from .model import Model
from .parse import parse_text
from .resolve import resolve

FILE_START = ast.Span(1, 1, 1, 2)


@dataclass(frozen=True)
class Loaded:
    path: str
    text: str
    document: ast.Document
    model: Model


def read_text(path: str) -> str:
    """The file's text, or AgreementError for a missing or non-UTF-8 file."""
    try:
        data = Path(path).read_bytes()
    except FileNotFoundError:
        raise AgreementError([error("no-file", "no such file", FILE_START)]) from None
    except IsADirectoryError:
        raise AgreementError([error("no-file", "this is a directory, not an agreement file", FILE_START)]) from None
    except OSError as exc:
        raise AgreementError([error("no-file", f"cannot read the file: {exc.strerror}", FILE_START)]) from None
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        column = exc.start - (data.rfind(b"\n", 0, exc.start) + 1) + 1
        raise AgreementError([error("encoding", "the file is not valid UTF-8", ast.Span(line, column, line, column + 1))]) from None


def load_text(text: str, path: str = "<agreement>") -> Loaded:
    """Parse and resolve agreement text; raise AgreementError on any problem."""
    document = parse_text(text)
    return Loaded(path, text, document, resolve(document, path))


def load_file(path: str) -> Loaded:
    """Read, parse and resolve one `.deal` file."""
    return load_text(read_text(path), path)
