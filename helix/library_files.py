"""Finding named rule sets and vehicles: next to the project file first, then the
library that ships with helix (the repository's ``configs/`` folder)."""
from __future__ import annotations

from pathlib import Path

import yaml

from .errors import InputError

__all__ = ["library_dirs", "find_named", "available_names", "read_yaml"]


def library_dirs() -> list[Path]:
    here = Path(__file__).resolve().parent
    # Installed wheel: helix/library/; source tree or editable install: ../configs/.
    return [d for d in (here / "library", here.parent / "configs") if d.is_dir()]


def _search_dirs(kind: str, project_dir: Path | None) -> list[Path]:
    dirs = []
    if project_dir is not None:
        dirs.append(project_dir / kind)
    dirs += [d / kind for d in library_dirs()]
    return dirs


def available_names(kind: str, project_dir: Path | None = None) -> list[str]:
    names: set[str] = set()
    for d in _search_dirs(kind, project_dir):
        if d.is_dir():
            names.update(p.stem for p in d.glob("*.yaml"))
    return sorted(names)


def find_named(kind: str, name: str, project_dir: Path | None,
               file: str, path: str) -> Path:
    """The file of rule set or vehicle ``name``; ``kind`` is 'rules' or 'vehicles'."""
    for d in _search_dirs(kind, project_dir):
        candidate = d / f"{name}.yaml"
        if candidate.is_file():
            return candidate
    import difflib
    names = available_names(kind, project_dir)
    close = difflib.get_close_matches(name, names, n=1, cutoff=0.5)
    hint = f"did you mean '{close[0]}'?" if close else f"available: {', '.join(names)}"
    what = "rule set" if kind == "rules" else "vehicle"
    raise InputError(file, path, f"unknown {what} {name!r}; {hint}")


def read_yaml(path: Path, display: str | None = None):
    """Parse a YAML file safely; any failure becomes one InputError line."""
    shown = display or str(path)
    try:
        raw = path.read_bytes()
    except FileNotFoundError:
        raise InputError(shown, "", "file not found") from None
    except IsADirectoryError:
        raise InputError(shown, "", "is a folder; expected a YAML file") from None
    except OSError as exc:
        raise InputError(shown, "", f"cannot be read ({exc.strerror})") from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise InputError(shown, "", f"is not UTF-8 text (byte {exc.start})") from None
    try:
        data = yaml.safe_load(text)
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        where = f"line {mark.line + 1}, column {mark.column + 1}: " if mark else ""
        problem = getattr(exc, "problem", None) or "invalid YAML"
        raise InputError(shown, "", f"YAML does not parse: {where}{problem}") from None
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
