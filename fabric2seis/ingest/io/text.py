"""Helpers the text readers share: decompression, sniffing binary files, locating bad rows."""

from __future__ import annotations

import contextlib
import gzip
import io
import shutil
import tempfile
from collections.abc import Iterator
from pathlib import Path

import numpy as np

from fabric2seis.errors import InputError


@contextlib.contextmanager
def plain_text_file(path: Path, compressed: bool) -> Iterator[Path]:
    """Give the path of an uncompressed copy (for .gz), after checking the file is non-empty text.

    Parameters
    ----------
    path : Path
        The file.
    compressed : bool
        Whether it is gzip-compressed; the copy is removed on leaving the block.

    Yields
    ------
    Path
        ``path`` itself, or the decompressed copy.

    Raises
    ------
    InputError
        If the file (or its decompressed contents) is empty, cannot be decompressed, or is binary.
    """
    if path.stat().st_size == 0:
        raise InputError("the file is empty", path)
    if not compressed:
        _check_text(path, path.open("rb").read(65536))
        yield path
        return
    with tempfile.TemporaryDirectory(prefix="fabric2seis-") as tmp:
        plain = Path(tmp) / path.name[:-3]
        try:
            with gzip.open(path, "rb") as src, plain.open("wb") as dst:
                shutil.copyfileobj(src, dst)
        except (OSError, EOFError) as exc:
            raise InputError(f"cannot decompress ({exc})", path) from None
        if plain.stat().st_size == 0:
            raise InputError("the file is empty once decompressed", path)
        _check_text(path, plain.open("rb").read(65536))
        yield plain


def _check_text(path: Path, head: bytes) -> None:
    if b"\x00" in head:
        raise InputError("this is not a text file (it contains binary data)", path)
    try:
        head.decode("utf-8")
    except UnicodeDecodeError as exc:
        if exc.start < len(head) - 4:  # not just a character cut at the 64 KiB boundary
            control = sum(b < 9 or 13 < b < 32 for b in head)
            if control > len(head) // 100:
                raise InputError("this is not a text file (it contains binary data)", path) from None


def find_bad_row(path: Path, first_data_line: int, n_columns: int | None, comment: str = "#") -> str:
    """Describe the first data line that is not ``n_columns`` numbers (for error messages).

    ``first_data_line`` is 1-based. Returns e.g. ``"line 12: 7 values, expected 10"``, or an
    empty string if every line is fine.

    Parameters
    ----------
    path : Path
        The (plain text) file.
    first_data_line : int
        1-based number of the first data line.
    n_columns : int or None
        Values a row must have; None takes the count of the first data row.
    comment : str
        Lines starting with it are skipped.

    Returns
    -------
    str
        Description of the first bad line, or ``""``.
    """
    with path.open("r", errors="replace") as f:
        for number, line in enumerate(f, start=1):
            if number < first_data_line or not line.strip() or line.lstrip().startswith(comment):
                continue
            fields = line.split()
            if n_columns is None:
                n_columns = len(fields)
            if len(fields) != n_columns:
                return f"line {number}: {len(fields)} values, expected {n_columns} (truncated or extra row?)"
            for column, value in enumerate(fields, start=1):
                try:
                    float(value)
                except ValueError:
                    return f"line {number}, column {column}: '{value[:20]}' is not a number"
    return ""


def quiet(func, *args, **kwargs):
    """Call a library function with its printed chatter swallowed (orix prints while reading).

    Parameters
    ----------
    func : callable
        The function.
    *args, **kwargs
        Its arguments.

    Returns
    -------
    object
        What ``func`` returns.
    """
    with contextlib.redirect_stdout(io.StringIO()):
        return func(*args, **kwargs)


def line_of_row(path: Path, first_data_line: int, row: int, comment: str | None = "#") -> str:
    """Name the file line of a 0-based data row (blank and comment lines skipped, as when reading).

    Parameters
    ----------
    path : Path
        The (plain text) file.
    first_data_line : int
        1-based number of the first data line.
    row : int
        0-based data row.
    comment : str or None
        Lines starting with it are skipped.

    Returns
    -------
    str
        ``"line N"``, or ``"data row R"`` if the file has fewer rows.
    """
    count = -1
    with path.open("r", errors="replace") as f:
        for number, line in enumerate(f, start=1):
            if number < first_data_line or not line.strip() or (comment and line.lstrip().startswith(comment)):
                continue
            count += 1
            if count == row:
                return f"line {number}"
    return f"data row {row + 1}"


def read_numbers(path: Path, first_data_line: int, source: Path, comment: str | None = "#",
                 min_columns: int = 1) -> np.ndarray:
    """Every data row from ``first_data_line`` (1-based) on, as an (N, C) float array.

    One pass of pandas' C parser over whitespace-separated numbers. A row with another count of
    values than the first, a value that is not a number, or no data rows at all raise
    InputError naming ``source`` and the line.

    Parameters
    ----------
    path : Path
        The (plain text) file.
    first_data_line : int
        1-based number of the first data line.
    source : Path
        The file as the user gave it, for error messages.
    comment : str or None
        Lines starting with it are skipped.
    min_columns : int
        Fewest values a row of the format has.

    Returns
    -------
    numpy.ndarray, shape (N, C)
        The numbers, float64.

    Raises
    ------
    InputError
        As described above, or if rows have fewer than ``min_columns`` values.
    """
    import pandas as pd

    try:
        frame = pd.read_csv(path, sep=r"\s+", header=None, skiprows=first_data_line - 1, comment=comment,
                            dtype=np.float64, engine="c", skip_blank_lines=True)
    except pd.errors.EmptyDataError:
        raise InputError("the file has a header but no data rows", source) from None
    except (ValueError, pd.errors.ParserError):
        problem = find_bad_row(path, first_data_line, None, comment or "\x00")
        raise InputError(problem or "the data rows are not all numbers", source) from None
    values = frame.to_numpy()
    if values.shape[0] == 0:
        raise InputError("the file has a header but no data rows", source)
    if values.shape[1] < min_columns:
        raise InputError(f"{values.shape[1]} columns, a row of this format has at least {min_columns}", source,
                         line_of_row(path, first_data_line, 0, comment))
    short = np.flatnonzero(np.isnan(values).any(axis=1))
    if len(short):      # a short row is filled with NaN by the parser; so is a written 'nan'
        problem = find_bad_row(path, first_data_line, values.shape[1], comment or "\x00")
        where = line_of_row(path, first_data_line, int(short[0]), comment)
        raise InputError(problem or "a value is not a number (nan)", source, None if problem else where)
    return values
