"""Units at the edges: parse lengths, gradients and speeds to SI; format them back.

Everything inside helix is SI: metres, radians, metres per second, and gradients
as a plain ratio rise/run.  Text with units is parsed once, when a project file is
loaded, and formatted again only for tables, figures and reports.

>>> parse_length("10 ft 6 in")
3.2004
>>> round(parse_gradient("1:12") * 100, 2)
8.33
"""
from __future__ import annotations

import math
import re
from decimal import ROUND_HALF_UP, Context, Decimal

__all__ = [
    "UnitError",
    "parse_length",
    "parse_gradient",
    "parse_speed",
    "parse_number",
    "parse_angle",
    "short_repr",
    "uses_imperial",
    "format_length",
    "format_level",
    "format_gradient",
    "format_speed",
    "format_angle",
    "format_number",
    "format_duration",
    "fixed",
    "FOOT",
    "INCH",
]

FOOT = 0.3048  # exact, international foot (1959)
INCH = 0.0254  # exact

_LENGTH_UNITS = {
    "m": 1.0,
    "cm": 0.01,
    "mm": 0.001,
    "ft": FOOT,
    "feet": FOOT,
    "foot": FOOT,
    "'": FOOT,
    "in": INCH,
    "inch": INCH,
    "inches": INCH,
    '"': INCH,
}
_IMPERIAL = {"ft", "feet", "foot", "'", "in", "inch", "inches", '"'}

_NUMBER = r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?"
# One "number unit" term; feet and inches may follow one another ("10 ft 6 in",
# "10'-6\"", "10' 6\"").  The hyphen between feet and inches is the draughting form.
_TERM = re.compile(rf"\s*({_NUMBER})\s*(mm|cm|m|feet|foot|ft|inches|inch|in|'|\")?(?![a-z])\s*-?", re.I)


def short_repr(value: object, limit: int = 60) -> str:
    """``repr(value)`` cut to ``limit`` characters (ending in ``...`` when cut).

    Lists, tuples and mappings are walked only as far as the text needs: a YAML alias
    bomb (a few hundred bytes that expand to billions of items) or a value that holds
    itself would never finish printing with ``repr``.
    """
    parts: list[str] = []
    size = 0

    def emit(text: str) -> None:
        nonlocal size
        parts.append(text)
        size += len(text)

    def walk(v: object) -> None:
        if size > limit:
            return
        if isinstance(v, (list, tuple)):
            emit("[" if isinstance(v, list) else "(")
            for i, item in enumerate(v):
                if size > limit:
                    return
                emit(", " if i else "")
                walk(item)
            emit(("," if isinstance(v, tuple) and len(v) == 1 else "") + ("]" if isinstance(v, list) else ")"))
        elif isinstance(v, dict):
            emit("{")
            for i, (key, item) in enumerate(v.items()):
                if size > limit:
                    return
                emit(", " if i else "")
                walk(key)
                emit(": ")
                walk(item)
            emit("}")
        else:
            emit(repr(v))

    walk(value)
    text = "".join(parts)
    return text if len(text) <= limit else text[:limit - 3] + "..."


class UnitError(ValueError):
    """A value whose text cannot be read as the quantity asked for.

    ``expected`` is a short phrase naming the accepted forms, for error messages.
    """

    def __init__(self, text: object, expected: str):
        super().__init__(f"got {short_repr(text, 200)}; expected {expected}")
        self.text = text
        self.expected = expected


LENGTH_FORMS = "a length such as '3.15 m', '315 cm', '3150 mm', '10 ft 6 in' or '10'-6\"' (a bare number is metres)"
GRADIENT_FORMS = "a gradient such as '8.33%', '1:12' or '4.76 deg'"
SPEED_FORMS = "a speed such as '15 km/h', '10 mph' or '4.2 m/s'"


def _finite(x: float, text: object, expected: str) -> float:
    if not math.isfinite(x):
        raise UnitError(text, expected)
    return x


def _float(value: int | float, expected: str) -> float:
    """``float(value)``; YAML reads ``1000...0`` (400 digits) as an int no float can hold."""
    try:
        return float(value)
    except OverflowError:
        raise UnitError(value, expected) from None


def parse_number(value: object, expected: str = "a number") -> float:
    """A plain finite number (bool is refused: YAML reads ``yes`` as True)."""
    if isinstance(value, bool):
        raise UnitError(value, expected)
    if isinstance(value, (int, float)):
        return _finite(_float(value, expected), value, expected)
    if isinstance(value, str):
        try:
            return _finite(float(value.strip()), value, expected)
        except ValueError:
            pass
    raise UnitError(value, expected)


