"""Input errors, and a reader that walks YAML data keeping the key path for them.

Every problem with a project, rule-set or vehicle file becomes one
:class:`InputError` whose message is a single line::

    configs/demo.yaml: levels[3].height: got '-3 m'; expected a positive length ...

The command line prints that line and exits with status 2.  A design that loads but
cannot be built (landings longer than a storey allows, a vehicle that cannot turn on
the lane) raises :class:`DesignError` with the key path to change; a problem writing
the outputs raises :class:`OutputError` (exit status 4).

All text from a user's file passes :func:`clean_text` when it is read: control
characters (NUL, BEL, terminal escape sequences), byte-order marks and other
invisible format characters are removed, so nothing reaches the terminal, a figure or
a report raw.
"""
from __future__ import annotations

import difflib
import math
import re
import unicodedata
from pathlib import Path
from typing import Any, Callable, Iterator, Literal, overload

from . import units

__all__ = ["InputError", "DesignError", "OutputError", "InvalidValue", "require", "finite", "Node", "MAX_LENGTH", "MAX_TEXT", "MAX_NAME",
           "clean_text"]

#: No length in a car-park helix project comes near this; larger values are typos
#: (or fuzz) and would only make the geometry code work for nothing.
MAX_LENGTH = 1000.0
#: Longest text a file may give (notes, sources) and longest name or title: every name
#: is drawn on figures and written into tables, so its length bounds their work.
MAX_TEXT = 2000
MAX_NAME = 200

# Escape sequences first (ESC [ 3 1 m), so no "[31m" is left behind; then any single
# control or format character (C0, DEL, C1, byte-order mark, zero-width and bidi marks).
_ESCAPE = re.compile(r"\x1b(?:\[[0-?]*[ -/]*[@-~]|\][^\x07\x1b]*(?:\x07|\x1b\\)?|[@-Z\\-_])")


def clean_text(text: str) -> str:
    """``text`` without control and format characters; tabs and line breaks become
    single spaces.  For anything read from a file that may reach a terminal or a
    figure."""
    if text.isprintable():
        return text
    text = _ESCAPE.sub("", text)
    out = []
    for ch in text:
        if ch in "\t\n\r\x0b\x0c\x85\u2028\u2029":
            out.append(" ")
        elif unicodedata.category(ch) not in ("Cc", "Cf", "Cs", "Co", "Cn"):
            out.append(ch)
    return re.sub(r" {2,}", " ", "".join(out))


class InputError(Exception):
    """Bad input, located by file and key path."""

    def __init__(self, file: str | Path, path: str, message: str,
                 position: tuple[int, int] | None = None):
        self.file = str(file)
        self.path = path
        self.message = message
        #: 1-based (line, column) of the key path in the file, where the YAML says it.
        self.position = position
        super().__init__(self.line())

    def line(self) -> str:
        """``file:line:column: key.path: message`` (editors and CI annotations read the
        position), or ``file: key.path: message`` where the position is not known."""
        at = f"{self.file}:{self.position[0]}:{self.position[1]}" if self.position else self.file
        where = f"{at}: {self.path}: " if self.path else f"{at}: "
        return clean_text(where + self.message)

    def located(self, positions: dict[str, tuple[int, int]]) -> "InputError":
        """This error with the position of its key path (or of the nearest enclosing key
        found in ``positions``, a map of key paths to 1-based line and column)."""
        if self.position is None:
            path = self.path
            while path and path not in positions:
                path = re.sub(r"(\.[^.\[]*|\[\d+\])$", "", path) if re.search(r"[.\[]", path) else ""
            self.position = positions.get(path) if path else positions.get("")
            self.args = (self.line(),)
        return self


class DesignError(ValueError):
    """A design that loads but cannot be built or evaluated; ``path`` is the key of the
    project file to change (``design`` when no single key is to blame)."""

    def __init__(self, message: str, path: str = "design", expected: str | None = None):
        self.path = path
        self.expected = expected
        super().__init__(message)


