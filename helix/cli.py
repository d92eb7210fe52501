"""The ``helix`` command: a thin shell over the Python API.

Exit status: 0 every check passes, 1 a check fails, 2 bad input, 3 an internal error
(a bug in helix: one line, the traceback only with ``--debug``), 4 the outputs could
not be written (permission, full disk, a folder locked by another run).  Statuses 2,
3 and 4 print exactly one line on standard error; nothing else reaches it (warnings
of numpy and matplotlib are shown only with ``--debug``).

Importing this module is cheap (no numpy, no matplotlib: ``helix --version`` and
``--help`` stay fast) and changes no global state; :func:`main` picks matplotlib's
Agg backend before it draws, and reads the process umask only when it writes.
"""
from __future__ import annotations

import argparse
import contextlib
import logging
import sys
import traceback
import warnings
from pathlib import Path

from typing import Any, Iterator

from ._version import __version__
from .errors import DesignError, InputError, OutputError, clean_text

#: Where a user reports an internal error.
REPORT_TO = "please report it with the project file to the helix maintainers (see README.md, 'Reporting a problem')"

EXIT_PASS, EXIT_FAIL, EXIT_INPUT, EXIT_INTERNAL, EXIT_OUTPUT = 0, 1, 2, 3, 4

EXAMPLES_DESIGN = """example:
  helix design configs/demo-search.yaml
  helix design configs/demo-search.yaml -o out/search --json > options.json"""

EXAMPLES_CHECK = """example:
  helix check configs/demo-metric.yaml -o out/metric
  helix check configs/demo-imperial.yaml --json > result.json
  cat project.yaml | helix check -      (relative paths in it start from the working folder)"""

EXAMPLES_LIBRARY = """example:
  helix library                 list the bundled rule sets and vehicles
  helix library istructe-2011   show one in full"""

EXAMPLES = """examples:
  helix design configs/demo-search.yaml                  search layouts, radius, turns; rank and explain
  helix design configs/demo-search.yaml -o out/search    also write the chosen design's report and figures
  helix check configs/demo-metric.yaml                   print the checks of a fixed design
  helix check configs/demo-metric.yaml -o out/metric     also write figures, setting-out CSV, DXF, JSON
  helix check - < project.yaml                           read the project file from standard input
  helix library                                          the bundled rule sets and vehicles

PROJECT '-' reads the project file from standard input; relative paths in it (rule-set
and vehicle files) then start from the working folder.  A project file's keys are in the
README and in the JSON Schema shipped with helix (helix/project.schema.json)."""

PROJECT_HELP = "project file (YAML); '-' reads standard input (relative paths in it start from the working folder)"


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="helix",
        description="Plan and check the helical ramps of multi-storey car parks.\n\n" + EXAMPLES,
        epilog="Exit status: 0 all checks pass, 1 a check fails, 2 bad input, 3 internal error, "
               "4 outputs could not be written.  A design aid: local codes and licensed "
               "professionals govern.",
        formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--version", action="version", version=f"helix {__version__}")
    parser.add_argument("--debug", action="store_true", default=argparse.SUPPRESS,
                        help="on an internal error print the traceback; show warnings")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    check = sub.add_parser("check", help="evaluate the fixed design of a project file",
                           description="Evaluate the fully specified helix of PROJECT and print "
                                       "its checks.", epilog=EXAMPLES_CHECK,
                           formatter_class=argparse.RawDescriptionHelpFormatter)
    check.add_argument("project", help=PROJECT_HELP)
    check.add_argument("-o", "--output", metavar="DIR",
                       help="also write the report (PDF, Markdown), figures (PNG), setting_out.csv, plan.dxf and "
                            "result.json to DIR (see --formats)")
    check.add_argument("--json", action="store_true", help="print the result as JSON instead of a table")
    check.add_argument("--rules", metavar="A,B,...", default=None,
                       help="also check the design against these rule sets (one column each)")
    check.add_argument("--stations", metavar="LENGTH", default=None,
                       help="spacing of the setting-out stations written with -o (default 5 m, "
                            "or 10 ft for a project in feet; at least 0.1 m)")
    _output_options(check)
    check.add_argument("--debug", action="store_true", default=argparse.SUPPRESS,
                       help="on an internal error print the traceback; show warnings")
    dsg = sub.add_parser("design", help="search the layouts, radii and turns of a project file",
                         description="Search every layout, radius, turns per storey and lane width "
                                     "that PROJECT allows; rank the best design of each layout and "
                                     "explain the ones that cannot work.", epilog=EXAMPLES_DESIGN,
                         formatter_class=argparse.RawDescriptionHelpFormatter)
    dsg.add_argument("project", help=PROJECT_HELP + "; with search ranges in 'design'")
    dsg.add_argument("-o", "--output", metavar="DIR",
                     help="also write the chosen design's checks and figures, design.json and the "
                          "Pareto figure to DIR")
    dsg.add_argument("--json", action="store_true", help="print the options as JSON instead of a table")
    dsg.add_argument("--stations", metavar="LENGTH", default=None, help="setting-out station spacing")
    _output_options(dsg)
    dsg.add_argument("--rules", metavar="A,B,...", default=None,
                     help="also check the chosen design against these rule sets")
    dsg.add_argument("--debug", action="store_true", default=argparse.SUPPRESS,
                     help="on an internal error print the traceback; show warnings")
    lib = sub.add_parser("library", help="list the bundled rule sets and vehicles, or show one",
                         description="List the rule sets and vehicles that ship with helix, with their "
                                     "titles and sources; with NAME, show that one's file in full.",
                         epilog=EXAMPLES_LIBRARY, formatter_class=argparse.RawDescriptionHelpFormatter)
    lib.add_argument("name", nargs="?", metavar="NAME", help="a rule set or vehicle name")
    lib.add_argument("--debug", action="store_true", default=argparse.SUPPRESS,
                     help="on an internal error print the traceback; show warnings")
    return parser