def _length_terms(text: str) -> list[tuple[float, str]]:
    s = text.strip()
    if not s or s.endswith("-"):  # the hyphen only separates feet from inches
        raise UnitError(text, LENGTH_FORMS)
    terms: list[tuple[float, str]] = []
    pos = 0
    while pos < len(s):
        m = _TERM.match(s, pos)
        if not m or m.end() == pos:
            raise UnitError(text, LENGTH_FORMS)
        unit = (m.group(2) or "").lower()
        terms.append((float(m.group(1)), unit))
        pos = m.end()
    return terms


def parse_length(value: object) -> float:
    """A length in metres from a number (metres) or text with a unit.

    Accepts ``m``, ``cm``, ``mm``, ``ft``, ``in`` and the draughting forms
    ``10'-6"`` and ``10' 6"``.  Feet and inches may be combined; metric units may not
    be mixed with each other or with imperial ones.
    """
    if isinstance(value, bool):
        raise UnitError(value, LENGTH_FORMS)
    if isinstance(value, (int, float)):
        return _finite(_float(value, LENGTH_FORMS), value, LENGTH_FORMS)
    if not isinstance(value, str):
        raise UnitError(value, LENGTH_FORMS)
    terms = _length_terms(value)
    units = [u for _, u in terms]
    if len(terms) == 1:
        number, unit = terms[0]
        return _finite(number * _LENGTH_UNITS[unit] if unit else number, value, LENGTH_FORMS)
    # Compound: only "feet then inches" is a recognised form.
    if len(terms) == 2 and _LENGTH_UNITS.get(units[0]) == FOOT and _LENGTH_UNITS.get(units[1]) == INCH:
        feet, inches = terms[0][0], terms[1][0]
        if inches < 0:
            raise UnitError(value, LENGTH_FORMS)
        sign = -1.0 if value.strip().startswith("-") else 1.0
        return _finite(sign * (abs(feet) * FOOT + inches * INCH), value, LENGTH_FORMS)
    raise UnitError(value, LENGTH_FORMS)


def uses_imperial(value: object) -> bool:
    """True when a length was written in feet or inches."""
    if not isinstance(value, str):
        return False
    try:
        return any(u in _IMPERIAL for _, u in _length_terms(value))
    except UnitError:
        return False


_GRADIENT = re.compile(
    rf"^\s*(?:(?P<pct>{_NUMBER})\s*%|1\s*:\s*(?P<n>{_NUMBER})|(?P<deg>{_NUMBER})\s*(?:deg|degrees?|°))\s*$",
    re.I,
)


def parse_gradient(value: object) -> float:
    """A gradient as a ratio rise/run from ``'8.33%'``, ``'1:12'`` or ``'4.76 deg'``.

    A bare number is refused: 0.1, 10 and 1:10 are all plausible readings of it.
    """
    if not isinstance(value, str):
        raise UnitError(value, GRADIENT_FORMS)
    m = _GRADIENT.match(value)
    if not m:
        raise UnitError(value, GRADIENT_FORMS)
    if m.group("pct") is not None:
        g = float(m.group("pct")) / 100.0
    elif m.group("n") is not None:
        n = float(m.group("n"))
        if n <= 0:
            raise UnitError(value, GRADIENT_FORMS)
        g = 1.0 / n
    else:
        deg = float(m.group("deg"))
        if not -90.0 < deg < 90.0:
            raise UnitError(value, GRADIENT_FORMS)
        g = math.tan(math.radians(deg))
    return _finite(g, value, GRADIENT_FORMS)


_SPEED = re.compile(rf"^\s*({_NUMBER})\s*(km/h|kph|mph|m/s)\s*$", re.I)
_SPEED_UNITS = {"km/h": 1 / 3.6, "kph": 1 / 3.6, "mph": 0.44704, "m/s": 1.0}


def parse_speed(value: object) -> float:
    """A speed in m/s from ``'15 km/h'``, ``'10 mph'`` or ``'4.2 m/s'``."""
    if not isinstance(value, str):
        raise UnitError(value, SPEED_FORMS)
    m = _SPEED.match(value)
    if not m:
        raise UnitError(value, SPEED_FORMS)
    return _finite(float(m.group(1)) * _SPEED_UNITS[m.group(2).lower()], value, SPEED_FORMS)


# ----------------------------------------------------------------------------------
# Formatting


_EXACT = Context(prec=400, rounding=ROUND_HALF_UP)  # room for every digit of any float


