"""The consultant's comparison of options: traffic, quantities, sensitivity and the
margins to the binding rules of each layout's design, computed once per design
result.  Pure data (SI); :mod:`helix.results` formats it.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from .assumptions import ComparisonAssumptions
from .capacity import HelixTraffic, helix_traffic
from .quantities import Quantities, quantities
from .intervals import RegionError
from .sensitivity import PARAMETERS, STEPS, ParameterSensitivity, Sensitivity, sensitivity

__all__ = ["OptionComparison", "compare_option", "compare_options", "design_speed", "DEFAULT_SPEED"]

#: Where the rule set sets no design speed (common practice, no single source).
DEFAULT_SPEED = 15 / 3.6


def design_speed(project) -> float:
    """The rule set's design speed (m/s), 15 km/h where it sets none."""
    return project.rules.design_speed.value if project.rules.design_speed else DEFAULT_SPEED


@dataclass(frozen=True)
class OptionComparison:
    layout: str
    basis: ComparisonAssumptions
    traffic: HelixTraffic
    quantities: Quantities
    sensitivity: Sensitivity | None
    tightest: tuple  # the checks with the least relative margin, tightest first (helix.checks.Check)


def _tightest(ev, n: int = 3) -> tuple:
    """The ``n`` checks nearest their limits, by margin relative to the limit."""
    rated = []
    for c in ev.checks:
        m = c.margin
        if m is None or c.limit is None or c.advisory or not math.isfinite(m):
            continue
        # Relative to the limit (to the value where the limit is zero, as a clearance of 0).
        rated.append((m / max(abs(c.limit), abs(c.value or 0.0), 1e-9), c.id, c))
    rated.sort(key=lambda x: (x[0], x[1]))
    return tuple(c for _, _, c in rated[:n])


def compare_option(project, option) -> OptionComparison | None:
    """Traffic, quantities, sensitivity and tightest checks of one option of a search
    of ``project`` (``None`` for a layout with no design to show)."""
    ev = option.evaluation
    if ev is None:
        return None
    basis = project.comparison
    p = ev.project
    traffic = helix_traffic(ev.helix, design_speed(p), basis.headway, basis.bays_to_empty)
    q = quantities(ev.helix, tuple(lv.level for lv in p.levels), p.structure.slab_depth,
                   p.structure.wall_thickness, basis)
    sens = None
    if option.family is not None:
        try:
            sens = sensitivity(project, option.family, ev.helix.threads[0].centre_radius, option.binding)
        except (ValueError, RegionError, ArithmeticError) as exc:
            # A changed project that cannot be built (DesignError and InvalidValue are
            # ValueErrors): say so in the table instead of losing the whole comparison.
            sens = Sensitivity(option.binding, "", False, f"not computed: {type(exc).__name__}: {exc}", math.nan,
                               tuple(ParameterSensitivity(p, STEPS[p], math.nan, math.nan, "", "")
                                     for p in PARAMETERS))
    return OptionComparison(option.layout, basis, traffic, q, sens, _tightest(ev))


_MEMO: dict[int, tuple[object, tuple]] = {}


def compare_options(result) -> tuple[OptionComparison | None, ...]:
    """:func:`compare_option` for every option of ``result``, in its order; kept for the
    last few results (the terminal table, the JSON and the report all show it)."""
    hit = _MEMO.get(id(result))
    if hit is not None and hit[0] is result:
        return hit[1]
    out = tuple(compare_option(result.project, o) for o in result.options)
    if len(_MEMO) >= 8:
        _MEMO.pop(next(iter(_MEMO)))
    _MEMO[id(result)] = (result, out)
    return out
