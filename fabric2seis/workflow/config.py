"""The workflow's config files: read safely before Snakemake reads them, and paths kept in the project.

The workflow's config is the project's ``config/config.yaml`` when the folder it runs in has one,
else the packaged defaults (:func:`base_config_file`); config files given on the command line go
over it. Snakemake reads config files with its own YAML loader, which evaluates templates in a file
that asks for them (``__use_yte__: true``). The Snakefile therefore reads that file (and
``fabric2seis suite`` every ``--configfile`` and ``--config FILE``) first with
:func:`check_config_files`: plain YAML (no Python tags such as ``!!python/object``), and only the
keys of the settings schema.

Paths written in a config file (``samples_dir``, ``results_dir``) must lie inside the project
folder (the folder the workflow runs in) unless the config sets ``allow_outside_paths: true``.
Paths given on the command line (``fabric2seis suite --samples/--results``, ``snakemake --config
results_dir=...``) are the user's explicit choice and may lie anywhere.
"""

from __future__ import annotations

import contextlib
import sys
from collections.abc import Iterable, Iterator, Mapping
from pathlib import Path

from fabric2seis.errors import InputError
from fabric2seis.settings import PACKAGED_DEFAULTS, PROJECT_DEFAULTS, read_yaml, validate

#: the settings that are paths
PATH_KEYS = ("samples_dir", "results_dir", "minerals_dir")


def base_config_file() -> Path:
    """The workflow's config file, under those of the command line.

    Returns
    -------
    Path
        ``config/config.yaml`` if the current folder (the project) has one, else the packaged
        defaults ``fabric2seis/defaults.yaml`` (the same choice as ``settings.defaults``).
    """
    return PROJECT_DEFAULTS if PROJECT_DEFAULTS.is_file() else PACKAGED_DEFAULTS


def check_config_files(paths: Iterable[str | Path]) -> list[tuple[Path, dict]]:
    """Read config files as plain YAML and check their keys against the settings schema.

    Parameters
    ----------
    paths : iterable of str or Path
        The config files, in the order they apply; missing ones are skipped.

    Returns
    -------
    list of (Path, dict)
        Each existing file with its contents.

    Raises
    ------
    InputError
        If a file is not plain YAML (a Python tag, bad syntax: with line and column), not UTF-8 or
        UTF-16 text, or holds a key or value the schema refuses.
    """
    found = []
    for path in map(Path, paths):
        if path.is_file():
            data = read_yaml(path)
            found.append((path, validate(data, path)))
    return found


def check_config_paths(config: Mapping, files: list[tuple[Path, dict]], given: Mapping,
                       project: str | Path | None = None) -> None:
    """Refuse a path written in a config file that lies outside the project folder.

    Parameters
    ----------
    config : mapping
        The workflow's config as used.
    files : list of (Path, dict)
        The config files and their contents (:func:`check_config_files`), in the order they apply.
    given : mapping
        The keys given on the command line (``snakemake --config``): never refused.
    project : str or Path, optional
        The project folder (default: the current folder).

    Raises
    ------
    InputError
        Naming the file and key, unless ``allow_outside_paths`` is true.
    """
    if config.get("allow_outside_paths") is True:
        return
    project = Path(project if project is not None else Path.cwd()).resolve()
    for key in PATH_KEYS:
        sources = [path for path, data in files if key in data]
        if key in given or not sources or key not in config:
            continue
        target = (project / str(config[key])).resolve()
        if target != project and project not in target.parents:
            raise InputError(f"{key} '{config[key]}' lies outside the project folder {project}; give it on the "
                             f"command line (fabric2seis suite --samples/--results, or snakemake --config "
                             f"{key}=...), or set allow_outside_paths: true", sources[-1], f"key {key}")


def split_config_files(arguments: list[str]) -> tuple[list[str], list[str]]:
    """The files named by ``--configfile`` / ``--configfiles`` among Snakemake's arguments, and the rest.

    Snakemake keeps only the last ``--configfile`` it is given, so ``fabric2seis suite`` hands
    all the files over in one.

    Parameters
    ----------
    arguments : list of str
        Arguments handed to Snakemake.

    Returns
    -------
    files : list of str
        The config files, in order.
    rest : list of str
        The other arguments, in order.
    """
    files, rest, k = [], [], 0
    while k < len(arguments):
        word = arguments[k]
        k += 1
        if word.split("=", 1)[0] in ("--configfile", "--configfiles"):
            if "=" in word:
                files.append(word.split("=", 1)[1])
            while k < len(arguments) and not arguments[k].startswith("-"):
                files.append(arguments[k])
                k += 1
        else:
            rest.append(word)
    return files, rest


@contextlib.contextmanager
def stop_on_bad_input() -> Iterator[None]:
    """In the Snakefile: bad input ends the run with one line on stderr and exit status 2.

    Yields
    ------
    None
        Nothing.

    Raises
    ------
    SystemExit
        Status 2, when the block raises :class:`InputError`.
    """
    try:
        yield
    except InputError as exc:
        print(f"fabric2seis workflow: error: {exc.one_line()}", file=sys.stderr)
        raise SystemExit(2) from None
