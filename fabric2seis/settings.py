"""Settings of a sample: defaults, sidecar files, validation against the JSON schema.

Defaults are ``config/config.yaml`` of the project when run inside it, else the copy shipped with
the package (``fabric2seis/defaults.yaml``; a test keeps the two identical). A sample's settings
are the defaults with its sidecar (``<stem>.yaml`` beside it) or ``--settings FILE`` merged over
them, key by key. Every key is checked against ``settings_schema.yaml`` before any work is done;
an unknown key is an error that suggests the nearest valid one.
"""

from __future__ import annotations

import copy
import functools
import math
import sys
from pathlib import Path

import jsonschema
import yaml

from fabric2seis.errors import InputError, nearest

_HERE = Path(__file__).parent
#: PyYAML's safe loader with libyaml's parser where PyYAML has it: the same data, ten times faster
#: (the schema, and the mineral library's 23 files in ``elastic.minerals``: 0.24 s -> 0.03 s, paid by
#: every process)
FAST_SAFE_LOADER = getattr(yaml, "CSafeLoader", yaml.SafeLoader)
SCHEMA_FILE = _HERE / "settings_schema.yaml"
PACKAGED_DEFAULTS = _HERE / "defaults.yaml"
PROJECT_DEFAULTS = Path("config") / "config.yaml"


@functools.lru_cache(maxsize=1)
def schema() -> dict:
    """Load the JSON schema of the settings (``settings_schema.yaml``, cached).

    Returns
    -------
    dict
        The schema as a mapping.
    """
    return yaml.load(SCHEMA_FILE.read_text(), Loader=FAST_SAFE_LOADER)


def read_yaml(path: str | Path) -> dict:
    """Read a YAML mapping from a file; an empty file is an empty mapping.

    Parameters
    ----------
    path : str or Path
        The settings file.

    Returns
    -------
    dict
        Its keys and values.

    Raises
    ------
    InputError
        If the file cannot be read, is not UTF-8 or UTF-16 text, is not valid YAML (with line and
        column; a key repeated in one mapping and every Python tag count as not valid), or is not a
        mapping.
    """
    path = Path(path)
    try:
        data = yaml.load(settings_text(path), Loader=_UniqueKeyLoader)      # a SafeLoader: no Python tags
    except OSError as exc:
        raise InputError(f"cannot read settings ({exc.strerror})", path) from None
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        where = f"line {mark.line + 1}, column {mark.column + 1}" if mark else None
        raise InputError(f"not valid YAML ({getattr(exc, 'problem', exc)})", path, where) from None
    if data is None:
        return {}
    if not isinstance(data, dict):
        raise InputError("settings must be a YAML mapping of keys to values", path, "line 1")
    return data


def settings_text(path: Path) -> str:
    """Read the text of a settings file: UTF-8 (with or without a byte-order mark) or UTF-16 with its mark.

    Any other encoding is refused with the line and byte offset of the first byte that is not UTF-8
    (``ingest.io.text.decode``).

    Parameters
    ----------
    path : Path
        The settings file.

    Returns
    -------
    str
        Its text.

    Raises
    ------
    InputError
        If the text is in another encoding.
    OSError
        If the file cannot be read.
    """
    from fabric2seis.ingest.io.text import decode

    return decode(path.read_bytes(), path)


class _UniqueKeyLoader(yaml.SafeLoader):
    """PyYAML's safe loader, refusing a key repeated in one mapping (PyYAML keeps the last silently)."""

    def construct_mapping(self, node, deep=False):
        seen: dict = {}
        for key_node, _ in node.value:
            key = self.construct_object(key_node, deep=True)
            if isinstance(key, (str, int, float, bool)) and key in seen:
                raise yaml.constructor.ConstructorError(
                    None, None, f"'{key}' appears twice in one mapping (first on line {seen[key] + 1}); "
                    "only one can hold", key_node.start_mark)
            if isinstance(key, (str, int, float, bool)):
                seen[key] = key_node.start_mark.line
        return super().construct_mapping(node, deep)


