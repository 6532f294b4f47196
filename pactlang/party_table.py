"""A CSV file of parties -> `PartyRow`s: names and exact attribute values, or a `PartyTableError` naming row and column.

`parties from "members.csv"` keeps long member lists out of the agreement
text: the column `name` names each party, every other column is an
attribute. Values are exact decimals as in the agreement itself; anything a
spreadsheet might have added (thousands separators, currency signs, empty
cells) is refused with the row and column, never guessed at.
"""

from __future__ import annotations

import csv
import io
import re
from dataclasses import dataclass
from fractions import Fraction
from pathlib import Path

# The spellings the agreement language accepts (grammar/pactlang.lark: NAME, NUMBER).
NAME_PATTERN = re.compile(r"[^\W\d]\w*")
NUMBER_PATTERN = re.compile(r"-?[0-9]+(\.[0-9]+)?")
MAX_BYTES = 50 * 1024 * 1024  # a party table larger than this is surely not one


@dataclass(frozen=True)
class PartyRow:
    name: str
    attributes: dict[str, Fraction]
    row: int  # the line of the CSV file, header = 1


@dataclass(frozen=True)
class PartyTable:
    columns: tuple[str, ...]  # attribute columns, in file order
    rows: tuple[PartyRow, ...]


class PartyTableError(Exception):
    """What is wrong with the file, worded for the person who wrote it."""


def _where(file: str, row: int, column: str | None = None) -> str:
    return f"`{file}` row {row}" + (f", column `{column}`" if column else "")


def parse_party_table(text: str, file: str, reserved: frozenset[str] = frozenset()) -> PartyTable:
    """Rows of a party table from its text; `file` is the name used in messages."""
    reader = csv.reader(io.StringIO(text, newline=""))
    try:
        header = next(reader)
    except StopIteration:
        raise PartyTableError(f"`{file}` is empty: it needs a header row with a `name` column") from None
    except csv.Error as exc:
        raise PartyTableError(f"{_where(file, 1)}: {exc}") from None
    header = [h.strip() for h in header]
    if "name" not in header:
        raise PartyTableError(f"{_where(file, 1)}: the header has no `name` column")
    seen: set[str] = set()
    for column in header:
        if not column:
            raise PartyTableError(f"{_where(file, 1)}: a column has no heading")
        if column in seen:
            raise PartyTableError(f"{_where(file, 1)}: column `{column}` appears twice")
        seen.add(column)
        if column != "name" and (not NAME_PATTERN.fullmatch(column) or column in reserved):
            raise PartyTableError(f"{_where(file, 1)}: `{column}` cannot name an attribute "
                                  "(letters, digits and `_`, not a reserved word)")
    name_at = header.index("name")
    columns = tuple(c for c in header if c != "name")
    rows: list[PartyRow] = []
    try:
        for cells in reader:
            line = reader.line_num
            if not cells or all(not c.strip() for c in cells):
                continue  # a blank line, as spreadsheets leave at the end
            if len(cells) != len(header):
                raise PartyTableError(f"{_where(file, line)}: {len(cells)} cells where the header has {len(header)}")
            name = cells[name_at].strip()
            if not NAME_PATTERN.fullmatch(name) or name in reserved:
                raise PartyTableError(f"{_where(file, line, 'name')}: `{name}` cannot name a party "
                                      "(letters, digits and `_`, not starting with a digit, not a reserved word)")
            values = {}
            for column, cell in zip(header, cells):
                if column == "name":
                    continue
                values[column] = _number(cell.strip(), file, line, column)
            rows.append(PartyRow(name, values, line))
    except csv.Error as exc:
        raise PartyTableError(f"{_where(file, reader.line_num)}: {exc}") from None
    return PartyTable(columns, tuple(rows))


def _number(cell: str, file: str, row: int, column: str) -> Fraction:
    if not cell:
        raise PartyTableError(f"{_where(file, row, column)}: the cell is empty; every party needs a value")
    if NUMBER_PATTERN.fullmatch(cell):
        return Fraction(cell)  # exact: Fraction reads decimal text without a float
    if re.fullmatch(r"-?[0-9]{1,3}([,' ][0-9]{3})+(\.[0-9]+)?", cell):
        raise PartyTableError(f"{_where(file, row, column)}: `{cell}` has a thousands separator; "
                              "write the number without one")
    raise PartyTableError(f"{_where(file, row, column)}: `{cell}` is not a decimal number")


def read_party_table(path: Path, shown: str, reserved: frozenset[str] = frozenset()) -> PartyTable:
    """Read and parse the file at `path`; `shown` is how messages name it."""
    try:
        if path.stat().st_size > MAX_BYTES:
            raise PartyTableError(f"`{shown}` is larger than {MAX_BYTES // (1024 * 1024)} MiB")
        data = path.read_bytes()
    except FileNotFoundError:
        raise PartyTableError(f"no such file `{shown}` (a path is read relative to the agreement file)") from None
    except IsADirectoryError:
        raise PartyTableError(f"`{shown}` is a directory, not a CSV file") from None
    except OSError as exc:
        raise PartyTableError(f"cannot read `{shown}`: {exc.strerror}") from None
    try:
        text = data.decode("utf-8-sig")  # spreadsheets often write a byte-order mark
    except UnicodeDecodeError as exc:
        row = data[: exc.start].count(b"\n") + 1
        raise PartyTableError(f"{_where(shown, row)}: the file is not valid UTF-8") from None
    return parse_party_table(text, shown, reserved)
