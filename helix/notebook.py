"""Short text and HTML views of projects, evaluations and design results.

``repr()`` of a :class:`~helix.project.Project`, :class:`~helix.evaluate.Evaluation` or
:class:`~helix.search.DesignResult` is one line (the dataclass default printed every
field, 14,000 characters for an evaluation); in a notebook their ``_repr_html_`` shows a
summary table, the verdict and the plan as inline SVG (a project's fixed design is
checked without rolling the vehicle; a search space is only summarised).  The plan is drawn
with matplotlib's Agg canvas and closed at once: the notebook's backend and open figures
are left as they were.
"""
from __future__ import annotations

import html
import io
import re
from typing import TYPE_CHECKING, Any

from .units import format_gradient, format_length

if TYPE_CHECKING:
    from .evaluate import Evaluation
    from .project import Project
    from .search import DesignResult

__all__ = ["project_repr", "project_html", "evaluation_repr", "evaluation_html", "design_repr",
           "design_html", "plan_svg"]

_MAX_NAME = 60


def _name(project: "Project") -> str:
    name = project.name
    return name if len(name) <= _MAX_NAME else name[:_MAX_NAME - 1] + "…"


def _design_text(project: "Project") -> str:
    d, sp = project.design, project.search
    if sp is not None and not sp.fixed:
        return (f"search {'/'.join(sp.layouts)}, radius {format_length(sp.radius_min, project.units)} to "
                f"{format_length(sp.radius_max, project.units)}")
    turns = sorted(set(d.turns_per_storey))
    return (f"{d.layout} helix, radius {format_length(d.centre_radius, project.units)}, "
            f"{'/'.join(f'{t:g}' for t in turns)} turns per storey")


def project_repr(project: "Project") -> str:
    return (f"<Project {_name(project)!r}: {project.storeys} storeys, {project.traffic}, "
            f"{_design_text(project)}; rules {project.rules.name}, vehicle {project.vehicle.name}>")


def _failing(ev: "Evaluation") -> list[str]:
    return [c.id for c in ev.checks if not c.ok]


def _verdict(ev: "Evaluation") -> str:
    fails = _failing(ev)
    return "all checks pass" if not fails else f"FAIL {len(fails)} of {len(ev.checks)}: " + ", ".join(fails[:4]) + (
        ", ..." if len(fails) > 4 else "")


def evaluation_repr(ev: "Evaluation") -> str:
    clear = f", headroom {format_length(ev.headroom.clear, ev.project.units)}" if ev.headroom is not None else ""
    return f"<Evaluation of {_name(ev.project)!r}: {_verdict(ev)}{clear}>"


def design_repr(result: "DesignResult") -> str:
    n = len(result.options)
    if result.best is None:
        return f"<DesignResult of {_name(result.project)!r}: no layout of {n} passes>"
    best = result.options[result.best]
    radius = ""
    if best.evaluation is not None:
        radius = f", radius {format_length(best.evaluation.project.design.centre_radius, result.project.units)}"
    return f"<DesignResult of {_name(result.project)!r}: best {best.layout}{radius}, {n} layouts searched>"


def _table(rows: list[tuple[str, str]]) -> str:
    body = "".join(f"<tr><th style='text-align:left'>{html.escape(k)}</th><td style='text-align:left'>"
                   f"{html.escape(v)}</td></tr>" for k, v in rows)
    return f"<table>{body}</table>"


def _project_rows(project: "Project") -> list[tuple[str, str]]:
    u = project.units
    return [("project", project.name), ("levels", f"{len(project.levels)} ({project.levels[0].name} to "
                                                  f"{project.levels[-1].name})"),
            ("storey heights", ", ".join(format_length(h, u) for h in project.storey_heights)),
            ("site", f"{format_length(project.site.width, u)} x {format_length(project.site.depth, u)}"
                     + (f" (a polygon of {len(project.site.boundary)} vertices, {len(project.site.no_build)} no-build "
                        "zone(s))" if not project.site.is_rectangle and project.site.boundary else "")),
            ("traffic", project.traffic), ("design", _design_text(project)),
            ("rules", f"{project.rules.name}: {project.rules.title}"),
            ("vehicle", f"{project.vehicle.name}: {project.vehicle.title}")]


