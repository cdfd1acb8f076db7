"""A starter project for ``fabric2seis init``: a config, an example sidecar, a measurements template.

The config is the packaged defaults (``fabric2seis/defaults.yaml``, every key explained beside it)
with the samples read from ``samples/``; the other files are in ``starter/`` beside this module.
Nothing is ever written over: a folder that already holds one of the files is refused whole.
"""

from __future__ import annotations

import re
from pathlib import Path

from fabric2seis.errors import InputError
from fabric2seis.settings import PACKAGED_DEFAULTS

STARTER = Path(__file__).resolve().parent / "starter"
#: the project's files (relative to its folder) and where each one's text comes from
FILES = {
    "config/config.yaml": PACKAGED_DEFAULTS,
    "samples/example.yaml": STARTER / "example.yaml",
    "field_measurements_template.csv": STARTER / "field_measurements_template.csv",
    "README.txt": STARTER / "README.txt",
}
CONFIG_HEADER = "# The settings of this fabric2seis project, from the packaged defaults (`fabric2seis init`).\n"


def starter_texts() -> dict[str, str]:
    """The text of every file of a starter project, by path relative to the project folder.

    Returns
    -------
    dict of str to str
        ``config/config.yaml`` (the packaged defaults, with ``samples_dir: samples``),
        ``samples/example.yaml``, ``field_measurements_template.csv`` and ``README.txt``.
    """
    texts = {name: source.read_text(encoding="utf-8") for name, source in FILES.items()}
    config = re.sub(r"(?m)^samples_dir:[^#\n]*", "samples_dir: samples", texts["config/config.yaml"], count=1)
    texts["config/config.yaml"] = CONFIG_HEADER + config
    return texts


def write_starter_project(folder: str | Path) -> list[Path]:
    """Write a starter project into ``folder`` (created if missing), never over an existing file.

    Parameters
    ----------
    folder : str or Path
        The project folder.

    Returns
    -------
    list of Path
        The files written.

    Raises
    ------
    InputError
        If ``folder`` is a file, one of the project's files already exists (then nothing is
        written), or the folder cannot be written (then what was written is removed).
    """
    folder = Path(folder)
    if folder.exists() and not folder.is_dir():
        raise InputError("not a folder: fabric2seis init writes a project into a folder", folder)
    texts = starter_texts()
    for name in texts:
        if (folder / name).exists():
            raise InputError("already exists; fabric2seis init writes only new files (choose another folder)",
                             folder / name)
    written: list[Path] = []
    try:
        for name, text in texts.items():
            path = folder / name
            path.parent.mkdir(parents=True, exist_ok=True)
            with path.open("x", encoding="utf-8") as f:     # "x": never over a file made meanwhile
                written.append(path)
                f.write(text)
    except OSError as exc:
        for path in written:
            path.unlink(missing_ok=True)
        raise InputError(f"cannot write the project ({exc.strerror or exc})", exc.filename or folder) from None
    return written
