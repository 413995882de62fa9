"""CSV data tables of a study: headers with units, cells read as numbers with row numbers.

A table is a comma-separated file. Lines starting with ``#`` are comments (the demo
tables say there that the data are invented); blank lines are skipped. The first
other line is the header. A header cell names a column and may give its unit after
a slash with spaces around it, in the IUPAC way of writing a quantity divided by its
unit (IUPAC Green Book, 3rd ed., 2007, sec. 1.3)::

    time / min, Prod / mM, A400, A400_sd

Cells are numbers; an empty cell means "not measured at this time" and is kept as
missing (it is never filled in). Errors name the file, the line and the column.

Examples
--------
>>> t = parse_table("# invented\\ntime / min, P / mM\\n0, 0\\n1.5, 2.5\\n", file="r1.csv")
>>> t.column("P").unit, t.numbers("time").tolist()
('mM', [0.0, 1.5])
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from mechfit.errors import StudyError


@dataclass(frozen=True)
class Column:
    """A column of a table: its name, its unit as written (or ``None``), its position."""

    name: str
    unit: str | None
    index: int
    header: str


@dataclass(frozen=True)
class Table:
    """A parsed CSV table.

    Attributes
    ----------
    file
        The file name as shown in messages.
    columns
        The columns in file order.
    rows
        ``(line_number, cells)`` for each data line (cells stripped).
    """

    file: str
    columns: tuple[Column, ...]
    rows: tuple[tuple[int, tuple[str, ...]], ...]

    @property
    def names(self) -> tuple[str, ...]:
        """Column names in file order."""
        return tuple(c.name for c in self.columns)

    def has(self, name: str) -> bool:
        """True if the table has a column of this name."""
        return name in self.names

    def column(self, name: str) -> Column:
        """The column called ``name``; a :class:`StudyError` listing the columns if none."""
        for c in self.columns:
            if c.name == name:
                return c
        raise StudyError(
            f"{self.file}: no column '{name}'; the columns are: {', '.join(self.names)}"
        )

    def text(self, name: str) -> list[str]:
        """The cells of a column as text."""
        i = self.column(name).index
        return [cells[i] for _, cells in self.rows]

    def numbers(self, name: str, *, missing: bool = False) -> np.ndarray:
        """The cells of a column as floats.

        Parameters
        ----------
        missing
            Allow empty cells (returned as NaN, meaning not measured).

        Raises
        ------
        StudyError
            For a cell that is not a finite number (naming file, line and column),
            or an empty cell where ``missing`` is False.
        """
        i = self.column(name).index
        out = np.empty(len(self.rows))
        for k, (line, cells) in enumerate(self.rows):
            cell = cells[i]
            if cell == "":
                if not missing:
                    raise StudyError(f"{self.file}:{line}: column '{name}' is empty; "
                                     "expected a number")
                out[k] = np.nan
                continue
            try:
                value = float(cell)
            except ValueError:
                raise StudyError(f"{self.file}:{line}: column '{name}': '{cell}' is not "
                                 "a number") from None
            if not math.isfinite(value):
                raise StudyError(f"{self.file}:{line}: column '{name}': '{cell}' is not "
                                 "a finite number (leave the cell empty if nothing was "
                                 "measured)")
            out[k] = value
        return out

    def lines(self) -> np.ndarray:
        """The file line number of each row."""
        return np.array([line for line, _ in self.rows], dtype=int)

    def select(self, keep: np.ndarray) -> Table:
        """A table with only the rows where ``keep`` is true."""
        rows = tuple(r for r, k in zip(self.rows, keep, strict=True) if k)
        return Table(self.file, self.columns, rows)


def _header_cell(cell: str, index: int, file: str, line: int) -> Column:
    text = cell.strip()
    if " / " in text:
        name, unit = (part.strip() for part in text.split(" / ", 1))
    else:
        name, unit = text, None
    if not name:
        raise StudyError(f"{file}:{line}: header cell {index + 1} has no column name")
    if (name.endswith("]") and " [" in name) or (name.endswith(")") and " (" in name):
        raise StudyError(
            f"{file}:{line}: header '{text}': write the unit after ' / ', "
            "as in 'time / min'"
        )
    return Column(name, unit, index, text)


def parse_table(text: str, *, file: str = "<table>") -> Table:
    """Parse CSV text into a :class:`Table` (see the module notes for the format)."""
    header: tuple[Column, ...] | None = None
    rows: list[tuple[int, tuple[str, ...]]] = []
    reader = csv.reader(io.StringIO(text))
    for cells in reader:
        line = reader.line_num
        if not cells or all(c.strip() == "" for c in cells):
            continue
        if cells[0].lstrip().startswith("#"):
            continue
        cells = [c.strip() for c in cells]
        if header is None:
            header = tuple(_header_cell(c, i, file, line) for i, c in enumerate(cells))
            seen: set[str] = set()
            for col in header:
                if col.name in seen:
                    raise StudyError(f"{file}:{line}: column '{col.name}' appears twice "
                                     "in the header")
                seen.add(col.name)
            continue
        if len(cells) != len(header):
            raise StudyError(f"{file}:{line}: {len(cells)} cells, but the header has "
                             f"{len(header)} columns")
        rows.append((line, tuple(cells)))
    if header is None:
        raise StudyError(f"{file}: the table is empty; expected a header line such as "
                         "'time / min, P / mM'")
    return Table(file, header, tuple(rows))


def read_table(path: str | Path, *, shown: str | None = None) -> Table:
    """Read a CSV file into a :class:`Table`.

    Parameters
    ----------
    path
        The file to read.
    shown
        How to name the file in messages (default: ``path`` as given).

    Raises
    ------
    StudyError
        If the file is missing or unreadable, or its text is malformed.
    """
    name = shown if shown is not None else str(path)
    try:
        text = Path(path).read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise StudyError(f"{name}: data table not found") from None
    except (OSError, UnicodeDecodeError) as err:
        raise StudyError(f"{name}: cannot read the data table ({err})") from None
    return parse_table(text, file=name)
