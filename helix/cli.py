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
    return parser


_UMASK = os.umask(0)
os.umask(_UMASK)


def write_outputs(directory: Path, files: dict[str, bytes]) -> list[Path]:
    """Write ``files`` into ``directory`` atomically, one file at a time.

    Each file goes to a temporary name in the same folder and is renamed into place,
    so a reader never sees half a file; files helix did not produce are untouched.
    """
    directory.mkdir(parents=True, exist_ok=True)
    written = []
    for name, data in files.items():
        target = directory / name
        fd, tmp = tempfile.mkstemp(prefix=f".{name}.", suffix=".tmp", dir=directory)
        try:
            with os.fdopen(fd, "wb") as fh:
                fh.write(data)
            os.chmod(tmp, 0o666 & ~_UMASK)
            os.replace(tmp, target)
        except BaseException:
            if os.path.exists(tmp):
                os.unlink(tmp)
            raise
        written.append(target)
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
    from .results import check_table, to_dict, to_json

    project = load_project(args.project)
    if project.search is not None and not project.search.fixed:
        raise InputError(project.file, "design", "has search ranges or choices; expected one fixed "
                         "design for 'helix check' (run 'helix design' to search)")
    try:
        result = evaluate(project)
    except ValueError as exc:  # geometry that cannot be built, e.g. landings too long
        raise InputError(project.file, "design", f"{exc}; expected a design whose landings and "
                         "transitions fit within each storey") from None
    data = to_dict(result)
    text = to_json(data)
    if args.output:
        files = _check_outputs(result, project, args.stations)  # all in memory: a failure writes nothing
        write_outputs(Path(args.output), files)
    if args.json:
        sys.stdout.write(text)
    else:
        sys.stdout.write(check_table(result))
        if args.output:
            sys.stdout.write(f"wrote {len(files)} files to {args.output}\n")
    return 0 if result.ok else 1


def _check_outputs(result, project, stations) -> dict[str, bytes]:
    from .figures import render_all
    from .results import to_dict, to_json
    from .setting_out import setting_out_csv
    files = render_all(result)
    files["setting_out.csv"] = setting_out_csv(result, _station_spacing(stations, project.units)).encode()
    files["result.json"] = to_json(to_dict(result)).encode()
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
            files.update(_check_outputs(result.options[result.best].evaluation, project, args.stations))
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
