"""The one exception type for bad input.

Everything the user can get wrong (a file, a settings key, a mineral name) raises
:class:`InputError`. The command-line shell turns it into one line on stderr and
exit status 2; any other exception is a program error and is allowed to fail loudly.
"""

from __future__ import annotations

import difflib
from collections.abc import Iterable
from pathlib import Path


class InputError(Exception):
    """Bad input, with the place it was found.

    Parameters
    ----------
    message
        What is wrong and, where it helps, what would be valid.
    source
        The file (or other source) the bad input came from, if any.
    where
        The place inside the source: ``"line 12"``, ``"key grains.threshold_deg"``.
    """

    def __init__(self, message: str, source: str | Path | None = None, where: str | None = None):
        self.message = message
        self.source = None if source is None else str(source)
        self.where = where
        super().__init__(self.one_line())

    def one_line(self) -> str:
        place = ", ".join(p for p in (self.source, self.where) if p)
        text = f"{place}: {self.message}" if place else self.message
        return " ".join(text.split())


def nearest(word: str, choices: Iterable[str]) -> str:
    """A ``" (did you mean 'x'?)"`` hint for a misspelt name, or an empty string."""
    choices = list(choices)
    lowered = {c.lower(): c for c in choices}
    hits = difflib.get_close_matches(word.lower(), list(lowered), n=1, cutoff=0.5)
    return f" (did you mean '{lowered[hits[0]]}'?)" if hits else ""