def fixed(x: float, places: int) -> str:
    """``x`` with ``places`` decimals, halves rounded away from zero.

    The one rounding rule of every printed quantity: the value is first cut to 9
    decimals, so two computations of one quantity that differ in the last bits of a
    float (5.30499999999 and 5.30500000001) print alike, and a half is rounded up
    (5.305 -> 5.31) rather than to the nearest even digit or the binary accident of
    ``'%.2f'``.  A result of zero never prints as ``-0.00``.

    >>> fixed(5.305, 2), fixed(5.30499999999, 2), fixed(-0.0004, 3), fixed(2.5, 0), fixed(float("inf"), 1)
    ('5.31', '5.31', '0.000', '3', 'inf')
    """
    x = float(x)
    if not math.isfinite(x):  # as '%f' prints it; never raised on, whatever reaches a table
        return f"{x:.{places}f}"
    q = Decimal(repr(round(x, 9))).quantize(Decimal(1).scaleb(-places), context=_EXACT)
    if q == 0:
        q = abs(q)
    return f"{q:f}"


def _feet_inches(metres: float, inch_step: float = 0.5) -> tuple[int, int, float]:
    steps = int(fixed(abs(float(metres)) / INCH / inch_step, 0))
    total_in = steps * inch_step
    feet = int(total_in // 12)
    inches = total_in - 12 * feet
    return (-1 if metres < 0 else 1), feet, inches


def format_length(metres: float, system: str = "metric", *, precision: int = 3) -> str:
    """``'3.150 m'`` (metric, to the millimetre) or ``'10'-4"'`` (imperial, to the
    nearest half inch): one rule for every length in every table."""
    if system == "imperial":
        sign, feet, inches = _feet_inches(metres)
        inch_text = f"{inches:g}"
        return f"{'-' if sign < 0 and (feet or inches) else ''}{feet}'-{inch_text}\""
    return f"{fixed(metres, precision)} m"


def format_level(metres: float, system: str = "metric") -> str:
    """A floor level: ``'+3.150'`` (metres, to the mm) or ``'+10'-4"'``."""
    if system == "imperial":
        text = format_length(metres, "imperial")
        return text if text.startswith("-") else "+" + text
    text = fixed(metres, 3)
    return text if text.startswith("-") else "+" + text


def format_gradient(ratio: float, system: str = "metric") -> str:
    """``'8.33 %'``; imperial reports add the ``1:n`` form, as the trade writes it there."""
    pct = f"{fixed(100 * ratio, 2)} %"
    if system == "imperial" and round(ratio, 9) > 0:
        return f"{pct} (1:{fixed(1 / ratio, 1)})"
    return pct


def format_speed(mps: float, system: str = "metric") -> str:
    """``'15 km/h'`` (whole km/h) or ``'9.3 mph'`` (a tenth: a whole mph is too coarse)."""
    if system == "imperial":
        return f"{fixed(mps / 0.44704, 1)} mph"
    return f"{fixed(mps * 3.6, 0)} km/h"


def format_angle(degrees: float, places: int = 2) -> str:
    """A plan angle or bearing: ``'352.04 deg'``."""
    return f"{fixed(degrees, places)} deg"


def format_duration(seconds: float) -> str:
    """A time in whole seconds: ``'48 s'``; from ten minutes on, ``'16 min 05 s'``."""
    if seconds < 600:
        return f"{fixed(seconds, 0)} s"
    m, sec = divmod(int(fixed(seconds, 0)), 60)
    return f"{m} min {sec:02d} s"


def format_number(x: float, places: int = 3) -> str:
    """A plain number such as a friction factor: ``'0.199'``."""
    return fixed(x, places)


_ANGLE = re.compile(rf"^\s*({_NUMBER})\s*(deg|degrees?|°|rad)?\s*$", re.I)
ANGLE_FORMS = "an angle such as '90 deg' (a bare number is degrees)"


def parse_angle(value: object) -> float:
    """A plan angle in radians from ``'90 deg'``, ``'1.57 rad'`` or a bare number of degrees."""
    if isinstance(value, bool):
        raise UnitError(value, ANGLE_FORMS)
    if isinstance(value, (int, float)):
        return _finite(math.radians(_float(value, ANGLE_FORMS)), value, ANGLE_FORMS)
    if not isinstance(value, str):
        raise UnitError(value, ANGLE_FORMS)
    m = _ANGLE.match(value)
    if not m:
        raise UnitError(value, ANGLE_FORMS)
    x = float(m.group(1))
    unit = (m.group(2) or "deg").lower()
    return _finite(x if unit == "rad" else math.radians(x), value, ANGLE_FORMS)
