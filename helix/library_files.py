"""Reading YAML files safely, and finding named rule sets and vehicles.

A rule set or vehicle is named either by its library name (``istructe-2011``: a file
of the library that ships with helix, the repository's ``configs/`` folder) or by a
path written as a path (``./rules/local.yaml``, ``../shared/van.yaml``,
``/abs/path.yaml``), relative to the project file's folder.  Anything else is refused,
so a project file cannot make helix read an arbitrary file by a bare word.

:func:`read_yaml` reads at most :data:`MAX_FILE_BYTES`, refuses anything but a regular
file (a FIFO would block, ``/dev/zero`` never ends) and refuses duplicate keys, which
plain YAML loaders resolve silently to the last value.
"""
from __future__ import annotations

import os
import re
import stat
from pathlib import Path
from typing import Any

import yaml

from .errors import InputError

__all__ = ["library_dirs", "find_named", "available_names", "read_yaml", "is_path_spec", "MAX_FILE_BYTES",
           "demo_file", "key_positions", "read_bounded_stream"]

#: The largest project, rule-set or vehicle file helix reads (the demos are 2 kB).
MAX_FILE_BYTES = 2 * 1024 * 1024

_NAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9_.-]*$")


def is_path_spec(text: str) -> bool:
    """True for a reference written as a path: ``./x.yaml``, ``../x.yaml``, ``/x.yaml``."""
    return text.startswith(("./", "../", "/", ".\\", "..\\"))


class _UniqueKeyLoader(yaml.SafeLoader):
    """``yaml.SafeLoader`` that refuses a key given twice in one mapping (merge keys
    ``<<`` aside: overriding a merged key is what they are for)."""

    def construct_mapping(self, node: Any, deep: bool = False) -> Any:
        if isinstance(node, yaml.MappingNode):
            seen = set()
            for key_node, _ in node.value:
                if key_node.tag == "tag:yaml.org,2002:merge":
                    continue
                key = self.construct_object(key_node, deep=True)
                try:
                    dup = key in seen
                    seen.add(key)
                except TypeError:  # an unhashable key: the base class reports it
                    continue
                if dup:
                    shown = key if isinstance(key, str) else repr(key)
                    raise yaml.constructor.ConstructorError(
                        None, None, f"duplicate key '{str(shown)[:60]}'; expected each key once in a mapping",
                        key_node.start_mark)
        return super().construct_mapping(node, deep)


def demo_file(name: str) -> Path:
    """The bundled demo project ``name`` (``demo-metric``, ``demo-imperial``,
    ``demo-double``, ``demo-search``): an invented scenario, for examples and tests.

    >>> demo_file("demo-metric").name
    'demo-metric.yaml'
    """
    for d in library_dirs():
        candidate = d / f"{name}.yaml"
        if _NAME.match(name) and name.startswith("demo-") and candidate.is_file():
            return candidate
    names = sorted({p.stem for d in library_dirs() for p in d.glob("demo-*.yaml")})
    raise ValueError(f"no bundled demo {name!r}; expected one of {', '.join(names)}")


def library_dirs() -> list[Path]:
    here = Path(__file__).resolve().parent
    # Installed wheel: helix/library/; source tree or editable install: ../configs/.
    return [d for d in (here / "library", here.parent / "configs") if d.is_dir()]


def _library(kind: str) -> list[Path]:
    return [d / kind for d in library_dirs()]


def available_names(kind: str, project_dir: Path | None = None) -> list[str]:
    names: set[str] = set()
    for d in _library(kind):
        if d.is_dir():
            names.update(p.stem for p in d.glob("*.yaml"))
    return sorted(names)


def library_entries(kind: str) -> list[tuple[str, str, Path]]:
    """``(name, title, file)`` of every bundled rule set (``kind`` 'rules') or vehicle
    ('vehicles'), by name."""
    out = []
    for name in available_names(kind):
        path = find_named(kind, name, None, "<library>", kind)
        data = read_yaml(path)
        title = data.get("title")
        out.append((name, str(title) if title is not None else "", path))
    return out


def find_named(kind: str, name: str, project_dir: Path | None,
               file: str, path: str) -> Path:
    """The file of rule set or vehicle ``name``; ``kind`` is 'rules' or 'vehicles'.

    A library name, or a path written as a path (see the module docstring)."""
    what = "rule set" if kind == "rules" else "vehicle"
    if is_path_spec(name):
        base = project_dir if project_dir is not None else Path.cwd()
        candidate = Path(name) if Path(name).is_absolute() else base / name
        if candidate.suffix not in (".yaml", ".yml"):
            raise InputError(file, path, f"got {name!r}; expected a path to a .yaml file")
        if not candidate.exists():
            raise InputError(file, path, f"{what} file {name!r} not found (relative to the project file's folder)")
        return candidate
    names = available_names(kind, project_dir)
    if _NAME.match(name):
        for d in _library(kind):
            candidate = d / f"{name}.yaml"
            if candidate.is_file():
                return candidate
    import difflib
    close = difflib.get_close_matches(name, names, n=1, cutoff=0.5)
    hint = f"did you mean '{close[0]}'?" if close else f"available: {', '.join(names)}"
    raise InputError(file, path, f"unknown {what} {name[:80]!r}; {hint} (or a path such as './{kind}/my-{kind[:-1] if kind == 'vehicles' else 'rules'}.yaml')")


