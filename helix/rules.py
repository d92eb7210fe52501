"""Rule sets: the limits a helix is checked against, each with its source.

A rule set is a YAML file in ``configs/rules/`` (see DEVELOPERS.md for the keys).
A project names one and may override any key inline.  Keys a rule book does not set
are ``None`` here, and the check they would drive is reported as "no limit".
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .errors import InputError, Node, finite, require
from .library_files import find_named, read_yaml
from .units import format_gradient, format_length, format_number, format_speed

__all__ = ["Limit", "GradientLimit", "TransitionRule", "RuleSet", "load_rule_set",
           "REFERENCE_LINES"]

#: Where a gradient limit is measured across the carriageway.
REFERENCE_LINES = ("centre_line", "lane_centre", "inner_kerb", "inner_kerb_offset")


@dataclass(frozen=True)
class Limit:
    """One limit of a rule book: its value in SI units and where it comes from."""

    value: float
    source: str
    preferred: float | None = None

    def __post_init__(self):
        require(finite(self.value), self, "value", self.value, "a finite number")
        require(self.preferred is None or finite(self.preferred), self, "preferred", self.preferred,
                "None or a finite number")


@dataclass(frozen=True)
class GradientLimit:
    """A maximum gradient measured on one reference line.

    ``by_rise`` holds ``(rise_up_to, max_gradient)`` pairs in increasing rise; the last
    rise is ``inf``.  IStructE, for example, allows a steeper curved ramp for a storey
    rise up to 3.0 m than above it.
    """

    measured_at: str
    offset: float
    by_rise: tuple[tuple[float, float], ...]
    source: str

    def __post_init__(self):
        require(self.measured_at in REFERENCE_LINES, self, "measured_at", self.measured_at,
                f"one of {', '.join(REFERENCE_LINES)}")
        require(finite(self.offset, 0), self, "offset", self.offset, "an offset of zero or more in metres")
        require(len(self.by_rise) >= 1 and all(finite(g, 0, 1, open_low=True) for _, g in self.by_rise), self,
                "by_rise", self.by_rise, "(rise, gradient) pairs with gradients above 0 and at most 1")

    def max_for_rise(self, rise: float) -> float:
        for up_to, g in self.by_rise:
            if rise <= up_to + 1e-9:
                return g
        return self.by_rise[-1][1]

    @property
    def label(self) -> str:
        if self.measured_at == "inner_kerb_offset":
            return f"{self.offset:.2f} m from the inner kerb"
        return self.measured_at.replace("_", " ")

    @property
    def check_id(self) -> str:
        return f"gradient_{self.measured_at}"


@dataclass(frozen=True)
class TransitionRule:
    """Reduced-grade transitions at half the grade change, where the change is large."""

    length: float
    when_grade_change_over: float
    source: str


@dataclass(frozen=True)
class RuleSet:
    """A rule book's limits, each a :class:`Limit` (or :class:`GradientLimit`) with its
    value and source; ``None`` where the rule book sets no limit.

    >>> import helix
    >>> rules = helix.load_project(helix.demo_file("demo-metric")).rules
    >>> rules.name, rules.lane_width_one_way.value
    ('istructe-2011', 3.65)
    >>> rules.lane_width_one_way.source
    'IStructE 4th ed. (2011) table 4.6: one-way curved ramp 3.65 m; table checked on a stored copy'
    """

    name: str
    title: str
    notes: str = ""
    gradient: tuple[GradientLimit, ...] = ()
    lane_width_one_way: Limit | None = None
    lane_width_two_way: Limit | None = None
    central_kerb_width: Limit | None = None
    inner_kerb_radius: Limit | None = None
    outer_kerb_radius: Limit | None = None
    clear_height: Limit | None = None
    structure_clearance_outside: Limit | None = None
    structure_clearance_inside: Limit | None = None
    cross_fall_min: Limit | None = None
    cross_fall_max: Limit | None = None
    landing_length: Limit | None = None
    transition: TransitionRule | None = None
    design_speed: Limit | None = None
    side_friction_max: Limit | None = None
    vehicle_roof_clearance: Limit | None = None
    swept_path_clearance: Limit | None = None  # the shorthand: body to each kerb
    swept_path_clearance_inner: Limit | None = None
    swept_path_clearance_outer: Limit | None = None
    ground_clearance_margin: Limit | None = None
    inner_kerb_gradient_warning: Limit | None = None
    files: tuple[str, ...] = field(default=(), compare=False)

    def clearance_outside(self) -> float:
        return self.structure_clearance_outside.value if self.structure_clearance_outside else 0.0

    def clearance_inside(self) -> float:
        return self.structure_clearance_inside.value if self.structure_clearance_inside else 0.0

    def kerb_clearances(self) -> tuple[float, float]:
        """Clearance (m) kept between the vehicle body's swept band and the inner and the
        outer kerb; 0 where the rule set sets none."""
        inner = self.swept_path_clearance_inner or self.swept_path_clearance
        outer = self.swept_path_clearance_outer or self.swept_path_clearance
        return (inner.value if inner else 0.0, outer.value if outer else 0.0)

    def inner_kerb_warning(self) -> Limit:
        """Gradient on the inner kerb above which a rule set that does not limit the inner
        kerb gets a warning: the rule set's own value, else the common-practice one."""
        return self.inner_kerb_gradient_warning or INNER_KERB_WARNING

    def summary(self, units: str = "metric") -> list[tuple[str, str, str]]:
        """(key, value text, source) rows for reports, lengths in ``units``."""
        rows = []
        for g in self.gradient:
            steps = ", ".join(
                (f"{format_gradient(v, units)} up to {format_length(r, units)} rise" if math.isfinite(r)
                 else format_gradient(v, units))
                for r, v in g.by_rise)
            where = (f"{format_length(g.offset, units)} from the inner kerb" if g.measured_at == "inner_kerb_offset"
                     else g.label)
            rows.append((f"gradient on {where}", steps, g.source))
        for key in ("lane_width_one_way", "lane_width_two_way", "central_kerb_width",
                    "inner_kerb_radius", "outer_kerb_radius", "clear_height",
                    "structure_clearance_outside", "structure_clearance_inside",
                    "cross_fall_min", "cross_fall_max", "landing_length", "design_speed",
                    "side_friction_max", "vehicle_roof_clearance", "swept_path_clearance",
                    "swept_path_clearance_inner", "swept_path_clearance_outer",
                    "ground_clearance_margin", "inner_kerb_gradient_warning"):
            lim = getattr(self, key)
            if lim is not None:
                rows.append((key, _value_text(key, lim.value, units), lim.source))
        if self.transition is not None:
            t = self.transition
            rows.append(("transition", f"{format_length(t.length, units)} at half the change where it exceeds "
                         f"{format_gradient(t.when_grade_change_over, units)}", t.source))
        return rows


