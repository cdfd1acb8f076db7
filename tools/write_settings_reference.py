"""Write docs/settings_reference.md: every settings key with its type, allowed values, default and meaning.

    python tools/write_settings_reference.py          # rewrite the file
    python tools/write_settings_reference.py --check  # exit 1 if the file on disk is out of date

Everything comes from two files of the package: ``fabric2seis/settings_schema.yaml`` (types,
ranges, allowed values, and each key's ``description``) and ``fabric2seis/defaults.yaml`` (the
defaults). A key whose schema node has no ``description`` takes the comment of its line in
defaults.yaml (or the comment block just above it), else that of its line in the schema; a key
with none is written with ``MISSING_DESCRIPTION``, which ``tests/test_docs.py`` refuses. Run it
again after any change to either file; ``tests/test_docs.py`` fails while the file on disk differs
from what this writes.
"""

from __future__ import annotations

import argparse
import re
import sys
from pathlib import Path

import yaml

ROOT = Path(__file__).resolve().parents[1]
SCHEMA = ROOT / "fabric2seis" / "settings_schema.yaml"
DEFAULTS = ROOT / "fabric2seis" / "defaults.yaml"
OUTPUT = ROOT / "docs" / "settings_reference.md"
MISSING_DESCRIPTION = "(no description: add one to settings_schema.yaml)"
UNSET = object()

HEADER = """# Settings reference

<!-- Written by tools/write_settings_reference.py from fabric2seis/settings_schema.yaml and
fabric2seis/defaults.yaml: do not edit by hand; rerun the tool after changing either file. -->

Every key a sidecar file (`<stem>.yaml` beside the EBSD export), `--settings FILE` or
`config/config.yaml` may hold. All are optional: a key left out takes the default shown. Nested keys
are written with dots: `odf.halfwidth_deg` is `halfwidth_deg` inside the `odf` mapping,

```yaml
odf:
  halfwidth_deg: 15
```

A sidecar's mappings merge into the defaults key by key (`grains: {min_pixels: 2}` keeps the default
`threshold_deg`); `phases` and `modal_fractions` are replaced whole. Unknown keys and values outside
the ranges below are refused before any work, with one line naming the file and the key (exit
status 2). The user guide (`docs/user_guide.md`) explains how the keys work together;
`config/README.md` adds notes on memory limits and the workflow.

Ranges: `0 < x <= 62` means greater than 0 and at most 62. "text" is a YAML string, "number" any
finite number, "integer" a whole number, "yes/no" `true` or `false`, "null" YAML's `null` (or an
empty value).

| key | type and allowed values | default | meaning |
|---|---|---|---|
"""


def _number(value) -> str:
    return f"{value:g}" if isinstance(value, float) else str(value)


def _range(node: dict) -> str:
    low = (f"{_number(node['exclusiveMinimum'])} < " if "exclusiveMinimum" in node
           else f"{_number(node['minimum'])} <= " if "minimum" in node else "")
    high = (f" < {_number(node['exclusiveMaximum'])}" if "exclusiveMaximum" in node
            else f" <= {_number(node['maximum'])}" if "maximum" in node else "")
    if low and not high:                  # one-sided: "x >= 1" reads better than "1 <= x"
        bound, sign = low.split(" ", 1)
        return f"x {sign.strip().replace('<', '>')} {bound}"
    return f"{low}x{high}" if low or high else ""


