"""The keys of the project file, declared once.

Each section of the project file (the top level, ``project``, each level, ``structure``,
``site``, ``design`` and the mappings inside it) is a :class:`Section` of :class:`Key`
entries: name, form, whether it is required, its default and a description.  Two things
read these declarations:

- the loader (``project.py``, ``approach.py``): :meth:`helix.errors.Node.done` refuses
  any key a section does not declare (with the closest declared key as a hint), and
  refuses, as a bug in helix, a key the loader read without declaring it;
- :mod:`helix.schema`, which turns them into the JSON Schema shipped with helix
  (``helix/project.schema.json``) for editors.

A form is a JSON Schema fragment built by the helpers below (:data:`LENGTH`,
:func:`enum`, :func:`list_of`, :func:`ref` ...).  It states what the text of a value
looks like; the loader checks more (a positive length, levels in ascending order), so a
value the schema refuses the loader refuses too, but not always the other way round.

Adding a key is one entry in :func:`sections` plus the line in the loader that reads it
(``node.child("key", required=False)``); a test checks that every declared key is read
and every read key declared.
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import cache
from typing import Any

__all__ = ["Key", "Section", "sections", "known", "LENGTH", "GRADIENT", "ANGLE", "NUMBER", "text",
           "enum", "list_of", "any_of", "ref", "const"]

Form = dict[str, Any]

#: A length: a bare number (metres) or text with a unit ('3.15 m', '10 ft 6 in', 10'-6").
LENGTH: Form = {"anyOf": [{"type": "number"}, {"type": "string", "pattern": "[0-9]"}],
                "description": "a length: a number of metres or text with a unit such as '3.15 m', "
                               "'250 mm', '10 ft 6 in' or 10'-6\""}
#: A gradient: text only ('8.33%', '1:12', '4.76 deg'); a bare number is ambiguous.
GRADIENT: Form = {"type": "string", "pattern": "[0-9]",
                  "description": "a gradient such as '8.33%', '1:12' or '4.76 deg'"}
#: A plan angle: a bare number of degrees or text ('90 deg', '1.57 rad').
ANGLE: Form = {"anyOf": [{"type": "number"}, {"type": "string", "pattern": "[0-9]"}],
               "description": "an angle: a number of degrees or text such as '90 deg' or '1.57 rad'"}
#: A plain number (or its text, '0.75').
NUMBER: Form = {"anyOf": [{"type": "number"}, {"type": "string", "pattern": "[0-9]"}]}


def text(max_chars: int) -> Form:
    return {"type": "string", "minLength": 1, "maxLength": max_chars}


def enum(choices: tuple[str, ...]) -> Form:
    return {"type": "string", "enum": list(choices)}


def const(value: Any) -> Form:
    return {"const": value}


def list_of(item: Form, min_items: int = 0, max_items: int | None = None) -> Form:
    out: Form = {"type": "array", "items": item}
    if min_items:
        out["minItems"] = min_items
    if max_items is not None:
        out["maxItems"] = max_items
    return out


def any_of(*forms: Form) -> Form:
    return {"anyOf": list(forms)}


def ref(section: str) -> Form:
    """A mapping whose keys are those of the section ``section``."""
    return {"$ref": f"#/$defs/{section}"}


#: A mapping of any keys (checked by a loader of its own: inline vehicles, rule overrides).
ANY_MAPPING: Form = {"type": "object"}


@dataclass(frozen=True)
class Key:
    name: str
    form: Form
    description: str
    required: bool = False
    default: str | None = None  # as written in a file, or a sentence


@dataclass(frozen=True)
class Section:
    description: str
    keys: tuple[Key, ...]
    #: Sets of keys of which exactly one set is given (site: width and depth, or boundary).
    one_of: tuple[tuple[str, ...], ...] = ()

    @property
    def names(self) -> frozenset[str]:
        return frozenset(k.name for k in self.keys)


@cache
def sections() -> dict[str, Section]:
    """Every section of the project file by name; ``"top"`` is the file itself."""
    # Imported here: project.py imports this module, and its choices are defined there.
    from .approach import APPROACH_SIDES
    from .errors import MAX_NAME, MAX_TEXT
    from .project import (CONNECTION_CHOICES, LAYOUT_CHOICES, MAX_LEVELS, OBJECTIVES, SEARCH_LAYOUTS,
                          TRAFFIC, TRANSITION_KINDS)

    turns = any_of(NUMBER, list_of(NUMBER, 1), ref("turns_choices"))
    point = list_of(LENGTH, 2, 2)
    return {
        "top": Section("A helix project file (all scenarios in helix's demos are invented).", (
            Key("project", ref("project"), "Name and notes of the project.", required=True),
            Key("units", enum(("metric", "imperial")), "Units of the tables, figures and report.",
                default="follows the units of the levels"),
            Key("levels", list_of(ref("level"), 2, MAX_LEVELS),
                "Floor levels from the lowest up: a finished floor level or the storey height above "
                "the previous level.", required=True),
            Key("structure", ref("structure"), "What lies between one running surface and the clear "
                "space under it.", required=True),
            Key("site", ref("site"), "The footprint free for the helix.", required=True),
            Key("traffic", enum(TRAFFIC), "One-way, or two lanes side by side on one surface.",
                default="one-way"),
            Key("vehicle", any_of(text(MAX_TEXT), ANY_MAPPING),
                "A bundled vehicle name ('helix library'), a path such as './my-van.yaml', or an "
                "inline mapping of dimensions.", default="aashto-p"),
            Key("rules", any_of(text(MAX_TEXT), ref("rules")),
                "A bundled rule set name ('helix library'), a path such as './rules/local.yaml', or "
                "{use: ..., override: {...}}.", default="conservative-default"),
            Key("design", ref("design"), "The helix, fixed or as search ranges ('helix design').",
                required=True),
            Key("drawing", ref("drawing"), "Title-block text of the drawing sheets.", default="blank fields"),
            Key("comparison", ref("comparison"), "What the comparison of options assumes: headway, "
                "bays to empty, the standard bay and aisle, the parapet.", default="sourced defaults"),
        )),
        "project": Section("Name and notes of the project.", (
            Key("name", text(MAX_NAME), "Shown on every figure and in the report.", required=True),
            Key("notes", text(MAX_TEXT), "Free text for the report.", default="none"),
        )),
        "level": Section("One floor level.", (
            Key("name", any_of(text(MAX_NAME), {"type": "number"}), "The level's name, e.g. 'Level 2'.",
                required=True),
            Key("level", LENGTH, "Finished floor level at the helix connection.",
                default="0 for the first level"),
            Key("height", LENGTH, "Storey height above the previous level (not on the first level)."),
            Key("bearing", ANGLE, "Pinned plan bearing of this level's connection."),
            Key("approach", ref("approach"), "How this floor's aisle meets the helix.",
                default="design.approach"),
        )),
        "structure": Section("What lies between one running surface and the clear space under it.", (
            Key("slab_depth", LENGTH, "Depth of the ramp slab.", required=True),
            Key("hanging_depth", LENGTH, "Beams, services and signs below the slab, under each turn.",
                default="0"),
            Key("wall_thickness", LENGTH, "Outer wall of the helix.", default="0"),
            Key("cover_soffit", LENGTH, "Level of the underside of a roof or deck over the helix.",
                default="none"),
        )),
        "site": Section("The footprint free for the helix: a rectangle (width, depth) or a polygon "
                        "(boundary), with optional no-build zones.", (
            Key("width", LENGTH, "Along plan x (the rectangle shorthand; required unless boundary is given)."),
            Key("depth", LENGTH, "Along plan y (the rectangle shorthand; required unless boundary is given)."),
            Key("margin", LENGTH, "Kept clear inside the footprint edges.", default="0"),
            Key("boundary", list_of(point, 3), "The plot as a simple polygon [[x, y], ...] in plot "
                "coordinates (x, y >= 0), instead of width and depth; needs the 'plots' extra (shapely)."),
            Key("setback", LENGTH, "Kept clear inside the plot boundary (the same as margin; give one).",
                default="0"),
            Key("no_build", list_of(ref("no_build"), 1), "Zones the helix and its clearances keep out of: "
                "columns, a core, a lift shaft; needs the 'plots' extra (shapely)."),
            Key("axis", point, "[x, y] of the helix axis, pinned.",
                default="the centre of the largest circle inside the allowed region"),
            Key("grid", ref("site_grid"), "Where the plot lies in the site grid (setting-out, plan "
                "bearings, north point).", default="plot coordinates, north = +y"),
        ), one_of=(("width", "depth"), ("boundary",))),
        "design": Section("The helix: fixed values, or ranges and choices for 'helix design'.", (
            Key("layouts", list_of(enum(SEARCH_LAYOUTS), 1), "Layouts to search (instead of 'layout')."),
            Key("layout", enum(LAYOUT_CHOICES), "Single, double (interleaved) or concentric helix.",
                default="single"),
            Key("centre_radius", any_of(LENGTH, ref("radius_range")),
                "Carriageway centre-line radius (concentric: of the inner helix), or {min, max}.",
                required=True),
            Key("lane_width", any_of(const("auto"), LENGTH, list_of(LENGTH, 1, 2)),
                "A width, [inner, outer] for two-way traffic, or 'auto' (the larger of the rule "
                "minimum and the vehicle's swept path).", default="the rule set's minimum"),
            Key("central_kerb", LENGTH, "Between the lanes of a two-way helix.",
                default="the rule set's central kerb width"),
            Key("divider", LENGTH, "Between the helices of a concentric pair.", default="0.3 m"),
            Key("turns_per_storey", turns, "Turns per storey: one value, one per storey, or "
                "{choices: [...]}.", default="each layout's usual turns (searched)"),
            Key("hand", enum(("anticlockwise", "clockwise")), "Direction of ascent seen from above.",
                default="anticlockwise"),
            Key("start_bearing", ANGLE, "Plan bearing of the lowest connection, anticlockwise from +x.",
                default="0 deg"),
            Key("landing_length", LENGTH, "Flat length centred on each floor connection.",
                default="the rule set's"),
            Key("transition", any_of(const("none"), const(False), const(0), ref("transition")),
                "Reduced-grade transitions at both ends of every run.", default="the rule set's"),
            Key("cross_fall", GRADIENT, "Cross-fall of the running surface.",
                default="the rule set's minimum"),
            Key("cross_fall_direction", enum(("inward", "outward")), "Which way the surface falls.",
                default="inward"),
            Key("landing_fall", GRADIENT, "Drainage fall of the landings along the ascent.", default="0%"),
            Key("keep", enum(("right", "left")), "Which lane of a two-way helix climbs.", default="right"),
            Key("approach", ref("approach"), "How every floor's aisle meets the helix.",
                default="the tangent, one vehicle length plus the transition"),
            Key("connections", enum(CONNECTION_CHOICES), "Free, same_side (whole turns) or alternate "
                "(half turns).", default="free"),
            Key("objective", enum(OBJECTIVES), "What the search minimises.", default="footprint"),
            Key("target_gradient", GRADIENT, "Optional cap on the reference line, below the rule set's."),
        )),
        "radius_range": Section("A range of centre-line radii to search.", (
            Key("min", LENGTH, "Smallest radius.", required=True),
            Key("max", LENGTH, "Largest radius.", required=True),
        )),
        "turns_choices": Section("Turns per storey to choose from, storey by storey.", (
            Key("choices", list_of(NUMBER, 1), "e.g. [0.5, 1].", required=True),
        )),
        "transition": Section("Transitions between a landing and a run.", (
            Key("length", any_of(LENGTH, const("vehicle")), "Length, or 'vehicle': the shortest the "
                "design vehicle clears.", required=True),
            Key("kind", enum(TRANSITION_KINDS), "segment (half the grade change) or curve.",
                default="segment"),
        )),
        "approach": Section("How a floor's aisle meets the helix: a straight aisle (side, length, "
                            "angle) or a given line.", (
            Key("side", enum(APPROACH_SIDES), "Where the aisle leaves the connection.", default="ahead"),
            Key("length", LENGTH, "Length of the straight aisle.",
                default="one vehicle length plus the transition"),
            Key("line", list_of(list_of(LENGTH, 2, 2), 2), "Plan points [x, y] in site coordinates."),
            Key("grade", GRADIENT, "Grade rising away from the helix.", default="0%"),
            Key("angle", ANGLE, "Outward from the tangent: 0 deg to 90 deg.", default="0 deg"),
        )),
        "comparison": Section("What the comparison of options assumes beyond the design itself.", (
            Key("headway", NUMBER, "Seconds between vehicles in one lane's steady queue (0.1 to 60).",
                default="1.8947 (1,900 vehicles an hour a lane)"),
            Key("bays_to_empty", NUMBER, "Bays to empty through the helix (a whole number).", default="500"),
            Key("bay", ref("bay"), "The standard parking bay.", default="2.4 m x 4.8 m"),
            Key("aisle_width", LENGTH, "Aisle shared by the bays on its two sides.", default="6.0 m"),
            Key("parapet_height", LENGTH, "Edge barrier above the top deck (for wall areas).",
                default="1.1 m"),
        )),
        "bay": Section("A standard parking bay.", (
            Key("width", LENGTH, "Bay width.", default="2.4 m"),
            Key("length", LENGTH, "Bay length.", default="4.8 m"),
        )),
        "no_build": Section("A no-build zone: a polygon or a circle.", (
            Key("name", text(MAX_NAME), "What it is, e.g. 'column C3'.", required=True),
            Key("polygon", list_of(point, 3), "A simple polygon [[x, y], ...] (or give circle)."),
            Key("circle", ref("no_build_circle"), "A circle (or give polygon)."),
        ), one_of=(("polygon",), ("circle",))),
        "no_build_circle": Section("A circular no-build zone.", (
            Key("centre", point, "[x, y] of the centre.", required=True),
            Key("radius", LENGTH, "Radius.", required=True),
        )),
        "site_grid": Section("The plot in the site grid: eastings, northings, bearings clockwise from "
                             "grid north.", (
            Key("origin", list_of(LENGTH, 2, 2), "[easting, northing] of the plot's point (0, 0).",
                default="[0, 0]"),
            Key("rotation", ANGLE, "Bearing of the plot's +y axis, clockwise from grid north.",
                default="0 deg"),
        )),
        "drawing": Section("Title-block text of the drawing sheets (blank: a ruled line to fill by hand).", (
            Key("number", text(MAX_NAME), "Drawing-number prefix; each sheet appends -01, -02 ..."),
            Key("revision", text(MAX_NAME), "Revision, also in the report's page header."),
            Key("date", any_of(text(MAX_NAME), {"type": "number"}), "Date of issue as written, e.g. "
                "2026-12-01 (never the clock: outputs stay deterministic)."),
            Key("drawn", text(MAX_NAME), "Drawn by."),
            Key("checked", text(MAX_NAME), "Checked by."),
        )),
        "rules": Section("A rule set with changes of its values.", (
            Key("use", text(MAX_TEXT), "The rule set: a bundled name or a path.", required=True),
            Key("override", ANY_MAPPING, "Values of the rule set to replace (its own keys)."),
        )),
    }


def known(section: str) -> frozenset[str]:
    """The key names the section ``section`` declares."""
    return sections()[section].names