#: Used when a rule set limits the gradient on another line than the inner kerb and
#: gives no ``inner_kerb_gradient_warning`` of its own.
INNER_KERB_WARNING = Limit(
    0.15, "common practice, no single source: about 15 % is taken as the steepest comfortable grade "
          "at the inner edge of a curved ramp (the value the German garage ordinances, e.g. GaStellV "
          "Bayern s. 3 (1), set on the inner lane edge)")


def _value_text(key: str, value: float, units: str = "metric") -> str:
    if key.startswith("cross_fall") or key == "inner_kerb_gradient_warning":
        return format_gradient(value, units)
    if key == "design_speed":
        return format_speed(value, units)
    if key == "side_friction_max":
        return format_number(value)
    return format_length(value, units)


# ----------------------------------------------------------------------------------
# Loading

# key -> (field name, number key in the mapping, kind of quantity)
_SIMPLE: dict[str, tuple[str, str, str]] = {
    "lane_width_one_way": ("lane_width_one_way", "min", "length"),
    "lane_width_two_way": ("lane_width_two_way", "min", "length"),
    "central_kerb_width": ("central_kerb_width", "value", "length"),
    "inner_kerb_radius": ("inner_kerb_radius", "min", "length"),
    "outer_kerb_radius": ("outer_kerb_radius", "min", "length"),
    "clear_height": ("clear_height", "min", "length"),
    "structure_clearance_outside": ("structure_clearance_outside", "value", "length"),
    "structure_clearance_inside": ("structure_clearance_inside", "value", "length"),
    "landing": ("landing_length", "length", "length"),
    "design_speed": ("design_speed", "value", "speed"),
    "side_friction": ("side_friction_max", "max", "number"),
    "vehicle_roof_clearance": ("vehicle_roof_clearance", "min", "length"),
    "ground_clearance_margin": ("ground_clearance_margin", "min", "length"),
    "inner_kerb_gradient_warning": ("inner_kerb_gradient_warning", "value", "gradient"),
}
_KEYS = ("name", "title", "notes", "extends", "gradient", "cross_fall", "transition",
         "swept_path_clearance", *_SIMPLE)


