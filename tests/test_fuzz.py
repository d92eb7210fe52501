"""Generated project files (and output folders) through the command line.

Whatever the file, ``helix check`` and ``helix design`` return 0 or 1, or 2 with exactly
one line on standard error that names the file and the key path of the problem (or only
the file, for a problem with the whole file); they never raise and never hang.

Three families of files, all invented data:

* plausible projects: the demos (metric, double, search) with random storey heights,
  radii, lane widths, turns, landings, transitions, rule sets, vehicles and units;
* broken projects: one fault put into an otherwise valid demo (wrong type, missing,
  unknown or misspelt key, bad unit, NaN and infinity, huge and tiny numbers, deep
  nesting, YAML alias bombs and self-referencing values, a non-mapping top level), with
  the key path the error line must name where the fault fixes it;
* raw files: random bytes and text, empty files, text that is not UTF-8, truncated
  demos, deep nesting, explicit YAML tags that cannot be constructed, huge integers,
  duplicate keys;
* hostile text (mathtext syntax, control characters and escape sequences, byte-order
  marks) in names, drawn on figures and printed; huge lists; tiny steps; special files
  (FIFO, devices, sockets, folders, symlinks to devices); faults in the rename phase
  of writing the outputs (every file then all old or all new).

``signal.alarm`` guards every run against a hang; it is not a timing assertion.
"""
from __future__ import annotations

import copy
import datetime
import faulthandler
import json
import math
import re
import signal
import sys
from pathlib import Path

import pytest
import yaml
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from helix.cli import main
from helix.keys import sections

CONFIGS = Path(__file__).resolve().parent.parent / "configs"
DEMO_NAMES = ("demo-metric", "demo-double", "demo-search")
DEMO_TEXT = {n: (CONFIGS / f"{n}.yaml").read_text(encoding="utf-8") for n in DEMO_NAMES}
DEMOS = {n: yaml.safe_load(text) for n, text in DEMO_TEXT.items()}

TOP_KEYS = ("project", "units", "levels", "structure", "site", "traffic", "vehicle", "rules", "design")
#: Every key a project file may hold anywhere (helix.keys declares them; rule files add
#: title, value, source): generated unknown keys avoid them.
VALID_KEYS = frozenset(TOP_KEYS + (
    "name", "notes", "level", "height", "bearing", "slab_depth", "hanging_depth", "wall_thickness",
    "cover_soffit", "width", "depth", "margin", "use", "override", "layout", "layouts", "centre_radius",
    "min", "max", "lane_width", "central_kerb", "divider", "turns_per_storey", "choices", "hand",
    "start_bearing", "landing_length", "transition", "length", "kind", "cross_fall",
    "cross_fall_direction", "landing_fall", "keep", "connections", "objective", "target_gradient",
    "title", "value", "source")) | {key.name for section in sections().values() for key in section.keys}
#: Messages about the whole file (no key path), from helix.library_files.read_yaml.
WHOLE_FILE = ("file not found", "is a folder", "cannot be read", "is not UTF-8 text", "YAML does not parse",
              "YAML nests too deeply", "file is empty", "expected a mapping of keys to values at the top",
              "is a named pipe", "is a device", "is a socket", "is not a regular file", "is more than",
              "bytes; expected a file of at most")
#: Errors that come from building the geometry, reported against the whole design section.
GEOMETRY_ERRORS = ("expected a design whose landings and transitions fit",
                   "expected a search space whose designs can be built")
SEARCH_REFUSED = "has search ranges or choices"

HANG_SECONDS = 60
RULE_SETS = ("conservative-default", "de-garage-ordinance", "istructe-2011", "us-ibc-2015", "us-ibc-2015-ada-van")
VEHICLES = ("aashto-p", "large-suv", "high-van", "low-sports-car")
SEARCH_LAYOUTS = ("single-one-way", "single-two-way", "double", "concentric")

FUZZ = dict(deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture,
                                                  HealthCheck.data_too_large, HealthCheck.large_base_example])


# ----------------------------------------------------------------------------------
# Running the command line and judging its outcome


class Hang(BaseException):
    """Raised by the alarm; a BaseException so no ``except Exception`` inside helix eats it."""


def _on_alarm(signum, frame):
    raise Hang()


def run_cli(capsys, args: list[str]) -> tuple[int, str, str]:
    capsys.readouterr()
    previous = signal.signal(signal.SIGALRM, _on_alarm)
    signal.alarm(HANG_SECONDS)
    # The alarm's handler runs between bytecodes only; a hang inside one C call (repr of
    # an alias bomb) is stopped by faulthandler instead: it dumps the stacks to file
    # descriptor 2 and ends the whole run with a failure status.
    faulthandler.dump_traceback_later(HANG_SECONDS + 30, exit=True, file=sys.__stderr__)
    try:
        status = main(args)
    except Hang:
        pytest.fail(f"helix {' '.join(args)} did not finish within {HANG_SECONDS} s (hang guard)")
    finally:
        faulthandler.cancel_dump_traceback_later()
        signal.alarm(0)
        signal.signal(signal.SIGALRM, previous)
    out, err = capsys.readouterr()
    return status, out, err


def key_path(path: tuple) -> str:
    """``('levels', 2, 'height')`` -> ``'levels[2].height'``, as helix writes key paths."""
    text = ""
    for part in path:
        text += f"[{part}]" if isinstance(part, int) else (f".{part}" if text else str(part))
    return text


