"""A path (or `-` for standard input) -> bytes -> text -> `ast.Document` -> `Model`,
with unreadable files as diagnostics.

Files and standard input are decoded by the same function (`decode_source`):
UTF-8, a leading byte-order mark dropped, and CR LF or a lone CR read as a
line break, so lines and columns are those an editor shows. `Source` keeps the
file's own line ending and mark, for the formatter to write them back.
"""

from __future__ import annotations

import os
import sys
from dataclasses import dataclass
from pathlib import Path

from . import ast
from .diagnostics import AgreementError, error
from .model import Model
from .parse import parse_text
from .resolve import resolve

FILE_START = ast.Span(1, 1, 1, 2)
STDIN = "-"
STDIN_LABEL = "<stdin>"
BOM = "\ufeff"


@dataclass(frozen=True)
class Loaded:
    path: str
    text: str
    document: ast.Document
    model: Model


@dataclass(frozen=True)
class Source:
    """Decoded text with LF line breaks, and the conventions of the original."""

    text: str
    newline: str = "\n"  # the first line break of the original: "\n", "\r\n" or "\r"
    bom: bool = False

    def restore(self, text: str) -> str:
        """`text` (LF line breaks) in the original's line ending and mark."""
        if self.newline != "\n":
            text = text.replace("\n", self.newline)
        return BOM + text if self.bom else text


def normalize_text(text: str) -> str:
    """Text with a leading byte-order mark dropped and every CR LF or lone CR made LF."""
    if text.startswith(BOM):
        text = text[1:]
    if "\r" in text:
        text = text.replace("\r\n", "\n").replace("\r", "\n")
    return text


def first_newline(text: str) -> str:
    """The first line break of `text`: "\n" (also when there is none), "\r\n" or "\r"."""
    i = text.find("\n")
    j = text.find("\r")
    if j < 0 or (0 <= i < j):
        return "\n"
    return "\r\n" if text.startswith("\r\n", j) else "\r"


def decode_source(data: bytes) -> Source:
    """Bytes of an agreement -> `Source`; AgreementError at the first byte that is not UTF-8."""
    try:
        raw = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        before = normalize_text(data[: exc.start].decode("utf-8", errors="replace"))
        line = before.count("\n") + 1
        column = len(before) - (before.rfind("\n") + 1) + 1
        raise AgreementError([error(
            "encoding", f"the file is not valid UTF-8 (byte 0x{data[exc.start]:02x})",
            ast.Span(line, column, line, column + 1), help="save the file as UTF-8")]) from None
    return Source(normalize_text(raw), first_newline(raw), raw.startswith(BOM))


def read_bytes(path: str) -> bytes:
    """The bytes of a file, or of standard input for `-`; AgreementError when unreadable."""
    if path == STDIN:
        stream = getattr(sys.stdin, "buffer", None)
        if stream is None:  # a replaced sys.stdin (tests) that only has text
            return sys.stdin.read().encode("utf-8", errors="surrogateescape")
        return stream.read()
    try:
        return Path(path).read_bytes()
    except FileNotFoundError:
        message = "no such file" if not os.path.islink(path) else "a link to a file that does not exist"
        raise AgreementError([error("no-file", message, FILE_START)]) from None
    except IsADirectoryError:
        raise AgreementError([error("no-file", "this is a directory, not an agreement file", FILE_START)]) from None
    except OSError as exc:
        raise AgreementError([error("no-file", f"cannot read the file: {exc.strerror or exc}", FILE_START)]) from None


def read_source(path: str) -> Source:
    """A file (or `-`) decoded; AgreementError for a missing, unreadable or non-UTF-8 file."""
    return decode_source(read_bytes(path))


def read_text(path: str) -> str:
    """The text of a file (or `-`) with LF line breaks; AgreementError as `read_source`."""
    return read_source(path).text


def label_of(path: str) -> str:
    """How a path is named in messages: relative to the working directory when
    it lies below it; `<stdin>` for `-`."""
    if path == STDIN:
        return STDIN_LABEL
    try:
        rel = os.path.relpath(path)
    except ValueError:
        return path
    return path if rel.startswith("..") else rel


def agreement_paths(paths: list[str], notes: list[str] | None = None) -> list[str]:
    """Files as given (and `-`); a directory stands for every `.deal` file below
    it, in sorted order. Links to missing files inside a directory (an editor's
    lock file `.#a.deal`) are skipped, each with a line in `notes`."""
    out = []
    for p in paths:
        if p == STDIN or not os.path.isdir(p):
            out.append(p)
            continue
        found = []
        for root, dirs, files in os.walk(p):
            dirs.sort()
            for name in files:
                if not name.endswith(".deal"):
                    continue
                full = os.path.join(root, name)
                if not os.path.exists(full):
                    if notes is not None:
                        notes.append(f"{label_of(full)}: note: skipped, a link to a file that does not exist")
                    continue
                if os.path.isfile(full):
                    found.append(full)
        out.extend(sorted(found))
    return out


def load_text(text: str, path: str = "<agreement>") -> Loaded:
    """Parse and resolve agreement text; raise AgreementError on any problem."""
    text = normalize_text(text)
    document = parse_text(text)
    return Loaded(path, text, document, resolve(document, path))


def load_file(path: str) -> Loaded:
    """Read (`-`: standard input), parse and resolve one `.deal` file."""
    return load_text(read_text(path), path)