def _source(node: Node, default: str | None) -> str:
    src = node.child("source", required=default is None)
    if src is None:
        return default  # type: ignore[return-value]
    return src.text()


def _quantity(node: Node, kind: str) -> float:
    if kind == "length":
        return node.length(non_negative=True)
    if kind == "speed":
        return node.speed()
    if kind == "gradient":
        return node.gradient()
    return node.number(non_negative=True, what="a number of zero or more such as 0.15")


def _sourced_parts(e: tuple[Node, str | None], keys: tuple[str, ...]) -> tuple[Node, str, dict]:
    """A mapping of optional values sharing one source: (node, source, {key: node or None})."""
    node, default = e
    node.require_mapping()
    return node, _source(node, default), {k: node.child(k, required=False) for k in keys}


def _parse_simple(node: Node, number_key: str, kind: str, default_source: str | None) -> Limit:
    node.require_mapping()
    value = _quantity(node.child(number_key), kind)  # type: ignore[arg-type]
    pref_node = node.child("preferred", required=False) if number_key == "min" else None
    preferred = _quantity(pref_node, kind) if pref_node is not None else None
    source = _source(node, default_source)
    node.done()
    return Limit(value, source, preferred)


def _parse_gradient(node: Node, default_source: str | None) -> tuple[GradientLimit, ...]:
    limits = []
    for item in node.items():
        item.require_mapping()
        line = item.child("measured_at").text(REFERENCE_LINES)
        offset = 0.0
        if line == "inner_kerb_offset":
            offset = item.child("offset").length(non_negative=True)
        maxn = item.child("max")
        if isinstance(maxn.data, list):
            steps: list[tuple[float, float]] = []
            entries = list(maxn.items())
            if not entries:
                raise maxn.error("got an empty list; expected gradients by storey rise")
            for k, step in enumerate(entries):
                step.require_mapping()
                last = k == len(entries) - 1
                up = step.child("rise_up_to", required=not last)
                rise = up.length(positive=True) if up is not None else math.inf
                if steps and rise <= steps[-1][0]:
                    raise up.error("rises must increase from one step to the next")  # type: ignore[union-attr]
                steps.append((rise, step.child("value").gradient()))
                step.done()
            by_rise = tuple(steps)
        else:
            by_rise = ((math.inf, maxn.gradient()),)
        source = _source(item, default_source)
        item.done()
        limits.append(GradientLimit(line, offset, by_rise, source))
    return tuple(limits)


