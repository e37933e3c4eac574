"""Strict CSV reading: named columns, typed cells, one located message per problem."""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass
from pathlib import Path

from optimiser.io.errors import InputError, ProblemList
from optimiser.io.limits import CSV_COLUMNS


@dataclass
class Row:
    """One data row: its line number in the file and its cells by column name."""

    line: int
    cells: dict[str, str]


def read_rows(path: Path, required: list[str], optional: list[str] | None = None,
              what: str = "file") -> tuple[list[Row], list[str]]:
    """Read a CSV with a header. Returns rows and the header.

    Raises InputError for a missing, unreadable (not UTF-8) or empty file, a row the CSV
    reader cannot read, or missing columns. Blank lines are skipped, before the header
    too. Extra columns are allowed (ignored by the callers) except duplicated names.
    """
    if path.is_dir():
        raise InputError(f"{path}: the {what} is a folder, not a file")
    if not path.is_file():
        raise InputError(f"{path}: {what} not found")
    try:
        data = path.read_bytes()
    except OSError as error:
        raise InputError(f"{path}: cannot read the {what} ({error})") from None
    text = decode_text(path, data, what, "UTF-8 CSV")
    if not text.strip():
        raise InputError(f"{path}: the {what} is empty")
    lines = text.splitlines()
    first = next(i for i, line in enumerate(lines) if line.strip())  # skip blank lines
    reader = csv.reader(lines[first:])
    try:
        header = [name.strip() for name in next(reader)]
    except csv.Error as error:
        raise InputError(f"{path}: line {first + 1}: cannot read the header ({error})") \
            from None
    problems = ProblemList()
    if len(set(header)) != len(header):
        problems.add(f"{path}: line {first + 1}: a column name appears twice in {header}")
    missing = [name for name in required if name not in header]
    separator = _other_separator(lines[first], header) if missing else None
    if separator:
        raise InputError(f"{path}: line {first + 1}: this file seems to use {separator} as "
                         "separator; use ',' (save it as comma-separated CSV)")
    if missing:
        problems.add(f"{path}: line {first + 1}: missing column(s) {', '.join(missing)}; "
                     f"expected {', '.join(required + (optional or []))}")
    problems.raise_if_any()
    rows: list[Row] = []
    try:
        ended = reader.line_num
        for values in reader:
            line_number = first + reader.line_num
            started, ended = first + ended + 1, reader.line_num
            if line_number > started:
                # A quote left open swallows the lines that follow into one cell: rows
                # silently lost or merged, so it is refused (no input has line breaks
                # inside a cell).
                problems.add(f"{path}: lines {started}-{line_number}: one quoted cell runs "
                             "over several lines (a quote \" not closed?); put each row on "
                             "its own line")
                continue
            if not values or all(not v.strip() for v in values):
                continue  # blank lines are harmless
            if len(values) > len(header):
                problems.add(f"{path}: line {line_number}: {len(values)} cells but "
                             f"{len(header)} columns")
                continue
            values = values + [""] * (len(header) - len(values))
            rows.append(Row(line_number, {h: v.strip()
                                          for h, v in zip(header, values, strict=True)}))
    except csv.Error as error:
        problems.add(f"{path}: line {first + reader.line_num}: cannot read this row "
                     f"({error})")
    problems.raise_if_any()
    if not rows:
        raise InputError(f"{path}: the {what} has a header but no data rows")
    return rows, header


def decode_text(path: Path, data: bytes, what: str, save_as: str) -> str:
    """The text of an input file: UTF-8, with or without a byte-order mark (which some
    Windows editors and spreadsheets write). Anything else is an InputError naming the
    line of the first byte that cannot be read."""
    if data[:2] in (b"\xff\xfe", b"\xfe\xff"):
        raise InputError(f"{path}: the {what} is UTF-16 text; save it as {save_as}")
    if b"\x00" in data:  # UTF-8 text never holds a NUL byte: a binary or damaged file
        line = data[:data.index(b"\x00")].count(b"\n") + 1
        raise InputError(f"{path}: line {line}: the {what} holds a NUL byte (0x00), so it "
                         f"is not text; save it as {save_as}")
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        line = data[:error.start].count(b"\n") + 1
        raise InputError(f"{path}: line {line}: the {what} is not UTF-8 text (save it as "
                         f"{save_as}; byte {data[error.start]:#04x} cannot be read)") from None


def _other_separator(header_line: str, header: list[str]) -> str | None:
    """"';'" or "tab" when the header line is split more finely by that character than by
    commas: a spreadsheet saved with a regional list separator."""
    for character, name in ((";", "';'"), ("\t", "tab")):
        if len(header_line.split(character)) > len(header):
            return name
    return None


def number(path: Path, row: Row, column: str, problems: ProblemList, *,
           allow_empty: bool = False, positive: bool = False,
           non_negative: bool = False) -> float | None:
    """A numeric cell, or None (after recording a problem) when it is not valid: empty
    (unless allowed), not a number, not finite, of the wrong sign, or outside the range
    of its column in :data:`optimiser.io.limits.CSV_COLUMNS`."""
    text = row.cells.get(column, "")
    if text == "":
        if not allow_empty:
            problems.add(f"{path}: line {row.line}: column {column} is empty")
        return None
    try:
        value = float(text)
    except ValueError:
        problems.add(f"{path}: line {row.line}: column {column}: '{text}' is not a number")
        return None
    if not math.isfinite(value):
        problems.add(f"{path}: line {row.line}: column {column}: '{text}' is not finite")
        return None
    if positive and value <= 0:
        problems.add(f"{path}: line {row.line}: column {column} must be > 0, got {text}")
        return None
    if non_negative and value < 0:
        problems.add(f"{path}: line {row.line}: column {column} must be >= 0, got {text}")
        return None
    limit = CSV_COLUMNS.get(column)
    complaint = limit.message(value) if limit is not None else None
    if complaint:
        problems.add(f"{path}: line {row.line}: column {column}: {complaint}")
        return None
    return value
