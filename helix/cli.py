"""The ``helix`` command: a thin shell over the Python API.

Exit status: 0 every check passes, 1 a check fails, 2 bad input (one line on stderr).
"""
from __future__ import annotations

import argparse
import os
import sys
import tempfile
from pathlib import Path

from . import __version__
from .errors import InputError

EXAMPLES_DESIGN = """example:
  helix design configs/demo-search.yaml
  helix design configs/demo-search.yaml -o out/search --json > options.json"""

EXAMPLES_CHECK = """example:
  helix check configs/demo-metric.yaml -o out/metric
  helix check configs/demo-imperial.yaml --json > result.json"""


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="helix",
        description="Plan and check the helical ramps of multi-storey car parks.",
        epilog="Exit status: 0 all checks pass, 1 a check fails, 2 bad input.",
        formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--version", action="version", version=f"helix {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    check = sub.add_parser("check", help="evaluate the fixed design of a project file",
                           description="Evaluate the fully specified helix of PROJECT and print "
                                       "its checks.", epilog=EXAMPLES_CHECK,
                           formatter_class=argparse.RawDescriptionHelpFormatter)
    check.add_argument("project", help="project file (YAML)")
    check.add_argument("-o", "--output", metavar="DIR",
                       help="also write the figures (PNG and SVG), setting_out.csv and result.json to DIR")
    check.add_argument("--json", action="store_true", help="print the result as JSON instead of a table")
    check.add_argument("--rules", metavar="A,B,...", default=None,
                       help="also check the design against these rule sets (one column each)")
    check.add_argument("--stations", metavar="LENGTH", default=None,
                       help="spacing of the setting-out stations written with -o (default 5 m, "
                            "or 10 ft for a project in feet)")
    dsg = sub.add_parser("design", help="search the layouts, radii and turns of a project file",
                         description="Search every layout, radius, turns per storey and lane width "
                                     "that PROJECT allows; rank the best design of each layout and "
                                     "explain the ones that cannot work.", epilog=EXAMPLES_DESIGN,
                         formatter_class=argparse.RawDescriptionHelpFormatter)
    dsg.add_argument("project", help="project file (YAML) with search ranges in 'design'")
    dsg.add_argument("-o", "--output", metavar="DIR",
                     help="also write the chosen design's checks and figures, design.json and the "
                          "Pareto figure to DIR")
    dsg.add_argument("--json", action="store_true", help="print the options as JSON instead of a table")
    dsg.add_argument("--stations", metavar="LENGTH", default=None, help="setting-out station spacing")
    dsg.add_argument("--rules", metavar="A,B,...", default=None,
                     help="also check the chosen design against these rule sets")
    return parser


_UMASK = os.umask(0)
os.umask(_UMASK)


MANIFEST = ".helix-outputs"


def write_outputs(directory: Path, files: dict[str, bytes]) -> list[Path]:
    """Write ``files`` into ``directory`` safely.

    Every file goes to a temporary name in the same folder and is renamed into place
    only when all of them are written, so a reader never sees half a file and a failed
    run leaves the previous outputs as they were.  A file of the same name that helix did not
    write (it is not in the folder's manifest) is never overwritten: the run stops with
    an input error before writing anything.
    """
    if directory.exists() and not directory.is_dir():
        raise InputError("command line", "-o", f"{directory} is a file; expected a folder")
    manifest = directory / MANIFEST
    ours: set[str] = set()
    if manifest.is_file():
        ours = set(manifest.read_text(encoding="utf-8").split())
    clash = sorted(n for n in files if (directory / n).exists() and n not in ours)
    if clash:
        raise InputError("command line", "-o", f"{directory / clash[0]} exists and was not written by helix; "
                         "expected a new folder or one helix wrote before")
    try:
        directory.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError("command line", "-o", f"cannot create {directory} ({exc.strerror})") from None
    files = dict(files)
    files[MANIFEST] = ("\n".join(sorted(ours | set(files))) + "\n").encode()
    # Two phases: every file to a temporary name first, then the renames; a failure in
    # the first phase removes the temporaries and leaves the previous outputs intact.
    temps: list[tuple[str, str]] = []
    try:
        for name, data in files.items():
            fd, tmp = tempfile.mkstemp(prefix=f".{name}.", suffix=".tmp", dir=directory)
            temps.append((tmp, name))
            with os.fdopen(fd, "wb") as fh:
                fh.write(data)
            os.chmod(tmp, 0o666 & ~_UMASK)
    except BaseException:
        for tmp, _ in temps:
            if os.path.exists(tmp):
                os.unlink(tmp)
        raise
    written = []
    for tmp, name in temps:
        os.replace(tmp, directory / name)
        written.append(directory / name)
    return written


def _station_spacing(text: str | None, units: str) -> float:
    from .units import UnitError, parse_length
    if text is None:
        return 3.048 if units == "imperial" else 5.0
    try:
        value = parse_length(text)
    except UnitError as exc:
        raise InputError("command line", "--stations", str(exc)) from None
    if not value > 0:
        raise InputError("command line", "--stations", f"got {text!r}; expected a positive length such as '5 m'")
    return value


def _check(args) -> int:
    from .evaluate import evaluate
    from .project import load_project
    from .results import check_table, to_json

    project = load_project(args.project)
    if project.search is not None and not project.search.fixed:
        raise InputError(project.file, "design", "has search ranges or choices; expected one fixed "
                         "design for 'helix check' (run 'helix design' to search)")
    try:
        result = evaluate(project)
    except ValueError as exc:  # geometry that cannot be built, e.g. landings too long
        raise InputError(project.file, "design", f"{exc}; expected a design whose landings and "
                         "transitions fit within each storey") from None
    comparisons = _comparisons(project, result.helix, args.rules)
    text = to_json(_result_data(result, comparisons))
    if args.output:
        # Everything is made in memory first: a failure half-way writes nothing.
        files = _check_outputs(result, project, args.stations, comparisons)
        write_outputs(Path(args.output), files)
    if args.json:
        sys.stdout.write(text)
    else:
        sys.stdout.write(check_table(result))
        for e in comparisons:
            fails = [c.id for c in e.checks if not c.ok]
            sys.stdout.write(f"rule set {e.project.rules.name}: "
                             f"{'all checks pass' if not fails else 'FAIL ' + ', '.join(fails)}\n")
        if args.output:
            sys.stdout.write(f"wrote {len(files)} files to {args.output}\n")
    return 0 if result.ok and all(e.ok for e in comparisons) else 1


def _comparisons(project, helix_, names: str | None):
    """The same helix checked against each further rule set named in ``--rules``."""
    if not names:
        return []
    from dataclasses import replace

    from .evaluate import evaluate
    from .rules import load_rule_set
    out = []
    for name in [n.strip() for n in names.split(",") if n.strip()]:
        if name == project.rules.name:
            continue
        rules = load_rule_set(name, Path(project.file).resolve().parent, file="command line", path="--rules")
        out.append(evaluate(replace(project, rules=rules), helix_))
    return out


def _result_data(result, comparisons) -> dict:
    from .results import check_dict, to_dict
    data = to_dict(result)
    if comparisons:
        data["rules_comparison"] = [
            {"rules": e.project.rules.name, "title": e.project.rules.title, "ok": e.ok,
             "checks": [check_dict(c) for c in e.checks]} for e in [result] + comparisons]
    return data


def _check_outputs(result, project, stations, comparisons=(), option=None, search=None) -> dict[str, bytes]:
    from .cad import dxf_available, plan_dxf
    from .figures import start_render
    from .report import report_files
    from .results import to_json
    from .setting_out import setting_out_csv
    import matplotlib.pyplot as plt
    spacing = _station_spacing(stations, project.units)
    figs: dict = {}
    job = None
    try:
        # Each figure is drawn once; its PNG is rasterised in a second process while
        # this one writes the SVGs, the tables and the PDF.
        files, job = start_render(result, figs)
        files["setting_out.csv"] = setting_out_csv(result, spacing).encode()
        files["result.json"] = to_json(_result_data(result, list(comparisons))).encode()
        files.update(report_files(result, option=option, result=search, comparisons=list(comparisons),
                                  spacing=spacing, figures=figs))
        files.update(job.result())
        job = None
    finally:
        if job is not None:
            job.result()  # reap the child even when this run fails
        for fig in figs.values():
            plt.close(fig)
    if dxf_available():
        files["plan.dxf"] = plan_dxf(result)
    return files


def _design(args) -> int:
    from .project import load_project
    from .results import design_dict, design_table, to_json
    from .search import design

    project = load_project(args.project)
    try:
        result = design(project)
    except ValueError as exc:
        raise InputError(project.file, "design", f"{exc}; expected a search space whose designs can be "
                         "built") from None
    text = to_json(design_dict(result))
    if args.output:
        from .figures import pareto_figure, figure_bytes
        files: dict[str, bytes] = {}
        if result.best is not None:
            best = result.options[result.best]
            comparisons = _comparisons(best.evaluation.project, best.evaluation.helix, args.rules)
            files.update(_check_outputs(best.evaluation, best.evaluation.project, args.stations, comparisons,
                                        option=best, search=result))
        files.update(figure_bytes("pareto", pareto_figure(result)))
        files["design.json"] = text.encode()
        write_outputs(Path(args.output), files)
    if args.json:
        sys.stdout.write(text)
    else:
        sys.stdout.write(design_table(result))
        if args.output:
            sys.stdout.write(f"wrote {len(files)} files to {args.output}\n")
    return 0 if result.best is not None else 1


def main(argv: list[str] | None = None) -> int:
    parser = _parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help()
        return 0
    try:
        if args.command == "check":
            return _check(args)
        if args.command == "design":
            return _design(args)
    except InputError as exc:
        print(f"helix: error: {exc.line()}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        return 130
    return 2  # pragma: no cover


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