def project_html(project: "Project") -> str:
    """A fixed design is checked (without rolling the vehicle, the slow part) for its
    verdict and plan; a search space is only summarised (``helix.design`` searches it)."""
    rows = _table(_project_rows(project))
    sp = project.search
    if sp is not None and not sp.fixed:
        return (f"<div><strong>helix project: a search space</strong>{rows}"
                "<p><em>helix.design(project)</em> searches it.</p></div>")
    from .errors import DesignError
    from .evaluate import evaluate
    try:
        ev = evaluate(project, vehicle=False)
    except DesignError as exc:
        return (f"<div><strong>helix project: cannot be built</strong>{rows}"
                f"<p>{html.escape(exc.path)}: {html.escape(str(exc))}</p></div>")
    return (f"<div><strong>helix project: {html.escape(_verdict(ev))} (vehicle not rolled; "
            f"helix.evaluate(project) for every check)</strong>{rows}{plan_svg(ev)}"
            "<p><em>A design aid: local codes and licensed professionals govern.</em></p></div>")


def plan_svg(ev: "Evaluation") -> str:
    """The plan figure of ``ev`` as SVG text, without an XML prolog (for inline HTML)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    from .figures import FIGURES
    draw = dict((name, fn) for name, fn, _ in FIGURES)["plan"]
    fig = draw(ev)
    try:
        FigureCanvasAgg(fig)  # no pyplot backend: nothing shown, nothing switched
        buf = io.StringIO()
        fig.savefig(buf, format="svg")
    finally:
        import matplotlib.pyplot as plt
        plt.close(fig)
    svg = buf.getvalue()
    svg = svg[svg.find("<svg"):]
    return re.sub(r'<svg([^>]*?) width="[^"]*" height="[^"]*"', r'<svg\1 width="100%" height="auto"', svg, count=1)


def _checks_html(ev: "Evaluation") -> str:
    u = ev.project.units
    rows = []
    for c in ev.checks:
        def fmt(x: Any) -> str:
            if x is None:
                return "-"
            if c.quantity == "gradient":
                return format_gradient(x)
            if c.quantity == "length":
                return format_length(x, u)
            return f"{x:.3g}"
        status = "pass" if c.ok else "FAIL"
        rows.append(f"<tr><td>{html.escape(c.id)}</td><td>{fmt(c.value)}</td><td>{fmt(c.limit)}</td>"
                    f"<td>{status}</td></tr>")
    return ("<table><tr><th>check</th><th>value</th><th>limit</th><th>status</th></tr>"
            + "".join(rows) + "</table>")


def evaluation_html(ev: "Evaluation") -> str:
    return (f"<div><strong>helix evaluation: {html.escape(_verdict(ev))}</strong>"
            f"{_table(_project_rows(ev.project))}{_checks_html(ev)}{plan_svg(ev)}"
            "<p><em>A design aid: local codes and licensed professionals govern.</em></p></div>")


def design_html(result: "DesignResult") -> str:
    u = result.project.units
    rows = []
    for i, o in enumerate(result.options):
        radius = format_length(o.evaluation.project.design.centre_radius, u) if o.evaluation is not None else "-"
        rows.append(f"<tr><td>{i + 1}</td><td>{html.escape(o.layout)}</td><td>{radius}</td>"
                    f"<td>{'pass' if o.feasible else 'FAIL'}</td><td>{html.escape(o.binding)}</td></tr>")
    table = ("<table><tr><th>#</th><th>layout</th><th>centre radius</th><th>status</th><th>binding</th></tr>"
             + "".join(rows) + "</table>")
    best = result.options[result.best] if result.best is not None else None
    verdict = f"best: {best.layout}" if best is not None else "no layout passes"
    plan = plan_svg(best.evaluation) if best is not None and best.evaluation is not None else ""
    return (f"<div><strong>helix design search: {html.escape(verdict)}</strong>"
            f"{_table(_project_rows(result.project))}{table}{plan}"
            "<p><em>A design aid: local codes and licensed professionals govern.</em></p></div>")