def _output_options(sub: argparse.ArgumentParser) -> None:
    """``--formats`` and ``--dpi``, read from the one table in :mod:`helix.formats`."""
    from .formats import DEFAULT, DEFAULT_DPI, FORMATS, MAX_DPI, MIN_DPI
    sub.add_argument("--formats", metavar="A,B,...", default=None,
                     help="what -o writes, from: " + "; ".join(
                         f"{f.name}: {f.writes}" + (f" (needs the '{f.extra}' extra)" if f.extra else "")
                         for f in FORMATS.values())
                     + f".  Default {','.join(DEFAULT)}: what a design report is read, checked and set out "
                       "from (dxf only where its extra is installed); the others on request")
    sub.add_argument("--dpi", metavar="N", default=None,
                     help=f"PNG resolution, {MIN_DPI} to {MAX_DPI} (default {DEFAULT_DPI}: sharp on screen and "
                          "in half the time of 300; the PDF is vectors for print; 300 for a print raster)")


def __getattr__(name: str) -> Any:
    # Part of the API since the first release, loaded on first use (outputs.py is not
    # needed for --version or --help).
    if name in ("MANIFEST", "refuse_if_locked", "write_outputs"):
        from . import outputs
        return getattr(outputs, name)
    raise AttributeError(f"module 'helix.cli' has no attribute {name!r}")

#: Closest station spacing of the setting-out table: closer adds rows, not information.
MIN_STATION_SPACING = 0.1


def _station_spacing(text: str | None, units: str) -> float:
    from .units import UnitError, parse_length
    if text is None:
        return 3.048 if units == "imperial" else 5.0
    try:
        value = parse_length(text)
    except UnitError as exc:
        raise InputError("command line", "--stations", str(exc)) from None
    if not value >= MIN_STATION_SPACING:
        raise InputError("command line", "--stations", f"got {text!r}; expected a length of at least "
                         f"{MIN_STATION_SPACING:g} m (4 in) such as '5 m'")
    if value > 1000.0:
        raise InputError("command line", "--stations", f"got {text!r}; expected a length of at most 1000 m")
    return value


STDIN_NAME = "<stdin>"


def _load(name: str) -> Any:
    """The project file ``name``; ``-`` is standard input, its relative paths resolved
    against the working folder."""
    from .project import load_project
    if name != "-":
        return load_project(name)
    from .library_files import read_bounded_stream
    raw = read_bounded_stream(sys.stdin.buffer, STDIN_NAME)
    _STDIN[STDIN_NAME] = raw
    return load_project(STDIN_NAME, source=raw, base_dir=Path.cwd())


def _use_agg() -> None:
    """Draw off screen: the command line has no window.  Set here, when the command line
    draws, never when a module is imported (a notebook keeps its own backend)."""
    import matplotlib
    if matplotlib.get_backend().lower() != "agg":
        matplotlib.use("Agg")


def _check(args: argparse.Namespace) -> int:
    from .evaluate import evaluate
    from .outputs import write_outputs
    from .results import check_table, to_json

    formats, dpi = _output_choice(args)
    project = _load(args.project)
    if project.search is not None and not project.search.fixed:
        raise InputError(project.file, "design", "has search ranges or choices; expected one fixed "
                         "design for 'helix check' (run 'helix design' to search)")
    with _design_errors(project, "a design whose landings and transitions fit within each storey"):
        result = evaluate(project)
    comparisons = _comparisons(project, result.helix, args.rules)
    text = to_json(_result_data(result, comparisons))
    if args.output:
        # Everything is made in memory first: a failure half-way writes nothing.
        files = _check_outputs(result, project, args.stations, comparisons, formats=formats, dpi=dpi)
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
            _missing_exports(args)
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


