"""The JSON Schema of the project file, generated from :mod:`helix.keys`.

The schema ships as ``helix/project.schema.json`` so that YAML editors validate and
complete project files (the demos name it in their first line,
``# yaml-language-server: $schema=../helix/project.schema.json``).  It states the keys
and the form of each value; the loader checks more (positive lengths, levels in
ascending order, what a rule set allows), so a file the schema refuses helix refuses
too.  Regenerate it after changing the declarations::

    python -m helix.schema --write

>>> schema = project_schema()
>>> schema["required"]
['project', 'levels', 'structure', 'site', 'design']
"""
from __future__ import annotations

import argparse
import json
from pathlib import Path
from typing import Any

from .keys import Key, Section, sections

__all__ = ["project_schema", "schema_text", "SCHEMA_FILE"]

#: Where the schema ships, inside the package.
SCHEMA_FILE = Path(__file__).resolve().parent / "project.schema.json"


def _key(key: Key) -> dict[str, Any]:
    form = dict(key.form)
    description = key.description + (f" Default: {key.default}." if key.default else "")
    if not key.required:
        # The loader reads an optional key given as null ('key:' with no value) as absent.
        form = {"anyOf": [form, {"type": "null"}]}
    form["description"] = description
    return form


def _section(section: Section) -> dict[str, Any]:
    out: dict[str, Any] = {
        "type": "object",
        "description": section.description,
        "properties": {k.name: _key(k) for k in section.keys},
        "additionalProperties": False,
    }
    required = [k.name for k in section.keys if k.required]
    if required:
        out["required"] = required
    if section.one_of:
        out["oneOf"] = [{"required": list(names)} for names in section.one_of]
    return out


def project_schema() -> dict[str, Any]:
    """The JSON Schema (draft 2020-12) of a project file, as a dictionary."""
    all_sections = sections()
    schema: dict[str, Any] = {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "title": "helix project file",
    }
    schema.update(_section(all_sections["top"]))
    schema["$defs"] = {name: _section(s) for name, s in all_sections.items() if name != "top"}
    return schema


def schema_text() -> str:
    """The schema file's exact text (stable key order, two-space indent, final newline)."""
    return json.dumps(project_schema(), indent=2, ensure_ascii=False) + "\n"


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m helix.schema",
                                     description="Print (or --write) the project file's JSON Schema.")
    parser.add_argument("--write", action="store_true", help=f"write {SCHEMA_FILE.name} in the package")
    args = parser.parse_args(argv)
    if args.write:
        SCHEMA_FILE.write_text(schema_text(), encoding="utf-8")
    else:
        print(schema_text(), end="")
    return 0


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