def _read_bounded(path: Path, shown: str) -> bytes:
    """The bytes of a regular file of at most :data:`MAX_FILE_BYTES`, or one InputError."""
    try:
        st = os.stat(path)  # stat, not open: opening a FIFO blocks until a writer comes
    except FileNotFoundError:
        raise InputError(shown, "", "file not found") from None
    except OSError as exc:
        raise InputError(shown, "", f"cannot be read ({exc.strerror})") from None
    if stat.S_ISDIR(st.st_mode):
        raise InputError(shown, "", "is a folder; expected a YAML file")
    if not stat.S_ISREG(st.st_mode):
        kind = ("a named pipe (FIFO)" if stat.S_ISFIFO(st.st_mode) else
                "a device" if stat.S_ISCHR(st.st_mode) or stat.S_ISBLK(st.st_mode) else
                "a socket" if stat.S_ISSOCK(st.st_mode) else "not a regular file")
        raise InputError(shown, "", f"is {kind}; expected a regular YAML file")
    if st.st_size > MAX_FILE_BYTES:
        raise InputError(shown, "", f"is {st.st_size} bytes; expected a file of at most "
                         f"{MAX_FILE_BYTES // (1024 * 1024)} MB")
    try:
        # O_NONBLOCK: should the file have been swapped for a FIFO since the stat.
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
    except OSError as exc:
        raise InputError(shown, "", f"cannot be read ({exc.strerror})") from None
    try:
        if not stat.S_ISREG(os.fstat(fd).st_mode):
            raise InputError(shown, "", "is not a regular file; expected a regular YAML file")
        chunks, size = [], 0
        while size <= MAX_FILE_BYTES:
            chunk = os.read(fd, 1 << 16)
            if not chunk:
                break
            chunks.append(chunk)
            size += len(chunk)
    except OSError as exc:
        raise InputError(shown, "", f"cannot be read ({exc.strerror})") from None
    finally:
        os.close(fd)
    if size > MAX_FILE_BYTES:
        raise InputError(shown, "", f"is more than {MAX_FILE_BYTES // (1024 * 1024)} MB; expected a smaller file")
    return b"".join(chunks)


def read_bounded_stream(stream: Any, shown: str) -> bytes:
    """At most :data:`MAX_FILE_BYTES` from a binary stream (standard input), or one InputError."""
    try:
        raw = stream.read(MAX_FILE_BYTES + 1)
    except OSError as exc:
        raise InputError(shown, "", f"cannot be read ({exc.strerror})") from None
    if len(raw) > MAX_FILE_BYTES:
        raise InputError(shown, "", f"is more than {MAX_FILE_BYTES // (1024 * 1024)} MB; expected a smaller file")
    return bytes(raw)


def key_positions(root: yaml.Node) -> dict[str, tuple[int, int]]:
    """1-based (line, column) of every key path of a composed YAML document: a mapping
    entry at its key, a list element at the element.  Each node is visited once, so a
    document of aliases (a "billion laughs") costs no more than its text."""
    out: dict[str, tuple[int, int]] = {}
    seen: set[int] = set()
    stack: list[tuple[yaml.Node, str]] = [(root, "")]
    while stack:
        node, path = stack.pop()
        if id(node) in seen:
            continue
        seen.add(id(node))
        if isinstance(node, yaml.MappingNode):
            for key_node, value_node in node.value:
                if isinstance(key_node, yaml.ScalarNode):
                    key = f"{path}.{key_node.value}" if path else str(key_node.value)
                    out.setdefault(key, (key_node.start_mark.line + 1, key_node.start_mark.column + 1))
                    stack.append((value_node, key))
        elif isinstance(node, yaml.SequenceNode):
            for i, item in enumerate(node.value):
                key = f"{path}[{i}]"
                out.setdefault(key, (item.start_mark.line + 1, item.start_mark.column + 1))
                stack.append((item, key))
    return out


def read_yaml(path: Path, display: str | None = None, *, raw: bytes | None = None,
              positions: dict[str, tuple[int, int]] | None = None) -> dict[str, Any]:
    """Parse a YAML file safely; any failure becomes one InputError line.

    ``raw``: the bytes to parse instead of reading ``path`` (standard input).
    ``positions``: filled with the line and column of every key path (see
    :func:`key_positions`), for error lines that editors can jump to."""
    shown = display or str(path)
    if raw is None:
        raw = _read_bounded(path, shown)
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise InputError(shown, "", f"is not UTF-8 text (byte {exc.start})") from None
    try:
        loader = _UniqueKeyLoader(text)
        try:
            node = loader.get_single_node()
            if positions is not None and node is not None:
                positions.update(key_positions(node))
            data = loader.construct_document(node) if node is not None else None
        finally:
            loader.dispose()
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        where = f"line {mark.line + 1}, column {mark.column + 1}: " if mark else ""
        problem = getattr(exc, "problem", None) or "invalid YAML"
        raise InputError(shown, "", f"YAML does not parse: {where}{problem}",
                         (mark.line + 1, mark.column + 1) if mark else None) from None
    except RecursionError:
        raise InputError(shown, "", "YAML nests too deeply") from None
    except (ValueError, TypeError, KeyError, IndexError, AttributeError, OverflowError) as exc:
        # PyYAML's constructors let these through for values they cannot build: an
        # integer of 5000 digits, 2001-13-45, '!!int x', '!!bool x', '!!timestamp'.
        raise InputError(shown, "", f"YAML does not parse: a value cannot be read "
                         f"({type(exc).__name__}: {str(exc).split(';')[0][:120]})") from None
    if data is None:
        raise InputError(shown, "", "file is empty; expected a mapping of keys to values")
    if not isinstance(data, dict):
        raise InputError(shown, "", f"expected a mapping of keys to values at the top, got {type(data).__name__}")
    return data