def validate(settings: dict, source: str | Path | None = None, minerals_dir: str | Path | None = None) -> dict:
    """Check settings against the schema, plus the checks a schema cannot express.

    Parameters
    ----------
    settings : dict
        Settings to check.
    source : str or Path, optional
        Where they came from, for error messages.
    minerals_dir : str or Path, optional
        The user's mineral folder the poles of ``figures.poles`` may name minerals of; the
        settings' own ``minerals_dir`` if not given.

    Returns
    -------
    dict
        ``settings`` itself.

    Raises
    ------
    InputError
        Naming the key and what is valid: an unknown key (with the nearest valid one), a number
        that is not finite (YAML's ``.nan`` passes every range of a schema), a value the schema
        refuses, modal fractions that do not sum to 1 (within 1e-3), a lineation and
        foliation normal along the same sample axis, or a pole of ``figures.poles`` that
        ``fabric.poles.check_pole_setting`` refuses.
    """
    _check_keys(settings, schema(), "", source)
    _check_finite(settings, "", source)
    errors = sorted(jsonschema.Draft202012Validator(schema()).iter_errors(settings),
                    key=lambda e: list(e.absolute_path))
    if errors:
        e = errors[0]
        key = ".".join(str(p) for p in e.absolute_path) or "(top level)"
        raise InputError(f"{e.message}", source, f"key {key}")
    fractions = settings.get("modal_fractions") or {}
    if fractions and abs(sum(fractions.values()) - 1.0) > 1e-3:
        raise InputError(f"modal fractions must sum to 1 within 1e-3, they sum to "
                         f"{sum(fractions.values()):.4f}", source, "key modal_fractions")
    frame = settings.get("frame") or {}
    if "rotation" not in frame and frame.get("lineation", "+x")[1] == frame.get("foliation_normal", "+z")[1]:
        raise InputError("lineation and foliation normal must be different sample axes", source,
                         "key frame")
    poles = (settings.get("figures") or {}).get("poles")
    if poles:                      # minerals and their lattices: read only when poles are listed
        from fabric2seis.elastic.minerals import load_library
        from fabric2seis.fabric.poles import check_pole_setting

        folder = minerals_dir or settings.get("minerals_dir")
        if folder and not Path(folder).is_dir():     # the poles name minerals: their folder first
            raise InputError(f"no such folder of mineral files: {folder}", source or "the settings",
                             "key minerals_dir")
        check_pole_setting(poles, source, load_library([folder] if folder else []))
    return settings


def check_inside_project(key: str, value: str | Path, source: str | Path | None, allowed: bool = False,
                         project: str | Path | None = None) -> None:
    """Refuse a path written in a settings file that lies outside the project folder.

    The rule of the workflow's config files (``workflow.config.check_config_paths``), for one key
    of any settings file: a relative path is taken from the project folder (the folder the command
    runs in) and must stay inside it, and so must an absolute one, unless ``allowed``
    (``allow_outside_paths: true``). Paths typed on the command line are not checked.

    Parameters
    ----------
    key : str
        The settings key, for the message.
    value : str or Path
        The path as written.
    source : str or Path or None
        The settings file, for the message.
    allowed : bool
        ``allow_outside_paths`` of the settings.
    project : str or Path, optional
        The project folder (default: the current folder).

    Raises
    ------
    InputError
        Naming the file and key, if the path leaves the project and that is not allowed.
    """
    if allowed:
        return
    project = Path(project if project is not None else Path.cwd()).resolve()
    target = (project / str(value)).resolve()
    if target != project and project not in target.parents:
        raise InputError(f"{key} '{value}' lies outside the project folder {project}; give it on the command "
                         f"line (fabric2seis sample --minerals DIR), or set allow_outside_paths: true",
                         source, f"key {key}")


def _check_finite(data, key: str, source) -> None:
    """Refuse NaN and infinite numbers anywhere in the settings, naming the key (list items by index)."""
    if isinstance(data, dict):
        for k, v in data.items():
            _check_finite(v, f"{key}.{k}" if key else str(k), source)
    elif isinstance(data, list):
        for k, v in enumerate(data):
            _check_finite(v, f"{key}.{k}", source)
    elif isinstance(data, float) and not math.isfinite(data):
        raise InputError(f"{data} is not a finite number", source, f"key {key}")
    elif isinstance(data, int) and not isinstance(data, bool) and abs(data) > sys.float_info.max:
        raise InputError(f"{str(data)[:12]}... is not a finite number (too large for a float)", source, f"key {key}")


def _check_keys(data, node: dict, prefix: str, source) -> None:
    props = node.get("properties")
    if not isinstance(data, dict) or props is None or node.get("additionalProperties", True) is not False:
        return
    for key, value in data.items():
        if key not in props:
            raise InputError(f"unknown settings key '{prefix}{key}'{nearest(str(key), props)}; valid "
                             f"keys here: {', '.join(props)}", source, f"key {prefix}{key}")
        _check_keys(value, props[key], f"{prefix}{key}.", source)


def typed(settings: dict) -> dict:
    """Strings where the schema wants a number or a boolean, read as YAML scalars ("15" -> 15).

    Snakemake's ``--config key={a: 15}`` hands nested values over as strings; this restores their
    types before validation. Strings that do not read as the wanted type are left for the schema
    to refuse with its message.

    Parameters
    ----------
    settings : dict
        Settings, possibly with numbers and booleans written as strings.

    Returns
    -------
    dict
        A new mapping with those strings read as YAML scalars.
    """
    def walk(value, node):
        if isinstance(value, dict):
            props, extra = node.get("properties", {}), node.get("additionalProperties")
            return {k: walk(v, props.get(k, extra if isinstance(extra, dict) else {})) for k, v in value.items()}
        wanted = node.get("type")
        wanted = set(wanted) if isinstance(wanted, list) else {wanted}
        if isinstance(value, str) and wanted & {"number", "integer", "boolean", "null"} and "string" not in wanted:
            read = yaml.safe_load(value)
            if read is None or isinstance(read, (bool, int, float)):
                return read
        return value
    return walk(settings, schema())