def inside(reported: str, path: str) -> bool:
    """True when ``reported`` is ``path`` or a key path below it (``''`` holds every path)."""
    return not path or reported == path or reported.startswith((path + ".", path + "["))


def judge(status: int, out: str, err: str, shown: str, top_keys=()) -> str | None:
    """Check the general contract and return the reported key path ('' for a whole-file
    problem), or None when the run succeeded (0 or 1)."""
    assert status in (0, 1, 2), status
    if status in (0, 1):
        assert err == "", f"a run that did not fail on input wrote to stderr: {err!r}"
        return None
    assert out == "", f"bad input, yet something was written to stdout: {out[:200]!r}"
    assert err.endswith("\n") and err.count("\n") == 1, f"expected exactly one line on stderr: {err!r}"
    m = re.match(rf"helix: error: {re.escape(shown)}(:\d+:\d+)?: ", err)  # file[:line:column]:
    assert m, err
    rest = err[m.end():-1]
    if rest.startswith(WHOLE_FILE):
        return ""
    reported, sep, message = rest.partition(": ")
    assert sep and message.strip(), f"no key path and message in {err!r}"
    roots = set(TOP_KEYS) | {str(k) for k in top_keys}
    assert any(inside(reported, k) for k in roots), f"{reported!r} is not a key path of the project: {err!r}"
    return reported


def finite_json(text: str) -> None:
    def refuse(name):
        raise AssertionError(f"JSON holds {name}")

    def walk(value):
        if isinstance(value, dict):
            for v in value.values():
                walk(v)
        elif isinstance(value, list):
            for v in value:
                walk(v)
        elif isinstance(value, float):
            assert math.isfinite(value)

    walk(json.loads(text, parse_constant=refuse))


def exercise(capsys, file: Path, *, run_design: bool, use_json: bool, top_keys=()):
    """Run check (and design) on ``file``; return check's reported key path (see judge),
    its stderr and its stdout."""
    shown = str(file)
    extra = ["--json"] if use_json else []
    status, out, err = run_cli(capsys, ["check", shown, *extra])
    reported = judge(status, out, err, shown, top_keys)
    if status != 2 and use_json:
        finite_json(out)
    load_error = status == 2 and SEARCH_REFUSED not in err and not any(g in err for g in GEOMETRY_ERRORS)
    if run_design or load_error:
        d_status, d_out, d_err = run_cli(capsys, ["design", shown, *extra])
        judge(d_status, d_out, d_err, shown, top_keys)
        if load_error:  # the file is read the same way by both commands
            assert (d_status, d_err) == (status, err)
        elif d_status != 2 and use_json:
            finite_json(d_out)
    return reported, err, out


# ----------------------------------------------------------------------------------
# Plausible projects