class InvalidValue(InputError, ValueError):
    """A dataclass built (from Python, e.g. with ``dataclasses.replace``) with a value
    the project file could not hold; named by the class and field."""


def require(ok: bool, owner: object, field: str, value: Any, expected: str) -> None:
    """Raise :class:`InvalidValue` unless ``ok``: the check each frozen dataclass runs in
    ``__post_init__``, so no path through the API builds an invalid project."""
    if not ok:
        raise InvalidValue(type(owner).__name__, field, f"got {_short(value)}; expected {expected}")


def finite(x: Any, low: float = -math.inf, high: float = math.inf, *, open_low: bool = False) -> bool:
    """True for a real number (not bool) in ``[low, high]`` (``(low, high]`` with ``open_low``)."""
    if isinstance(x, bool) or not isinstance(x, (int, float)):
        return False
    try:
        x = float(x)
    except (OverflowError, TypeError, ValueError):
        return False
    return math.isfinite(x) and (x > low if open_low else x >= low) and x <= high


class OutputError(Exception):
    """The outputs cannot be written: permission, full disk, a locked folder.  The
    command line prints :meth:`line` and exits with status 4."""

    def __init__(self, target: str | Path, message: str):
        self.target = str(target)
        self.message = message
        super().__init__(self.line())

    def line(self) -> str:
        return clean_text(f"{self.target}: {self.message}")


def _short(value: Any) -> str:
    # Not repr(value): a YAML alias bomb or a list that holds itself never finishes printing.
    return units.short_repr(value, 60)