def merge(base: dict, override: dict) -> dict:
    """Override ``base`` key by key, recursing into mappings (``field``, ``grains`` ...).

    ``phases`` and ``modal_fractions`` are replaced whole, not merged.

    Parameters
    ----------
    base : dict
        Settings to start from (not changed).
    override : dict
        Settings whose keys win.

    Returns
    -------
    dict
        A new, merged mapping.
    """
    out = copy.deepcopy(base)
    for key, value in override.items():
        if isinstance(value, dict) and isinstance(out.get(key), dict) and key not in ("phases", "modal_fractions"):
            out[key] = merge(out[key], value)
        else:
            out[key] = copy.deepcopy(value)
    return out


def defaults() -> dict:
    """Load the default settings: the project's config/config.yaml if present here, else the packaged copy.

    Returns
    -------
    dict
        Validated default settings.

    Raises
    ------
    InputError
        If the defaults file is not valid.
    """
    path = defaults_file()
    return validate(read_yaml(path), path)


def defaults_file() -> Path:
    """Name the file :func:`defaults` reads: config/config.yaml here if present, else the packaged copy.

    Returns
    -------
    Path
        The defaults file.
    """
    return PROJECT_DEFAULTS if PROJECT_DEFAULTS.is_file() else PACKAGED_DEFAULTS


def sidecar_of(input_path: str | Path) -> Path:
    """Name a sample's sidecar settings file: ``sample.ang`` -> ``sample.yaml`` (also ``sample.ang.gz``).

    Parameters
    ----------
    input_path : str or Path
        The EBSD file.

    Returns
    -------
    Path
        The sidecar beside it (which may not exist).
    """
    p = Path(input_path)
    name = p.name[:-3] if p.name.endswith(".gz") else p.name
    return p.with_name(Path(name).stem + ".yaml")


def settings_for(input_path: str | Path, settings_path: str | Path | None = None,
                 base: dict | None = None, minerals_dir: str | Path | None = None) -> tuple[dict, str | None]:
    """Gather the settings of one sample and the file they came from (None: defaults only).

    ``base`` replaces the defaults (the workflow passes its config, ``--config`` values included),
    merged over the defaults so that keys it leaves out keep their default values.
    ``minerals_dir`` (``fabric2seis sample --minerals DIR``) replaces the settings key of that
    name. A ``minerals_dir`` written in the sidecar, the settings file or the defaults must lie in
    the project folder unless ``allow_outside_paths`` is true (:func:`check_inside_project`);
    the workflow checks its own config files (``workflow.config.check_config_paths``).

    Parameters
    ----------
    input_path : str or Path
        The EBSD file (its sidecar is looked for beside it).
    settings_path : str or Path, optional
        A settings file to use instead of the sidecar; it must exist.
    base : dict, optional
        Settings to use instead of the defaults.
    minerals_dir : str or Path, optional
        A folder of the user's mineral files given on the command line; it must exist.

    Returns
    -------
    settings : dict
        Validated settings; ``minerals_dir`` is the folder used, or None.
    source : str or None
        The settings file merged over the base, or None.

    Raises
    ------
    InputError
        If a settings file cannot be read or is not valid, or the minerals folder does not exist
        or (written in a file) lies outside the project.
    """
    if minerals_dir is not None and not Path(minerals_dir).is_dir():
        raise InputError("no such folder of mineral files", minerals_dir, "option --minerals")
    from_files = base is None
    base = defaults() if base is None else validate(merge(defaults(), base), "the workflow's config")
    chosen = Path(settings_path) if settings_path else sidecar_of(input_path)
    has_file = settings_path is not None or chosen.is_file()
    own = read_yaml(chosen) if has_file else {}
    folder = minerals_dir or _text(own.get("minerals_dir")) or base.get("minerals_dir")
    settings, source = base, None
    if has_file:
        validate(own, chosen, folder)
        settings, source = validate(merge(base, own), chosen, folder), str(chosen)
    if minerals_dir is not None:
        settings = {**settings, "minerals_dir": str(minerals_dir)}
    elif settings.get("minerals_dir"):
        written = chosen if own.get("minerals_dir") else (defaults_file() if from_files else None)
        if written is not None:
            check_inside_project("minerals_dir", settings["minerals_dir"], written,
                                 settings.get("allow_outside_paths") is True)
        if not Path(settings["minerals_dir"]).is_dir():
            raise InputError(f"no such folder of mineral files: {settings['minerals_dir']}",
                             written or "the workflow's config", "key minerals_dir")
    return settings, source


def _text(value) -> str | None:
    """A string value of a settings file, else None (the schema refuses other types later)."""
    return value if isinstance(value, str) and value else None