def _output_choice(args: argparse.Namespace) -> tuple[tuple[str, ...], int]:
    """The formats and PNG resolution of ``-o``, checked before any work is done."""
    from .formats import parse_dpi, parse_formats
    return parse_formats(getattr(args, "formats", None)), parse_dpi(getattr(args, "dpi", None))


def _check_outputs(result, project, stations, comparisons=(), option=None, search=None,
                   formats: tuple[str, ...] | None = None, dpi: int | None = None,
                   figures: dict | None = None) -> dict[str, bytes]:
    """Every file of ``-o`` in ``formats`` for design ``result``; ``figures`` holds
    figures drawn already (the search's pareto and options), saved with the rest."""
    _use_agg()
    from .formats import DEFAULT_DPI, FORMATS, parse_formats
    from .results import to_json
    formats = parse_formats(None) if formats is None else formats
    dpi = DEFAULT_DPI if dpi is None else dpi
    spacing = _station_spacing(stations, project.units)
    figs: dict = dict(figures or {})
    files: dict[str, bytes] = {}
    job = None
    try:
        makers: dict = {}
        if {"pdf", "md"} & set(formats):
            from .report import report_makers
            makers = report_makers(result, option=option, result=search, comparisons=list(comparisons),
                                   spacing=spacing, figures=figs, formats=formats)
        if {"png", "svg", "pdf"} & set(formats):
            # Each figure is drawn once and saved as often as asked: the PDF, laid out from
            # the same Figure objects, in a process of its own, the PNG and SVG in others,
            # while this one makes the rest.
            from .figures import start_render
            pdf = {n: makers.pop(n) for n in ("report.pdf",) if n in makers}
            files, job = start_render(result, figs, formats, dpi, also=pdf)
        files.update({name: make() for name, make in makers.items()})
        if "csv" in formats:
            from .setting_out import setting_out_csv
            files["setting_out.csv"] = setting_out_csv(result, spacing).encode()
        if "json" in formats:
            files["result.json"] = to_json(_result_data(result, list(comparisons))).encode()
        for name in formats:
            writer = FORMATS[name].writer
            if writer is not None:
                files.update(writer(result))
        if job is not None:
            files.update(job.result())
            job = None
    finally:
        if job is not None:
            job.result()  # reap the children even when this run fails
        if figs:
            from .figures import close_sheet
            for fig in figs.values():
                close_sheet(fig)
    return files


def _missing_exports(args: argparse.Namespace) -> None:
    """With the default formats, one line naming the extras that would add the exports
    not written (asked for by ``--formats``, a missing extra is an input error)."""
    if getattr(args, "formats", None) is not None:
        return
    from .exports import FORMATS as EXPORTS, missing_note
    from .formats import DEFAULT
    note = missing_note(tuple(n for n in DEFAULT if n in EXPORTS))
    if note:
        sys.stdout.write(note + "\n")


def _design(args: argparse.Namespace) -> int:
    from .outputs import write_outputs
    from .results import design_dict, design_table, to_json
    from .search import design

    formats, dpi = _output_choice(args)
    project = _load(args.project)
    with _design_errors(project, "a search space whose designs can be built"):
        result = design(project)
    text = to_json(design_dict(result))
    if args.output:
        _use_agg()
        from .figures import figure_bytes, options_figure, pareto_figure
        files: dict[str, bytes] = {}
        # The search's two figures are drawn once: saved as PNG and SVG and placed in the
        # PDF from the same Figure objects.
        search_figs = ({"pareto": pareto_figure(result), "options": options_figure(result)}
                       if {"png", "svg", "pdf"} & set(formats) else {})
        if result.best is not None:
            best = result.options[result.best]
            assert best.evaluation is not None  # the best option is a checked design
            comparisons = _comparisons(best.evaluation.project, best.evaluation.helix, args.rules)
            files.update(_check_outputs(best.evaluation, best.evaluation.project, args.stations, comparisons,
                                        option=best, search=result, formats=formats, dpi=dpi,
                                        figures=search_figs))
        else:
            for name, fig in search_figs.items():
                files.update(figure_bytes(name, fig, formats, dpi))
        if "json" in formats:
            files["design.json"] = text.encode()
        write_outputs(Path(args.output), files)
    if args.json:
        sys.stdout.write(text)
    else:
        sys.stdout.write(design_table(result))
        if args.output:
            _missing_exports(args)
            sys.stdout.write(f"wrote {len(files)} files to {args.output}\n")
    return 0 if result.best is not None else 1