class Node:
    """A mapping, list or scalar from a YAML file, with its file name and key path.

    Reading a key marks it as used; :meth:`done` then refuses any key that was not
    read, suggesting the closest valid one.  That is how a typo such as
    ``centre_raduis`` is caught instead of silently ignored.
    """

    def __init__(self, data: Any, file: str | Path, path: str = ""):
        self.data = data
        self.file = str(file)
        self.path = path
        self._used: set[str] = set()

    # -- errors ------------------------------------------------------------------
    def error(self, message: str, path: str | None = None) -> InputError:
        return InputError(self.file, self.path if path is None else path, message)

    def _key_path(self, key: str | int) -> str:
        if isinstance(key, int):
            return f"{self.path}[{key}]"
        return f"{self.path}.{key}" if self.path else str(key)

    # -- structure ---------------------------------------------------------------
    def require_mapping(self) -> "Node":
        if not isinstance(self.data, dict):
            raise self.error(f"got {_short(self.data)}; expected a mapping of keys to values")
        for key in self.data:
            if not isinstance(key, str):
                raise self.error(f"got key {_short(key)}; expected text keys")
        return self

    def has(self, key: str) -> bool:
        return isinstance(self.data, dict) and key in self.data and self.data[key] is not None

    @overload
    def child(self, key: str, required: Literal[True] = True, default: Any = None) -> "Node": ...

    @overload
    def child(self, key: str, required: bool, default: Any = None) -> "Node | None": ...

    def child(self, key: str, required: bool = True, default: Any = None) -> "Node | None":
        self.require_mapping()
        self._used.add(key)
        if key not in self.data or self.data[key] is None:
            if required:
                # A misspelt key (``centre_raduis``) reads as missing: name the typo instead.
                unread = [str(k) for k in self.data if k not in self._used]
                close = difflib.get_close_matches(key, unread, n=1, cutoff=0.8)
                if close:
                    raise self.error(f"unknown key '{close[0]}'; did you mean '{key}'?",
                                     self._key_path(close[0]))
                raise self.error(f"missing key '{key}'", self._key_path(key))
            return None if default is None else Node(default, self.file, self._key_path(key))
        return Node(self.data[key], self.file, self._key_path(key))

    def items(self) -> Iterator["Node"]:
        """The elements of a list, each as a node with its index in the path."""
        if not isinstance(self.data, list):
            raise self.error(f"got {_short(self.data)}; expected a list")
        for i, value in enumerate(self.data):
            yield Node(value, self.file, self._key_path(i))

    def keys(self) -> list[str]:
        self.require_mapping()
        return list(self.data)

    def done(self, extra_valid: tuple[str, ...] = (), *, section: str | None = None) -> None:
        """Refuse keys that were never read, or, given the ``section`` of
        :func:`helix.keys.sections` this mapping is, keys the section does not declare."""
        if not isinstance(self.data, dict):
            return
        if section is not None:
            from .keys import known
            declared = known(section)
            undeclared = self._used - declared
            if undeclared:  # a bug in helix, not in the file: the declarations must list every key read
                raise RuntimeError(f"keys {sorted(undeclared)} of section {section!r} are read but not "
                                   "declared in helix/keys.py")
            accepted = set(declared) | set(extra_valid)
        else:
            accepted = self._used | set(extra_valid)
        valid = sorted(accepted)
        for key in self.data:
            if key not in accepted:
                close = difflib.get_close_matches(str(key), valid, n=1, cutoff=0.6)
                hint = f"; did you mean '{close[0]}'?" if close else (
                    f"; valid keys here: {', '.join(valid)}" if valid else "")
                raise self.error(f"unknown key '{key}'{hint}", self._key_path(str(key)))

    # -- scalars -----------------------------------------------------------------
    def _convert(self, parse: Callable[[Any], float], what: str) -> float:
        try:
            return parse(self.data)
        except units.UnitError as exc:
            raise self.error(f"got {_short(self.data)}; expected {exc.expected}") from None

    def length(self, *, positive: bool = False, non_negative: bool = False,
               maximum: float = MAX_LENGTH) -> float:
        value = self._convert(units.parse_length, "length")
        if abs(value) > maximum:
            raise self.error(f"got {_short(self.data)}; expected a length of at most {maximum:g} m")
        if positive and not value > 0:
            raise self.error(f"got {_short(self.data)}; expected a positive length such as '3.15 m'")
        if non_negative and value < 0:
            raise self.error(f"got {_short(self.data)}; expected a length of zero or more such as '250 mm'")
        return value

    def gradient(self, *, non_negative: bool = True) -> float:
        value = self._convert(units.parse_gradient, "gradient")
        if abs(value) > 1.0:
            raise self.error(f"got {_short(self.data)}; expected a gradient of at most 100% (45 deg)")
        if non_negative and value < 0:
            raise self.error(f"got {_short(self.data)}; expected a gradient of zero or more such as '8.33%'")
        return value

    def speed(self) -> float:
        value = self._convert(units.parse_speed, "speed")
        if not value > 0:
            raise self.error(f"got {_short(self.data)}; expected a positive speed such as '15 km/h'")
        return value

    def number(self, *, positive: bool = False, non_negative: bool = False,
               low: float | None = None, high: float | None = None, what: str = "a number") -> float:
        value = self._convert(lambda v: units.parse_number(v, what), what)
        bad = (positive and not value > 0) or (non_negative and value < 0) or \
              (low is not None and value < low) or (high is not None and value > high) or \
              not math.isfinite(value)
        if bad:
            raise self.error(f"got {_short(self.data)}; expected {what}")
        return value

    def angle(self) -> float:
        return self._convert(units.parse_angle, "angle")

    def text(self, choices: tuple[str, ...] | None = None, max_chars: int = MAX_TEXT) -> str:
        if not isinstance(self.data, str) or not clean_text(self.data).strip():
            expected = f"one of {', '.join(choices)}" if choices else "text"
            raise self.error(f"got {_short(self.data)}; expected {expected}")
        if len(self.data) > max_chars:
            raise self.error(f"got a text of {len(self.data)} characters; expected at most {max_chars}")
        value = clean_text(self.data).strip()
        if choices is not None and value not in choices:
            close = difflib.get_close_matches(value, choices, n=1, cutoff=0.5)
            hint = f" (did you mean '{close[0]}'?)" if close else ""
            raise self.error(f"got {_short(self.data)}; expected one of {', '.join(choices)}{hint}")
        return value

    def is_imperial_length(self) -> bool:
        return units.uses_imperial(self.data)