def _yaml_value(value) -> str:
    """A value as one would write it in a settings file (flow style)."""
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)):
        return _number(value) if not isinstance(value, float) or value != int(value) else f"{value:.1f}"
    if isinstance(value, str):
        return f'"{value}"' if re.search(r"[^A-Za-z0-9_.]", value) or value in ("", "null", "true", "false") \
            else value
    if isinstance(value, list):
        return "[" + ", ".join(_yaml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        return "{" + ", ".join(f"{k}: {_yaml_value(v)}" for k, v in value.items()) + "}"
    return str(value)


def describe_type(node: dict) -> str:
    """The type and allowed values of one schema node, in words."""
    if "enum" in node:
        return "one of " + ", ".join(f"`{_yaml_value(v)}`" for v in node["enum"])
    for word in ("anyOf", "oneOf"):
        if word in node and "type" not in node:
            return " or ".join(describe_type(option) for option in node[word])
    kinds = node.get("type")
    kinds = kinds if isinstance(kinds, list) else [kinds] if kinds else []
    parts = [_describe_kind(kind, node) for kind in kinds if kind != "null"]
    if "null" in kinds:
        parts.append("null")
    return " or ".join(p for p in parts if p) or "any value"


def _describe_kind(kind: str, node: dict) -> str:
    if kind in ("number", "integer"):
        bounds = _range(node)
        return f"{kind} {bounds}" if bounds else kind
    if kind == "string":
        return "text" + (f" (at least {node['minLength']} character)" if node.get("minLength") == 1 else
                         f" (at least {node['minLength']} characters)" if "minLength" in node else "") + \
            (f" (at most {node['maxLength']} characters)" if "maxLength" in node else "")
    if kind == "boolean":
        return "yes/no"
    if kind == "array":
        return _describe_array(node)
    if kind == "object":
        extra = node.get("additionalProperties")
        if "properties" in node:
            return "mapping (keys below)" if extra is False else "mapping"
        if isinstance(extra, dict):
            return f"mapping of name to {describe_type(extra)}"
        return "mapping"
    return kind


def _describe_array(node: dict) -> str:
    low, high = node.get("minItems"), node.get("maxItems")
    count = ("" if low is None and high is None else f"{low}" if low == high
             else f"{low} to {high}" if low and high is not None else f"up to {high}" if high is not None
             else f"{low} or more")
    item = node.get("items", {})
    if item.get("oneOf") and all("properties" in option for option in item["oneOf"]):
        what = "entries, each one of: " + "; ".join(_describe_entry(option) for option in item["oneOf"])
    elif "properties" in item:
        what = "entries " + _describe_entry(item)
    else:
        what = "items, each " + describe_type(item)
    unique = ", no repeats" if node.get("uniqueItems") else ""
    return f"list of {count + ' ' if count else ''}{what}{unique}"


def _describe_entry(node: dict) -> str:
    """A mapping inside a list: its keys, the required ones marked."""
    required = set(node.get("required", []))
    keys = [f"{name}{'' if name in required else ' (optional)'}: {describe_type(sub)}"
            for name, sub in node["properties"].items()]
    either = [option["required"] for option in node.get("oneOf", []) if "required" in option]
    if either:
        keys.append("exactly one of " + ", ".join("/".join(r) for r in either))
    return "{" + ", ".join(keys) + "}"


def default_comments(text: str) -> dict[str, str]:
    """The comment of each key's line in defaults.yaml (with the comment lines that continue it),
    or else the block of comment lines just above the key, by dotted key."""
    comments: dict[str, str] = {}
    stack: list[tuple[int, str]] = []
    above: list[str] = []
    lines = text.splitlines()
    consumed: set[int] = set()            # comment lines that continue a key's own comment
    for i, line in enumerate(lines):
        stripped = line.strip()
        if i in consumed:
            continue
        if not stripped:
            above = []
            continue
        if stripped.startswith("#"):
            above.append(stripped.lstrip("#").strip())
            continue
        match = re.match(r"^(\s*)([A-Za-z_][A-Za-z0-9_]*):(.*)$", line)
        if not match:
            above = []
            continue
        indent, key, rest = len(match.group(1)), match.group(2), match.group(3)
        stack = [(n, k) for n, k in stack if n < indent] + [(indent, key)]
        path = ".".join(k for _, k in stack)
        trailing = []
        if "#" in rest:
            trailing.append(rest.split("#", 1)[1].strip())
            column = line.index("#")
            for j, follow in enumerate(lines[i + 1:], start=i + 1):
                if follow.strip().startswith("#") and follow.index("#") == column:
                    trailing.append(follow.strip().lstrip("#").strip())
                    consumed.add(j)
                else:
                    break
        text_of_key = " ".join(trailing) if trailing else " ".join(above)
        if text_of_key:
            comments[path] = text_of_key
        above = []
    return comments


def _lookup(defaults, path: list[str]):
    node = defaults
    for key in path:
        if not isinstance(node, dict) or key not in node:
            return UNSET
        node = node[key]
    return node


def rows(schema: dict, defaults: dict, comments: dict[str, str]) -> list[tuple[str, str, str, str]]:
    """One (key, type, default, meaning) row per key of the schema, depth first in schema order."""
    out = []

    def walk(props: dict, prefix: list[str]) -> None:
        for name, node in props.items():
            path = [*prefix, name]
            dotted = ".".join(path)
            default = _lookup(defaults, path)
            if default is UNSET:
                parent = _lookup(defaults, path[:-1]) if prefix else UNSET
                shown = "unset" if parent is not None else f"unset (`{'.'.join(prefix)}` is null)"
            elif isinstance(default, dict) and "properties" in node and default:
                shown = "(keys below)"
            else:
                shown = f"`{_yaml_value(default)}`"
            meaning = node.get("description") or comments.get(dotted) or MISSING_DESCRIPTION
            out.append((dotted, describe_type(node), shown, " ".join(str(meaning).split())))
            if isinstance(node.get("properties"), dict):
                walk(node["properties"], path)

    walk(schema["properties"], [])
    return out


def reference_text(schema_file: Path = SCHEMA, defaults_file: Path = DEFAULTS) -> str:
    """The whole of docs/settings_reference.md, from the schema and the defaults.

    Parameters
    ----------
    schema_file, defaults_file : Path
        The settings schema and the default settings (YAML).

    Returns
    -------
    str
        Markdown text, ending in a newline.
    """
    schema_text = schema_file.read_text(encoding="utf-8")
    schema = yaml.safe_load(schema_text)
    defaults_text = defaults_file.read_text(encoding="utf-8")
    defaults = yaml.safe_load(defaults_text) or {}
    comments = {re.sub(r"(^|\.)properties\.", r"\1", key): text for key, text in default_comments(schema_text).items()}
    comments.update(default_comments(defaults_text))
    table = ["| " + " | ".join(cell.replace("|", "\\|") for cell in (f"`{key}`", kind, default, meaning)) + " |"
             for key, kind, default, meaning in rows(schema, defaults, comments)]
    return HEADER + "\n".join(table) + "\n"


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--check", action="store_true", help="exit 1 if the file on disk is out of date")
    args = parser.parse_args(argv)
    text = reference_text()
    if args.check:
        current = OUTPUT.read_text(encoding="utf-8") if OUTPUT.exists() else ""
        if current != text:
            print(f"{OUTPUT.relative_to(ROOT)} is out of date: python tools/write_settings_reference.py")
            return 1
        return 0
    OUTPUT.write_text(text, encoding="utf-8")
    print(f"wrote {OUTPUT.relative_to(ROOT)}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