@contextlib.contextmanager
def _design_errors(project: Any, expected: str) -> Iterator[None]:
    """A design that loads but cannot be built: one input error naming the key."""
    try:
        yield
    except DesignError as exc:
        error = InputError(project.file, exc.path, f"{exc}; expected {exc.expected or expected}")
        raise error.located(_positions(project.file)) from None


#: The bytes read from standard input, to locate errors found after loading.
_STDIN: dict[str, bytes] = {}


def _positions(file: str) -> dict[str, tuple[int, int]]:
    """Line and column of every key path of the project file (read again: it loaded
    once, so it parses; a file changed since then gives no positions)."""
    from .library_files import read_yaml
    positions: dict[str, tuple[int, int]] = {}
    try:
        read_yaml(Path(file), file, raw=_STDIN.get(file), positions=positions)
    except InputError:
        return {}
    return positions


def _library(name: str | None) -> int:
    """``helix library``: the bundled rule sets and vehicles; ``helix library NAME``: one in full."""
    from .library_files import available_names, find_named, library_entries, read_yaml
    if name is None:
        for kind, heading in (("rules", "rule sets"), ("vehicles", "vehicles")):
            entries = library_entries(kind)
            sys.stdout.write(f"{heading} ({len(entries)}):\n")
            width = max(len(n) for n, _, _ in entries)
            for entry, title, path in entries:
                sys.stdout.write(f"  {entry:<{width}}  {title}\n")
                sources = _sources(read_yaml(path))
                if sources:
                    first = sources[0] if len(sources[0]) <= 100 else sources[0][:99] + "…"
                    sys.stdout.write(f"  {'':<{width}}  {len(sources)} source(s), first: {first}\n")
        sys.stdout.write("'helix library NAME' shows one in full, with the source of every value.\n")
        return EXIT_PASS
    for kind in ("rules", "vehicles"):
        if name in available_names(kind):
            path = find_named(kind, name, None, "command line", "library")
            sys.stdout.write(path.read_text(encoding="utf-8"))
            return EXIT_PASS
    import difflib
    names = available_names("rules") + available_names("vehicles")
    close = difflib.get_close_matches(name, names, n=1, cutoff=0.5)
    hint = f"did you mean '{close[0]}'?" if close else f"expected one of {', '.join(names)}"
    raise InputError("command line", "library", f"unknown rule set or vehicle {name[:80]!r}; {hint}")


def _sources(data: Any) -> list[str]:
    """The distinct ``source`` texts of a library file, in order of appearance."""
    out: list[str] = []
    stack = [data]
    while stack:
        item = stack.pop(0)
        if isinstance(item, dict):
            src = item.get("source")
            if isinstance(src, str) and src not in out:
                out.append(clean_text(src))
            stack.extend(v for k, v in item.items() if k != "source")
        elif isinstance(item, list):
            stack.extend(item)
    return out


def _error(text: str) -> None:
    print(clean_text(f"helix: {text}"), file=sys.stderr)


def main(argv: list[str] | None = None) -> int:
    parser = _parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help()
        return 0
    debug = getattr(args, "debug", False)
    with warnings.catch_warnings():
        if not debug:
            # A successful run prints its table and nothing else: no numpy or
            # matplotlib warnings on standard error.
            warnings.simplefilter("ignore")
        mpl_log = logging.getLogger("matplotlib")
        level = mpl_log.level
        if not debug:
            mpl_log.setLevel(logging.CRITICAL)
        try:
            if args.command == "library":
                return _library(args.name)
            if getattr(args, "output", None):
                from .outputs import refuse_if_locked
                refuse_if_locked(Path(args.output))
            if args.command == "check":
                return _check(args)
            return _design(args)
        except InputError as exc:
            _error(f"error: {exc.line()}")
            return EXIT_INPUT
        except OutputError as exc:
            _error(f"cannot write outputs: {exc.line()}")
            return EXIT_OUTPUT
        except KeyboardInterrupt:
            return 130
        except BrokenPipeError:  # e.g. 'helix check x.yaml | head': the reader left
            return EXIT_PASS
        except (MemoryError, RecursionError, Exception) as exc:
            if debug:
                traceback.print_exc()
            where = traceback.extract_tb(exc.__traceback__)[-1] if exc.__traceback__ else None
            at = f" in {Path(where.filename).name}:{where.lineno}" if where else ""
            _error(f"internal error: {type(exc).__name__}{at}: {str(exc)[:200]}; this is a bug in helix, not a "
                   f"verdict on the design; {REPORT_TO}; run with --debug for the traceback")
            return EXIT_INTERNAL
        finally:
            mpl_log.setLevel(level)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