def length_text(draw, metres: float):
    """``metres`` written in one of the accepted forms (invented data)."""
    form = draw(st.sampled_from(["m", "mm", "cm", "ft-in", "draughting", "bare"]))
    if form == "m":
        return f"{metres:.3f} m"
    if form == "mm":
        return f"{metres * 1000:.0f} mm"
    if form == "cm":
        return f"{metres * 100:.1f} cm"
    if form == "bare":
        return round(metres, 3)
    sign = "-" if metres < 0 else ""
    total_in = abs(metres) / 0.0254
    feet = int(total_in // 12)
    inches = total_in - 12 * feet
    return f"{sign}{feet} ft {inches:.2f} in" if form == "ft-in" else f"{sign}{feet}'-{inches:.2f}\""


def metres(draw, lo: float, hi: float):
    return length_text(draw, draw(st.floats(lo, hi, allow_nan=False)))


def percent(draw, lo: float, hi: float) -> str:
    return f"{draw(st.floats(lo, hi, allow_nan=False)):.2f}%"


@st.composite
def plausible_projects(draw):
    base = draw(st.sampled_from(DEMO_NAMES))
    data = copy.deepcopy(DEMOS[base])
    storeys = draw(st.integers(1, 4))
    z = draw(st.sampled_from([0.0, 0.0, 0.0, -3.2, 1.5, 12.0]))
    heights = []
    levels = [{"name": "Ground", "level": length_text(draw, z)}]
    if draw(st.integers(0, 4)) == 0:
        levels[0]["bearing"] = f"{draw(st.integers(0, 359))} deg"
    for i in range(storeys):
        h = draw(st.floats(2.2, 6.0, allow_nan=False))
        heights.append(h)
        z += h
        if draw(st.booleans()):
            levels.append({"name": f"Deck {i + 1}", "height": length_text(draw, h)})
        else:
            levels.append({"name": f"Deck {i + 1}", "level": length_text(draw, z)})
    data["levels"] = levels
    data["structure"] = {"slab_depth": metres(draw, 0.15, 0.40), "hanging_depth": metres(draw, 0.0, 0.40),
                         "wall_thickness": metres(draw, 0.0, 0.40)}
    if draw(st.integers(0, 4)) == 0:
        data["structure"]["cover_soffit"] = length_text(draw, z + draw(st.floats(2.4, 5.0)))
    data["site"] = {"width": metres(draw, 12.0, 60.0), "depth": metres(draw, 12.0, 60.0),
                    "margin": metres(draw, 0.0, 1.0)}
    data["rules"] = draw(st.sampled_from(RULE_SETS))
    data["vehicle"] = draw(st.sampled_from(VEHICLES))
    design = data["design"]
    if base == "demo-search":
        data["traffic"] = draw(st.sampled_from(["one-way", "two-way"]))
        design["layouts"] = draw(st.lists(st.sampled_from(SEARCH_LAYOUTS), min_size=1, max_size=3, unique=True))
        lo = draw(st.floats(3.0, 10.0))
        design["centre_radius"] = {"min": length_text(draw, lo),
                                   "max": length_text(draw, lo + draw(st.floats(1.0, 15.0)))}
        if draw(st.booleans()):
            design["turns_per_storey"] = {"choices": draw(st.lists(
                st.sampled_from([0.5, 0.75, 1.0, 1.25, 1.5, 2.0]), min_size=1, max_size=3, unique=True))}
        else:
            design["turns_per_storey"] = draw(st.sampled_from([0.5, 1, 1.5]))
        design["lane_width"] = "auto" if draw(st.booleans()) else metres(draw, 3.0, 4.5)
        design["objective"] = draw(st.sampled_from(["footprint", "gradient", "drive", "headroom"]))
        if draw(st.integers(0, 3)) == 0:
            design["target_gradient"] = percent(draw, 6.0, 14.0)
    else:
        layout = draw(st.sampled_from(["single", "double", "concentric"]))
        design["layout"] = layout
        data["traffic"] = draw(st.sampled_from(["one-way", "two-way"])) if layout == "single" else "one-way"
        connections = draw(st.sampled_from(["free", "free", "same_side", "alternate"]))
        design["connections"] = connections
        pool = {"free": st.floats(0.5, 2.0).map(lambda t: round(t, 2)),
                "same_side": st.sampled_from([1, 2]), "alternate": st.sampled_from([0.5, 1.5])}[connections]
        design["turns_per_storey"] = (draw(st.lists(pool, min_size=storeys, max_size=storeys))
                                      if draw(st.booleans()) else draw(pool))
        design["centre_radius"] = metres(draw, 4.0, 20.0)
        if data["traffic"] == "two-way" and draw(st.booleans()):
            design["lane_width"] = [metres(draw, 2.5, 4.5), metres(draw, 2.5, 4.5)]
        else:
            design["lane_width"] = metres(draw, 2.5, 4.5)
        design.pop("landing_length", None)
        if draw(st.booleans()):
            design["landing_length"] = metres(draw, 0.0, 5.0)
        transition = draw(st.sampled_from(["default", "none", "length", "vehicle"]))
        design.pop("transition", None)
        if transition == "none":
            design["transition"] = "none"
        elif transition == "length":
            design["transition"] = {"length": metres(draw, 0.0, 5.0),
                                    "kind": draw(st.sampled_from(["segment", "curve"]))}
        elif transition == "vehicle":
            design["transition"] = {"length": "vehicle", "kind": "curve"}
        design["hand"] = draw(st.sampled_from(["anticlockwise", "clockwise"]))
        design["start_bearing"] = f"{draw(st.floats(0.0, 359.9)):.1f} deg"
        design.pop("cross_fall", None)
        if draw(st.booleans()):
            design["cross_fall"] = percent(draw, 0.0, 4.0)
            design["cross_fall_direction"] = draw(st.sampled_from(["inward", "outward"]))
        design.pop("landing_fall", None)
        if draw(st.integers(0, 3)) == 0:
            design["landing_fall"] = percent(draw, 0.0, 2.0)
    run_design = base == "demo-search" or draw(st.integers(0, 3)) == 0
    return data, heights, run_design, draw(st.booleans())


@settings(max_examples=120, **FUZZ)
@given(case=plausible_projects())
def test_plausible_projects_never_crash(case, tmp_path, capsys):
    data, heights, run_design, use_json = case
    file = tmp_path / "plausible.yaml"
    file.write_text(yaml.safe_dump(data, sort_keys=False, allow_unicode=True), encoding="utf-8")
    reported, err, out = exercise(capsys, file, run_design=run_design, use_json=use_json)
    event("accepted" if reported is None else f"refused at {reported or 'the whole file'}")
    if reported == "design":  # refused as a whole: a search given to check, or geometry that cannot be built
        assert SEARCH_REFUSED in err or any(g in err for g in GEOMETRY_ERRORS), err
    if reported is None and use_json:
        # The storey heights, whatever units they were written in, come back in metres:
        # within 1.1 mm, the rounding of the text forms used above (two levels per rise).
        result = json.loads(out)
        first = result["geometry"]["thread_details"][0]["name"]
        rises = [s["rise_m"] for s in result["storeys"] if s["thread"] == first]
        assert rises == pytest.approx(heights, abs=1.1e-3)


# ----------------------------------------------------------------------------------
# Broken projects: one fault in a valid demo


LENGTH_KEYS = {"level", "height", "slab_depth", "hanging_depth", "wall_thickness", "cover_soffit", "width",
               "depth", "margin", "centre_radius", "min", "max", "lane_width", "landing_length", "length",
               "central_kerb", "divider"}
GRADIENT_KEYS = {"cross_fall", "landing_fall", "target_gradient"}
ANGLE_KEYS = {"start_bearing", "bearing"}
NUMBER_KEYS = {"turns_per_storey", "choices"}


def quantity(path: tuple) -> str:
    names = [p for p in path if isinstance(p, str)]
    name = names[-1] if names else ""
    if name in LENGTH_KEYS:
        return "length"
    if name in GRADIENT_KEYS:
        return "gradient"
    if name in ANGLE_KEYS:
        return "angle"
    if name in NUMBER_KEYS:
        return "number"
    return "text"


def tree(data, path=()):
    """Every (path, value) below ``data``, the root excluded."""
    if path:
        yield path, data
    if isinstance(data, dict):
        for k, v in data.items():
            yield from tree(v, path + (k,))
    elif isinstance(data, list):
        for i, v in enumerate(data):
            yield from tree(v, path + (i,))


def get(data, path):
    for p in path:
        data = data[p]
    return data


def put(data, path, value):
    get(data, path[:-1])[path[-1]] = value


def rename(data, path, new):
    parent = get(data, path[:-1])
    items = [(new if k == path[-1] else k, v) for k, v in parent.items()]
    parent.clear()
    parent.update(items)


def is_required(path: tuple) -> bool:
    """Keys the loader cannot do without (project.py)."""
    fixed = {("project",), ("project", "name"), ("levels",), ("structure",), ("structure", "slab_depth"),
             ("site",), ("site", "width"), ("site", "depth"), ("design",), ("design", "centre_radius"),
             ("design", "centre_radius", "min"), ("design", "centre_radius", "max"),
             ("design", "turns_per_storey", "choices"), ("design", "transition", "length")}
    if path in fixed:
        return True
    if len(path) == 3 and path[0] == "levels":
        return path[2] == "name" or (path[2] in ("level", "height") and path[1] > 0)
    return False


NUMBER_TEXT = st.floats(0.1, 99.0).map(lambda x: f"{x:.2f}")
BAD_TEXT = {
    # A unit the parser does not know, metric units mixed, inches before feet, no number...
    "length": ["{x} meters", "{x} metres", "{x} km", "{x} yd", "{x} m m", "{x} mm m", "{x} in {y} ft",
               "{x} m {y} cm", "{x}m{y}cm", "{x} %", "{x} deg", "m {x}", "{x},5 m", "{x}'-", "{x} ft {y} m",
               "{x} inchs", "", "   "],
    "gradient": ["{x}", "{x} m", "1:{x}:{y}", "{x} %%", "1:0", "{x} grad", "{x} percent", "95 deg",
                 "{x}% {y}%", "%{x}", "{x} deg deg", "steep"],
    "angle": ["{x} m", "{x} grad", "{x}%", "{x} deg deg", "{x} turns", "north", "{x} rad deg"],
    "number": ["{x} turns", "{x}%", "{x} m", "one", "{x}/{y}", "{x} {y}"],
}
NON_FINITE = [math.nan, math.inf, -math.inf, "nan", "NaN", "inf", "-inf", "Infinity", ".nan", ".inf", "-.inf",
              "nan m", "inf mm", "inf %", "nan%", "inf deg", "1:inf", "1e999", "1e999 m", "-1e999 mm"]
HUGE = [1e300, -1e300, 1.7e308, "1e300 m", "1e300 mm", "-1e300 m", "1e300 ft 2 in", 10 ** 400, -(10 ** 400),
        "1e300%", "1e300 deg", "1:1e-300", "1e300"]
TINY = [1e-300, -1e-300, 5e-324, 0, 0.0, -0.0, "1e-300 m", "1e-300 mm", "0 m", "1e-300%", "1:1e300",
        "1e-300 deg", "0 ft 1e-300 in"]

SCALARS = st.one_of(st.none(), st.booleans(), st.integers(-10 ** 6, 10 ** 6),
                    st.floats(allow_nan=False, allow_infinity=False),
                    st.text(st.characters(blacklist_categories=("Cs",)), max_size=12),
                    st.dates(datetime.date(1900, 1, 1), datetime.date(2100, 1, 1)))
VALUES = st.recursive(SCALARS, lambda inner: st.lists(inner, max_size=4) | st.dictionaries(
    st.text(st.characters(blacklist_categories=("Cs",)), max_size=6), inner, max_size=4), max_leaves=8)
KEY_NAMES = st.from_regex(r"[a-z][a-z0-9_]{0,11}", fullmatch=True).filter(lambda k: k not in VALID_KEYS)


def nested(depth: int, as_dict: bool):
    value = "3.0 m"
    for _ in range(depth):
        value = {"nest": value} if as_dict else [value]
    return value


def alias_bomb(width: int, depth: int, as_dict: bool):
    """``width ** depth`` leaves from ``width * depth`` objects: yaml.safe_dump writes the
    shared objects once, with anchors and aliases (a "billion laughs" file)."""
    value = ["lol"] * width
    for _ in range(depth):
        value = {f"k{i}": value for i in range(width)} if as_dict else [value] * width
    return value


def self_reference(as_dict: bool):
    if as_dict:
        value: dict = {"nest": None}
        value["nest"] = value
        return value
    items: list = []
    items.append(items)
    return items


def typo(draw, key: str) -> str:
    edit = draw(st.sampled_from(["drop", "double", "swap", "replace"]))
    i = draw(st.integers(0, max(0, len(key) - 1)))
    letter = draw(st.sampled_from("abcdefghijklmnopqrstuvwxyz"))
    if edit == "drop" and len(key) > 1:
        return key[:i] + key[i + 1:]
    if edit == "double":
        return key[:i] + key[i] + key[i:]
    if edit == "swap" and i + 1 < len(key):
        return key[:i] + key[i + 1] + key[i] + key[i + 2:]
    return key[:i] + letter + key[i + 1:]


KINDS = ("wrong_type", "missing", "unknown_key", "typo", "bad_unit", "non_finite", "huge", "tiny", "deep",
         "alias_bomb", "self_reference", "top_level")


@st.composite
def broken_projects(draw, kind: str):
    """(data, kind, rule, key path): the file must exit 2 when rule is not 'any', and the
    reported key path must be ``path`` ('exact'), lie inside it ('inside'), inside it or
    hold it ('related'), or lie inside its parent ('parent'); 'whole': a whole-file error."""
    base = draw(st.sampled_from(DEMO_NAMES))
    data = copy.deepcopy(DEMOS[base])
    nodes = list(tree(data))
    keyed = [p for p, _ in nodes if isinstance(p[-1], str)]
    numeric = [p for p, v in nodes if quantity(p) != "text" and not isinstance(v, (dict, list))]
    if kind == "top_level":
        value = draw(st.one_of(st.lists(VALUES, max_size=3), st.integers(), st.text(
            st.characters(blacklist_categories=("Cs",)), min_size=1, max_size=20), st.floats(), st.booleans(),
            st.dates()))
        return value, kind, "whole", ()
    if kind == "wrong_type":
        path = draw(st.sampled_from([p for p, _ in nodes]))
        put(data, path, draw(VALUES))
        return data, kind, "any", path
    if kind == "missing":
        path = draw(st.sampled_from([p for p, _ in nodes]))
        parent = get(data, path[:-1])
        if isinstance(parent, list):
            del parent[path[-1]]
            return data, kind, "any", path
        del parent[path[-1]]
        if is_required(path):
            return data, kind, ("exact" if len(path) == 1 else "parent"), path
        return data, kind, "any", path
    if kind == "unknown_key":
        mappings = [()] + [p for p, v in nodes if isinstance(v, dict)]
        path = draw(st.sampled_from(mappings))
        name = draw(KEY_NAMES)
        get(data, path)[name] = draw(VALUES)
        return data, kind, "exact", path + (name,)
    if kind == "typo":
        path = draw(st.sampled_from(keyed))
        siblings = set(get(data, path[:-1]))
        new = typo(draw, path[-1])
        while new in VALID_KEYS or new in siblings or not new:
            new += "x"
        rename(data, path, new)
        return data, kind, "parent", path[:-1] + (new,)
    path = draw(st.sampled_from(numeric))
    q = quantity(path)
    if kind == "bad_unit":
        template = draw(st.sampled_from(BAD_TEXT[q]))
        put(data, path, template.format(x=draw(NUMBER_TEXT), y=draw(NUMBER_TEXT)))
        return data, kind, "exact", path
    if kind == "non_finite":
        put(data, path, draw(st.sampled_from(NON_FINITE)))
        return data, kind, "exact", path
    if kind == "huge":
        put(data, path, draw(st.sampled_from(HUGE)))
        # A huge plan angle is still an angle (many turns); every other quantity has a cap,
        # which the turns' cap reports against the whole turns_per_storey key.
        return data, kind, ("any" if q == "angle" else "related"), path
    if kind == "tiny":
        put(data, path, draw(st.sampled_from(TINY)))
        return data, kind, "any", path
    # Containers where a value (or a mapping of values) belongs: refused inside that key.
    path = draw(st.sampled_from([p for p, _ in nodes]))
    as_dict = draw(st.booleans())
    if kind == "deep":
        put(data, path, nested(draw(st.integers(2, 60)), as_dict))
    elif kind == "alias_bomb":
        put(data, path, alias_bomb(draw(st.integers(6, 10)), draw(st.integers(6, 9)), as_dict))
    else:
        put(data, path, self_reference(as_dict))
    return data, kind, "inside", path


@pytest.mark.parametrize("kind", KINDS)
@settings(max_examples=25, **FUZZ)
@given(source=st.data(), use_json=st.booleans(), run_design=st.integers(0, 3))
def test_broken_projects_are_refused_with_one_line(kind, source, use_json, run_design, tmp_path, capsys):
    data, kind, rule, path = source.draw(broken_projects(kind), label="case")
    file = tmp_path / "broken.yaml"
    file.write_text(yaml.safe_dump(data, sort_keys=False, allow_unicode=True), encoding="utf-8")
    top_keys = list(data) if isinstance(data, dict) else []
    reported, err, _ = exercise(capsys, file, run_design=run_design == 0, use_json=use_json, top_keys=top_keys)
    event(f"{kind}: {'accepted' if reported is None else 'refused'}")
    where = key_path(path)
    if rule == "any":
        return
    assert reported is not None, f"{kind} at {where!r} was accepted"
    if rule == "whole":
        assert reported == "", err
    elif rule == "exact":
        assert reported == where, f"{kind} at {where!r} reported at {reported!r}: {err}"
    elif rule == "inside":
        assert inside(reported, where), f"{kind} at {where!r} reported at {reported!r}: {err}"
    elif rule == "related":  # the key, a key inside it, or the key that holds it
        assert inside(reported, where) or inside(where, reported), \
            f"{kind} at {where!r} reported at {reported!r}: {err}"
    else:  # parent: the key or one of its siblings, in the mapping that holds it
        assert inside(reported, key_path(path[:-1])), f"{kind} at {where!r} reported at {reported!r}: {err}"


# ----------------------------------------------------------------------------------
# Raw files


def _billion_laughs(key: str) -> str:
    lines = ['lol0: &lol0 ["lol","lol","lol","lol","lol","lol","lol","lol","lol"]']
    for i in range(1, 10):
        lines.append(f"lol{i}: &lol{i} [" + ",".join([f"*lol{i - 1}"] * 9) + "]")
    return "\n".join(lines) + f"\n{key}: *lol9\n"


#: (text substituted into a demo, replacement, key path expected; '' for the whole file)
SUBSTITUTIONS = [
    ("width: 25.0 m", "width: 1" + "0" * 400, "site.width"),          # an integer beyond any float
    ("width: 25.0 m", "width: -1" + "0" * 400, "site.width"),
    ("turns_per_storey: 1\n", "turns_per_storey: 1" + "0" * 330 + "\n", "design.turns_per_storey"),
    ("start_bearing: 270 deg", "start_bearing: 1" + "0" * 400, "design.start_bearing"),
    ("width: 25.0 m", "width: 1" + "0" * 5000, ""),                   # beyond Python's int text limit
    ("width: 25.0 m", "width: !!int x", ""),
    ("width: 25.0 m", "width: !!int", ""),
    ("width: 25.0 m", "width: !!float x", ""),
    ("width: 25.0 m", "width: !!float", ""),
    ("width: 25.0 m", "width: !!bool x", ""),
    ("width: 25.0 m", "width: !!timestamp x", ""),
    ("width: 25.0 m", "width: !!timestamp", ""),
    ("width: 25.0 m", "width: 2001-13-45", ""),
    ("width: 25.0 m", "width: !!python/object:os.system x", ""),
    ("width: 25.0 m", "width: !!binary aGVsaXg=", "site.width"),
    ("width: 25.0 m", "width: !!set {a, b}", "site.width"),
    ("width: 25.0 m", "width: !!pairs [a: 1]", "site.width"),
    ("width: 25.0 m", "width: 2001-12-14", "site.width"),
    ("width: 25.0 m", "width: 1:20:30", "site.width"),  # YAML 1.1 reads base 60: 4830 m, too large
    ("width: 25.0 m", "width: .nan", "site.width"),
    ("width: 25.0 m", "width: -.inf", "site.width"),
    ("width: 25.0 m", "width: !!float 1e999", "site.width"),
    ("name: Ground", "name: &a [*a]", "levels[0].name"),               # a list that holds itself
    ("name: Ground", "name: ''", "levels[0].name"),
]


@st.composite
def raw_files(draw):
    """(bytes, expectation): None for any outcome, else the key path the error must name
    ('' for a whole-file error), or ('inside', path) for a path inside ``path``."""
    kind = draw(st.sampled_from(["bytes", "text", "empty", "not_utf8", "truncated", "deep", "substitution",
                                 "bomb", "encoding", "top_level", "duplicate"]))
    demo = DEMO_TEXT[draw(st.sampled_from(DEMO_NAMES))]
    if kind == "bytes":
        return draw(st.binary(max_size=3000)), None
    if kind == "text":
        return draw(st.text(st.characters(blacklist_categories=("Cs",)), max_size=2000)).encode(), None
    if kind == "empty":
        return draw(st.sampled_from([b"", b"\n", b"   \n\n", b"# nothing here\n", b"---\n", b"~\n", b"null\n",
                                     b"--- # comment\n...\n"])), ""
    if kind == "not_utf8":
        raw = demo.encode()
        i = draw(st.integers(0, len(raw)))
        bad = bytes([draw(st.integers(0x80, 0xFF))])
        return raw[:i] + bad + raw[i:], ""
    if kind == "truncated":
        raw = demo.encode()
        return raw[:draw(st.integers(0, len(raw)))], None
    if kind == "deep":
        depth = draw(st.sampled_from([10, 100, 500, 1000, 3000, 20000]))
        key = draw(st.sampled_from(["design", "levels", "project", "site"]))
        style = draw(st.sampled_from(["list", "map", "block"]))
        if style == "list":
            body = "[" * depth + "]" * depth
        elif style == "map":
            body = "{a: " * depth + "1" + "}" * depth
        else:
            depth = min(depth, 1000)
            body = "\n" + "".join(" " * (i + 1) + "a:\n" for i in range(depth)) + " " * (depth + 1) + "b"
        raw = f"{key}: {body}\n".encode()
        if draw(st.booleans()):  # then the demo: the key given twice, refused as a duplicate
            raw += b"\n" + demo.encode()
        return raw, None
    if kind == "substitution":
        old, new, where = draw(st.sampled_from(SUBSTITUTIONS))
        text = DEMO_TEXT["demo-metric"]
        assert old in text
        return text.replace(old, new, 1).encode(), where
    if kind == "bomb":  # 9 ** 10 leaves in 400 bytes, in place of one key of the demo
        key = draw(st.sampled_from(["project", "levels", "design", "vehicle", "rules", "traffic"]))
        data = copy.deepcopy(DEMOS["demo-metric"])
        data.pop(key)
        return (_billion_laughs(key) + yaml.safe_dump(data, sort_keys=False)).encode(), ("inside", key)
    if kind == "encoding":
        codec = draw(st.sampled_from(["utf-16", "utf-32", "utf-8-sig", "latin-1"]))
        return (demo.replace("Street", "Stra\u00dfe") if codec == "latin-1" else demo).encode(codec), None
    if kind == "duplicate":  # a key given twice is refused, not resolved to the last value
        return (demo + "\nsite: {width: 1 m, depth: 1 m}\n").encode(), ""
    return draw(st.sampled_from([b"- a\n- b\n", b"[1, 2, 3]\n", b"42\n", b"'text'\n", b"true\n", b"3.0 m\n",
                                 b"!!set {a, b}\n", b"2001-12-14\n"])), ""


@settings(max_examples=150, **FUZZ)
@given(case=raw_files())
def test_raw_files_never_crash(case, tmp_path, capsys):
    raw, where = case
    file = tmp_path / "raw.yaml"
    file.write_bytes(raw)
    try:
        parsed = yaml.safe_load(raw.decode("utf-8"))
        top_keys = list(parsed) if isinstance(parsed, dict) else []
    except Exception:  # whatever the test's own parse makes of it; helix must cope either way
        top_keys = []
    reported, err, _ = exercise(capsys, file, run_design=False, use_json=False, top_keys=top_keys)
    event("accepted" if reported is None else ("refused: whole file" if reported == "" else "refused at a key"))
    if isinstance(where, tuple):
        assert reported is not None and inside(reported, where[1]), err
    elif where is not None:
        assert reported == where, err


# ----------------------------------------------------------------------------------
# Hostile text, huge lists, tiny steps, special files, faults while renaming outputs
# (each family is a reproducer of a crash or hang found once; the expectations are
# the contract above: 0 or 1, or 2 with one line, never a traceback, never a hang).

#: Characters that once crashed or leaked: mathtext syntax, control characters and
#: escape sequences, byte-order marks and other invisible format characters.
HOSTILE = ["$", "\\", "{", "}", "^", "_", "\\frac{", "\\alpha_{", "$$", "%", "\x00", "\x07", "\x08", "\x1b[31m",
           "\x1b]0;x\x07", "\x7f", "\x9b", "\ufeff", "\u200b", "\u202e", "\u2028", "\t", "\r", "\n", "Ω", "ß", "–",
           "车", "\U0001F697", " "]


@st.composite
def hostile_names(draw):
    parts = draw(st.lists(st.sampled_from(HOSTILE) | st.text("abcXYZ019 ", min_size=1, max_size=4),
                          min_size=1, max_size=12))
    return "".join(parts)


@settings(max_examples=25, **FUZZ)
@given(project_name=hostile_names(), level_names=st.lists(hostile_names(), min_size=4, max_size=4, unique=True),
       notes=hostile_names())
def test_hostile_text_is_drawn_and_printed_clean(project_name, level_names, notes, tmp_path, capsys):
    import matplotlib.pyplot as plt

    from helix.errors import clean_text
    from helix.figures import plan_figure, section_figure
    data = copy.deepcopy(DEMOS["demo-metric"])
    data["project"] = {"name": project_name, "notes": notes}
    for level, name in zip(data["levels"][1:], level_names):
        level["name"] = name
    file = tmp_path / "hostile.yaml"
    file.write_text(yaml.safe_dump(data, allow_unicode=True), encoding="utf-8")
    status, out, err = run_cli(capsys, ["check", str(file)])
    judge(status, out, err, str(file))
    assert not any(ord(c) < 32 and c != "\n" or 0x7F <= ord(c) < 0xA0 for c in out + err), (out + err)[:300]
    assert "\x1b" not in out + err and "\ufeff" not in out + err
    if status == 2:  # a name that cleans to nothing, or two levels that clean alike
        return
    import helix
    ev = helix.evaluate(helix.load_project(file), vehicle=False)
    assert ev.project.name == clean_text(project_name).strip()
    import warnings
    for make in (plan_figure, section_figure):
        fig = make(ev)
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")  # glyphs DejaVu Sans lacks (CJK, emoji) are drawn as boxes
                fig.canvas.draw()  # mathtext, when it is on, fails here
        finally:
            plt.close(fig)


@st.composite
def huge_lists(draw):
    data = copy.deepcopy(DEMOS["demo-metric"])
    n = draw(st.sampled_from([201, 1000, 10_000]))
    where = draw(st.sampled_from(["levels", "turns", "lanes", "bearing_levels"]))
    if where == "levels":
        data["levels"] = [{"name": "L0", "level": "0 m"}] + [{"name": f"L{i}", "height": "3 m"} for i in range(1, n)]
        return data, "levels"
    if where == "bearing_levels":
        data["levels"] = [{"name": f"L{i}", "level": f"{3 * i} m", "bearing": "0 deg"} for i in range(n)]
        return data, "levels"
    if where == "turns":
        data["design"]["turns_per_storey"] = [1] * n
        return data, "design.turns_per_storey"
    data["design"]["lane_width"] = ["3 m"] * n
    return data, "design.lane_width"


@settings(max_examples=6, **FUZZ)
@given(case=huge_lists())
def test_huge_lists_are_refused_in_bounded_time(case, tmp_path, capsys):
    data, where = case
    file = tmp_path / "huge.yaml"
    file.write_text(yaml.safe_dump(data), encoding="utf-8")
    reported, err, _ = exercise(capsys, file, run_design=False, use_json=False)
    assert reported == where, err


@st.composite
def tiny_steps(draw):
    data = copy.deepcopy(DEMOS["demo-metric"])
    tiny = draw(st.sampled_from(["1e-9 m", "1e-300 m", "0.0001 mm", "5e-324", "0.00001 in", "0.0009 m"]))
    where = draw(st.sampled_from(["stations", "height", "level"]))
    if where == "stations":
        spacing = draw(st.sampled_from([tiny, "0.0999 m", "3 in", "1 mm"]))
        return data, ["--stations", spacing, "-o", "{out}"], "--stations"
    if where == "height":
        data["levels"][2] = {"name": "Level 2", "height": tiny}
        return data, [], "levels[2].height"
    data["levels"][2] = {"name": "Level 2", "level": f"{3.0 + float(tiny.split()[0]) * 1e-3:.17g} m"}
    return data, [], "levels[2].level"


@settings(max_examples=12, **FUZZ)
@given(case=tiny_steps())
def test_tiny_steps_are_refused(case, tmp_path, capsys):
    data, extra, where = case
    file = tmp_path / "tiny.yaml"
    file.write_text(yaml.safe_dump(data), encoding="utf-8")
    out = tmp_path / "out"
    args = ["check", str(file)] + [a.replace("{out}", str(out)) for a in extra]
    status, stdout, err = run_cli(capsys, args)
    assert status == 2 and err.count("\n") == 1, err
    assert f": {where}: " in err, err
    assert not out.exists()


SPECIAL = ["fifo", "dev_zero", "dev_urandom", "dev_null", "folder", "socket", "symlink_zero", "dangling"]


@pytest.mark.parametrize("kind", SPECIAL)
def test_special_files_are_refused_without_reading(kind, tmp_path, capsys):
    import os
    import socket
    path = tmp_path / "project.yaml"
    if kind == "fifo":
        os.mkfifo(path)
    elif kind.startswith("dev_"):
        if not os.path.exists(f"/dev/{kind[4:]}"):
            pytest.skip("no such device here")
        path = Path(f"/dev/{kind[4:]}")
    elif kind == "folder":
        path.mkdir()
    elif kind == "socket":
        sock = socket.socket(socket.AF_UNIX)
        sock.bind(str(path))
    elif kind == "symlink_zero":
        path.symlink_to("/dev/zero")
    else:
        path.symlink_to(tmp_path / "nowhere.yaml")
    try:
        for command in ("check", "design"):
            status, out, err = run_cli(capsys, [command, str(path)])
            assert judge(status, out, err, str(path)) == "", err
    finally:
        if kind == "socket":
            sock.close()


@st.composite
def rename_faults(draw):
    """An output folder in some state, and a fault during the next write."""
    old = {f"f{i}.txt": f"old {i}".encode() for i in range(draw(st.integers(0, 5)))}
    new = {f"f{i}.txt": f"new {i}".encode() for i in range(draw(st.integers(1, 6)))}
    clutter = draw(st.sampled_from(["none", "folder", "foreign", "manifest_folder", "manifest_bytes", "stale_tmp",
                                    "journal_damaged"]))
    fail_at = draw(st.integers(0, 14))  # which os.replace call fails (0: none)
    code = draw(st.sampled_from([28, 13, 30, 21]))  # ENOSPC, EACCES, EROFS, EISDIR
    return old, new, clutter, fail_at, code


@settings(max_examples=60, **FUZZ)
@given(case=rename_faults())
def test_rename_phase_faults_leave_all_old_or_all_new(case, tmp_path_factory):
    import os

    import helix.outputs as outputs
    from helix.errors import InputError, OutputError
    old, new, clutter, fail_at, code = case
    folder = tmp_path_factory.mktemp("faults") / "out"
    if old:
        outputs.write_outputs(folder, old)
    folder.mkdir(exist_ok=True)
    target = sorted(new)[-1]
    if clutter == "folder":
        (folder / target).unlink(missing_ok=True)
        (folder / target).mkdir()
    elif clutter == "foreign":
        if not (folder / target).exists():
            (folder / target).write_bytes(b"the user's own")
    elif clutter == "manifest_folder":
        (folder / outputs.MANIFEST).unlink(missing_ok=True)
        (folder / outputs.MANIFEST).mkdir()
    elif clutter == "manifest_bytes":
        (folder / outputs.MANIFEST).write_bytes(b"\xff\xfe\x00")
    elif clutter == "stale_tmp":
        (folder / f".helix-00000000abcd.{target}.tmp").write_bytes(b"half")
    elif clutter == "journal_damaged":
        (folder / outputs.JOURNAL).write_bytes(b"{not json")

    def state():
        return {p.name: (p.read_bytes() if p.is_file() else "folder") for p in folder.iterdir()
                if p.name not in (outputs.LOCK,)}

    before = state()
    real = os.replace
    calls = {"n": 0}

    def flaky(src, dst):
        calls["n"] += 1
        if calls["n"] == fail_at:
            raise OSError(code, os.strerror(code))
        return real(src, dst)

    outputs.os.replace = flaky
    try:
        outputs.write_outputs(folder, new)
        ok = True
    except (InputError, OutputError) as exc:
        ok = False
        assert "\n" not in exc.line()
    finally:
        outputs.os.replace = real
    if clutter == "journal_damaged":
        assert not ok and state() == before
        return
    # Whatever happened, the next run into the folder starts with the recovery.
    with outputs.folder_lock(folder):
        outputs.recover(folder)
    after = state()
    assert not [n for n in after if n.endswith((".tmp", ".old")) or n == outputs.JOURNAL], after
    outputs_now = {k: v for k, v in after.items() if not k.startswith(".")}
    old_set = {k: v for k, v in before.items() if not k.startswith(".")}
    new_set = {**{k: v for k, v in old_set.items() if k not in old}, **new}  # the user's own files stay
    if ok:
        assert outputs_now == new_set
    else:
        assert outputs_now in (old_set, new_set), (old_set, outputs_now)
    if clutter in ("folder", "manifest_folder", "manifest_bytes") or (
            clutter == "foreign" and target not in old):
        assert not ok and outputs_now == old_set
