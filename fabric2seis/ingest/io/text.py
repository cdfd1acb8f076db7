"""Helpers the text readers share: decompression, sniffing binary files, locating bad rows."""

from __future__ import annotations

import contextlib
import csv
import gzip
import io
import shutil
import tempfile
from collections import Counter
from collections.abc import Iterable, Iterator
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
        _check_text(path, _head(path))
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
        _check_text(path, _head(plain))
        yield plain


def _head(path: Path) -> bytes:
    """The first 64 KiB of a file (closed at once)."""
    with path.open("rb") as f:
        return f.read(65536)


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


def decode(raw: bytes, source) -> str:
    """The text of a file's bytes: UTF-8 (with or without a byte-order mark) or UTF-16 with its mark.

    Anything else is refused rather than guessed: every byte sequence is valid Latin-1, so a
    wrong guess would pass unnoticed and change names (of phases, stations, minerals) silently.

    Parameters
    ----------
    raw : bytes
        The file's contents.
    source : str or path
        The file, named in error messages.

    Returns
    -------
    str
        The text.

    Raises
    ------
    InputError
        Naming the line and byte offset of the first byte that is not UTF-8.
    """
    if raw.startswith((b"\xff\xfe", b"\xfe\xff")):
        try:
            return raw.decode("utf-16")
        except UnicodeDecodeError as exc:
            raise InputError(f"not readable as UTF-16 text, though it starts like it (byte offset {exc.start})",
                             source) from None
    nul, newline = raw.find(b"\x00"), b"\n"
    if nul >= 0:            # valid UTF-8, but no text holds it: UTF-16 without its mark, or binary data
        raise InputError(f"not UTF-8 text: a NUL byte at byte offset {nul} (UTF-16 without its byte-order mark, "
                         "or binary data); save the file as UTF-8", source,
                         f"line {raw.count(newline, 0, nul) + 1}")
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw.count(newline, 0, exc.start) + 1
        raise InputError(f"not UTF-8 text: byte 0x{raw[exc.start]:02x} at byte offset {exc.start} (another "
                         "encoding, such as Latin-1 or UTF-16 without its byte-order mark); save the file as UTF-8",
                         source, f"line {line}") from None


def csv_row_longer_than_header(lines: Iterable[str]) -> str | None:
    """Name the first CSV line with more values than the header line (blank lines skipped), if any.

    pandas takes the first column of a table whose rows are one value longer than its header for
    an index, which shifts every column; the readers refuse such a table naming this line.

    Parameters
    ----------
    lines : iterable of str
        The table's lines (an open text file, or ``io.StringIO``).

    Returns
    -------
    str or None
        ``"line N"``, or None.
    """
    reader = csv.reader(lines)
    header: list[str] | None = None
    for row in reader:
        if not any(field.strip() for field in row):
            continue
        if header is None:
            header = row
        elif len(row) > len(header):
            return f"line {reader.line_num}"
    return None


def csv_line_of_row(text: str, row: int) -> str:
    """Name the line of a 0-based data row of a CSV table's text, counting the blank lines pandas skips.

    Parameters
    ----------
    text : str
        The table's text, header first.
    row : int
        0-based data row.

    Returns
    -------
    str
        ``"line N"``, or ``"data row R"`` if the text has fewer rows.
    """
    numbers = [k for k, line in enumerate(text.splitlines(), start=1) if line.strip()]
    return f"line {numbers[row + 1]}" if row + 1 < len(numbers) else f"data row {row + 1}"


def _data_lines(path: Path, first_data_line: int, comment: str) -> Iterator[tuple[int, list[str]]]:
    """(1-based line number, whitespace-separated fields) of every data line."""
    with path.open("r", errors="replace") as f:
        for number, line in enumerate(f, start=1):
            if number < first_data_line or not line.strip() or line.lstrip().startswith(comment):
                continue
            yield number, line.split()


def _is_number(text: str) -> bool:
    """Whether the C parser reads ``text`` as a number (plain ASCII: Python's float also takes
    other scripts' digits and underscores)."""
    if not text.isascii() or "_" in text:
        return False
    try:
        float(text)
    except ValueError:
        return False
    return True


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
        Values a row must have; None takes the count most rows have (so that a bad first row is
        the one named).
    comment : str
        Lines starting with it are skipped.

    Returns
    -------
    str
        Description of the first bad line, or ``""``.
    """
    if n_columns is None:
        counts = Counter(len(fields) for _, fields in _data_lines(path, first_data_line, comment))
        n_columns = counts.most_common(1)[0][0] if counts else 0
    for number, fields in _data_lines(path, first_data_line, comment):
        if len(fields) != n_columns:
            return f"line {number}: {len(fields)} values, expected {n_columns} (truncated or extra row?)"
        for column, value in enumerate(fields, start=1):
            if not _is_number(value):
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
                 min_columns: int = 1, columns: int | None = None) -> np.ndarray:
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
    columns : int, optional
        Values every row has, where the header says (error messages then name the row that
        differs from it, not from the row count most rows have).

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
        place, _, problem = find_bad_row(path, first_data_line, columns, comment or "\x00").partition(": ")
        raise InputError(problem or "the data rows are not all numbers", source, place or None) from None
    values = frame.to_numpy()
    if values.shape[0] == 0:
        raise InputError("the file has a header but no data rows", source)
    if values.shape[1] < min_columns:
        raise InputError(f"{values.shape[1]} columns, a row of this format has at least {min_columns}", source,
                         line_of_row(path, first_data_line, 0, comment))
    short = np.flatnonzero(np.isnan(values).any(axis=1))
    if len(short):      # a short row is filled with NaN by the parser; so is a written 'nan'
        place, _, problem = find_bad_row(path, first_data_line, columns, comment or "\x00").partition(": ")
        where = line_of_row(path, first_data_line, int(short[0]), comment)
        raise InputError(problem or "a value is not a number (nan)", source, place if problem else where)
    return values
