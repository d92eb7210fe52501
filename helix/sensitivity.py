"""How fragile a chosen design is: the change of its radius and footprint per step of
storey height, slab depth, hanging depth and allowed gradient.

The search puts the radius ``r`` on the boundary of its binding constraint,
``m(r, p) = 0`` for the constraint's margin ``m`` and a project parameter ``p``.  By the
implicit function theorem the boundary moves by

    dr/dp = -(dm/dp) / (dm/dr),

and the footprint (overall diameter ``D(r)``) by ``dD/dp = D'(r) dr/dp``.  The partial
derivatives are taken of the exact margin (the same function the search solves, at
one radius and a hair either side of it, central differences of step ``1e-5`` m or
``1e-6``), never by rerunning the search.  A linear change is valid while the same
constraint binds: each step is checked by evaluating every other margin of the
changed project at the moved radius, and where one fails the table says the binding
rule switches within the step (the value is then one-sided: valid only up to the
switch).  A radius bounded by the search range or by a fixed geometric limit does
not move.

References
----------
Implicit function theorem: W. Rudin, *Principles of Mathematical Analysis*, 3rd ed.
(1976), theorem 9.28.  Central differences and their error: Abramowitz and Stegun,
*Handbook of Mathematical Functions* (1964), 25.3.21.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Callable

import numpy as np

from .project import Project

__all__ = ["PARAMETERS", "STEPS", "ParameterSensitivity", "Sensitivity", "perturbed", "binding_margin",
           "sensitivity", "binding_key"]

#: The parameters varied and their steps (SI): storey height, slab and hanging depth
#: by 100 mm, every allowed gradient by one percentage point.
PARAMETERS = ("storey_height", "slab_depth", "hanging_depth", "gradient")
STEPS = {"storey_height": 0.1, "slab_depth": 0.1, "hanging_depth": 0.1, "gradient": 0.01}
TITLES = {"storey_height": "storey height (every storey)", "slab_depth": "slab depth",
          "hanging_depth": "hanging depth", "gradient": "allowed gradient (every limit)"}
_H_R = 1e-5  # m: radius step of the central differences
_H_P = {"storey_height": 1e-5, "slab_depth": 1e-5, "hanging_depth": 1e-5, "gradient": 1e-6}


@dataclass(frozen=True)
class ParameterSensitivity:
    parameter: str
    step: float  # SI
    d_radius: float  # change of the centre radius per +step (m); -step gives the opposite
    d_diameter: float  # change of the overall diameter per +step (m)
    switch_plus: str  # constraint that starts to bind within +step, or ''
    switch_minus: str  # within -step, or ''

    @property
    def title(self) -> str:
        return TITLES[self.parameter]


@dataclass(frozen=True)
class Sensitivity:
    binding: str  # the binding constraint as the search named it
    key: str  # the margin differentiated
    movable: bool  # False: the radius is fixed by the search range or the geometry
    note: str
    dm_dr: float
    rows: tuple[ParameterSensitivity, ...]


def perturbed(project: Project, parameter: str, delta: float) -> Project:
    """``project`` with every storey ``delta`` taller, the slab or hanging depth
    ``delta`` deeper, or every allowed gradient (and any target) ``delta`` steeper."""
    if parameter == "storey_height":
        levels = tuple(replace(lv, level=lv.level + i * delta) for i, lv in enumerate(project.levels))
        soffit = project.structure.cover_soffit
        st = project.structure if soffit is None else replace(project.structure,
                                                              cover_soffit=soffit + project.storeys * delta)
        return replace(project, levels=levels, structure=st)
    if parameter in ("slab_depth", "hanging_depth"):
        st = project.structure
        return replace(project, structure=replace(st, **{parameter: getattr(st, parameter) + delta}))
    if parameter == "gradient":
        rules = project.rules
        limits = tuple(replace(g, by_rise=tuple((h, v + delta) for h, v in g.by_rise)) for g in rules.gradient)
        out = replace(project, rules=replace(rules, gradient=limits))
        sp = project.search
        if sp is not None and sp.target_gradient is not None:
            out = replace(out, search=replace(sp, target_gradient=sp.target_gradient + delta))
        return out
    raise ValueError(f"unknown parameter {parameter!r}")


def binding_key(label: str) -> str:
    """The margin a binding label names: its first word (``gradient_centre_line``,
    ``footprint``, ``lane_width_swept``...)."""
    return label.split(" ")[0].strip() if label else ""


_FIXED = ("search range", "geometry", "least-failing", "infeasible")


def binding_margin(project: Project, family, label: str, near: float) -> Callable[[float], float] | None:
    """The margin ``m(r)`` of the constraint ``label`` names, for ``project``, about the
    radius ``near``; ``None`` where the radius is fixed (the search range, the geometry)."""
    from . import search as S
    if not label or label.startswith(_FIXED):
        return None
    key = binding_key(label)
    if label.startswith("lane_width_swept (") or label.startswith("lane_width_swept("):
        return _kink_margin(project, family, label, near)
    if label.startswith("transitions needed") or label.startswith("landings and transitions"):
        return _switch_margin(project, family, label)
    if key in S.FULL_CHECK_ONLY:
        return lambda r: S._full_check_margin(project, family, r, {key})
    head = key == "clear_height"

    def m(r: float) -> float:
        sc = S.screen(project, family, [r], with_headroom=head)
        return float(sc.margins[key][0]) if key in sc.margins else math.nan
    return m


def _kink_margin(project: Project, family, label: str, near: float) -> Callable[[float], float]:
    """``r - r_k`` for the radius ``r_k`` nearest ``near`` where an auto lane width changes
    regime as ``label`` says (its root, by :func:`helix.search._kinks`)."""
    from . import search as S

    def m(r: float) -> float:
        ks = [k for k, lab in S._kinks(project, family, near - 0.5, near + 0.5) if lab == label]
        return r - min(ks, key=lambda k: abs(k - near)) if ks else math.nan
    return m


def _switch_margin(project: Project, family, label: str) -> Callable[[float], float] | None:
    """``r - r_s`` for the switch radius ``r_s`` of that label nearest the design (a
    closed form of the storey's rise and turns, :func:`helix.search._switch_radii`)."""
    from . import search as S
    rises = project.storey_heights

    def m(r: float) -> float:
        best = math.nan
        for rise, turns in zip(rises, family.turns):
            for rs, lab in S._switch_radii(project, family, rise, turns, 0.5 * r, 2.0 * r):
                if lab.split(" (")[0] == label.split(" (")[0] and (math.isnan(best) or abs(r - rs) < abs(best)):
                    best = r - rs
        return best
    return m


def active_binding(project: Project, family, radius: float, tol: float = 1e-5) -> str:
    """The constraint on whose boundary ``radius`` lies, found from the margins (for a
    design whose search label is not a constraint, such as a least-failing one): an
    auto lane width's change of regime there, or the screened margin nearest zero."""
    from . import search as S
    kinks = S._kinks(project, family, radius - 1e-4, radius + 1e-4)
    near = [(abs(r - radius), lab) for r, lab in kinks if abs(r - radius) <= tol]
    if near:
        return min(near)[1]
    head = project.rules.clear_height is not None
    sc = S.screen(project, family, [radius - 1e-4, radius, radius + 1e-4], with_headroom=head)
    # A margin that does not change with the radius (a lane at its rule width) bounds nothing.
    active = [(abs(float(v[1])), k) for k, v in sc.margins.items()
              if k != "geometry" and np.all(np.isfinite(v)) and abs(float(v[1])) <= tol
              and abs(float(v[2] - v[0])) > 1e-12]
    return min(active)[1] if active else ""


def _diameter(project: Project, family, r: float) -> float:
    from . import search as S
    return float(S.screen(project, family, [r], with_headroom=False).diameter[0])


def _failing(project: Project, family, r: float) -> list[str]:
    """Constraints the search screens that fail at ``r``."""
    from . import search as S
    head = project.rules.clear_height is not None
    sc = S.screen(project, family, [r], with_headroom=head)
    return [k for k, v in sc.margins.items() if k != "geometry" and float(v[0]) < -1e-7]


def _switches(project: Project, family, r: float, key: str, already: list[str]) -> str:
    """Constraints (other than ``key`` and those ``already`` failing) that fail at ``r``."""
    return ", ".join(k for k in _failing(project, family, r) if k != key and k not in already)


def sensitivity(project: Project, family, radius: float, label: str) -> Sensitivity:
    """Radius and footprint change per step of each parameter, for the design of
    ``family`` at ``radius`` whose radius is bound by ``label``."""
    if label.startswith(("least-failing", "infeasible")) or not label:
        label = active_binding(project, family, radius) or label
    m0 = binding_margin(project, family, label, radius)
    key = binding_key(label)
    if m0 is None:
        note = (f"the radius is fixed by {label or 'nothing named'}; no parameter here moves it"
                if label else "no binding constraint named")
        fixed = tuple(ParameterSensitivity(p, STEPS[p], 0.0, 0.0, "", "") for p in PARAMETERS)
        return Sensitivity(label, key, False, note, math.nan, fixed)
    dm_dr = (m0(radius + _H_R) - m0(radius - _H_R)) / (2 * _H_R)
    d_diam = (_diameter(project, family, radius + _H_R) - _diameter(project, family, radius - _H_R)) / (2 * _H_R)
    rows: list[ParameterSensitivity] = []
    note = ""
    already = _failing(project, family, radius)
    for p in PARAMETERS:
        h = _H_P[p]
        mp = binding_margin(perturbed(project, p, h), family, label, radius)
        assert mp is not None
        try:
            mm = binding_margin(perturbed(project, p, -h), family, label, radius)
            assert mm is not None
            dm_dp = (mp(radius) - mm(radius)) / (2 * h)
        except ValueError:  # a depth of zero cannot be thinner: the derivative from above
            dm_dp = (mp(radius) - m0(radius)) / h
        if not (math.isfinite(dm_dr) and abs(dm_dr) > 1e-12 and math.isfinite(dm_dp)):
            note = "the binding margin does not change with the radius here; derivatives not defined"
            rows.append(ParameterSensitivity(p, STEPS[p], math.nan, math.nan, "", ""))
            continue
        dr = -dm_dp / dm_dr * STEPS[p]
        sw = []
        for sign in (1, -1):
            try:
                sw.append(_switches(perturbed(project, p, sign * STEPS[p]), family, radius + sign * dr, key, already))
            except ValueError:  # the changed project cannot be built (e.g. a depth below zero)
                sw.append("cannot be built")
        rows.append(ParameterSensitivity(p, STEPS[p], dr, d_diam * dr, sw[0], sw[1]))
    return Sensitivity(label, key, True, note, dm_dr, tuple(rows))