def _layers(name: str, project_dir: Path | None, file: str, path: str,
            seen: tuple[str, ...] = ()) -> list[tuple[dict, str]]:
    """The rule file and those it extends, base first, as (data, display file)."""
    if name in seen:
        raise InputError(file, path, f"rule set {name!r} extends itself through {' -> '.join(seen)}")
    rule_file = find_named("rules", name, project_dir, file, path)
    data = read_yaml(rule_file)
    shown = str(rule_file)
    root = Node(data, shown)
    base = root.child("extends", required=False)
    layers: list[tuple[dict, str]] = []
    if base is not None:
        layers = _layers(base.text(), project_dir, shown, "extends", seen + (name,))
    return layers + [(data, shown)]


def load_rule_set(name: str, project_dir: Path | None = None,
                  overrides: dict | None = None, *, file: str = "<project>",
                  path: str = "rules.use") -> RuleSet:
    """Load rule set ``name`` (and what it extends), then apply ``overrides``.

    ``file`` and ``path`` locate the reference for error messages.  Overrides without a
    ``source`` are labelled as coming from the project file.
    """
    layers = _layers(name, project_dir, file, path)
    if overrides:
        layers.append((overrides, file))
    # Later layers replace whole keys; remember which file each key came from.
    merged: dict[str, tuple[Any, str, str]] = {}
    for k, (data, shown) in enumerate(layers):
        is_override = overrides is not None and k == len(layers) - 1
        prefix = "rules.override." if is_override else ""
        node = Node(data, shown, prefix.rstrip(".")).require_mapping()
        node.done(extra_valid=tuple(k for k in _KEYS
                                    if not (is_override and k in ("name", "extends"))))
        for key in data:
            merged[key] = (data[key], shown, prefix + key)

    def entry(key: str) -> tuple[Node, str | None] | None:
        if key not in merged or merged[key][0] is None:
            return None
        value, shown, kpath = merged[key]
        default = "project file override" if kpath.startswith("rules.override.") else None
        return Node(value, shown, kpath), default

    fields: dict[str, Any] = {}
    for key, (fname, number_key, kind) in _SIMPLE.items():
        e = entry(key)
        if e is not None:
            fields[fname] = _parse_simple(e[0], number_key, kind, e[1])
    e = entry("gradient")
    if e is not None:
        fields["gradient"] = _parse_gradient(e[0], e[1])
    e = entry("cross_fall")
    if e is not None:
        node, src, parts = _sourced_parts(e, ("min", "max"))
        if all(n is None for n in parts.values()):
            raise node.error("expected 'min' and/or 'max' gradients such as '3%'")
        for key, n in parts.items():
            if n is not None:
                fields[f"cross_fall_{key}"] = Limit(n.gradient(), src)
        node.done()
    e = entry("swept_path_clearance")
    if e is not None:
        node, src, parts = _sourced_parts(e, ("value", "inner", "outer"))
        if parts["value"] is None and (parts["inner"] is None or parts["outer"] is None):
            raise node.error("expected 'value' (body to each kerb) and/or both 'inner' and 'outer' "
                             "lengths such as '0.30 m'")
        for key, n in parts.items():
            if n is not None:
                name = "swept_path_clearance" + ("" if key == "value" else f"_{key}")
                fields[name] = Limit(n.length(non_negative=True), src)
        node.done()
    e = entry("transition")
    if e is not None:
        node, default = e
        node.require_mapping()
        length = node.child("length").length(non_negative=True)
        over_node = node.child("when_grade_change_over", required=False)
        over = over_node.gradient() if over_node is not None else 0.0
        fields["transition"] = TransitionRule(length, over, _source(node, default))
        node.done()

    base_data, base_file = layers[-1 if not overrides else -2]
    top = Node(base_data, base_file)
    title_node = top.child("title", required=False)
    notes_node = top.child("notes", required=False)
    return RuleSet(
        name=name,
        title=title_node.text() if title_node is not None else name,
        notes=notes_node.text() if notes_node is not None else "",
        files=tuple(s for _, s in layers),
        **fields,
    )
