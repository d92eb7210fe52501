"""Where the time of a full report goes: one ``helix design -o`` run as a timeline of its
stages (prints figures; asserts nothing).

    python benchmarks/report_stages.py [PROJECT] [--old CHECKOUT] [-- EXTRA OPTIONS FOR THE RUN, e.g. --dpi 300]

With ``--old`` (a folder holding an earlier ``helix`` package and its ``configs``, e.g.
from ``git archive main helix configs``) that package is timed instead.

One run in this process, the stages timed by wrapping helix's own functions (nothing in
helix is changed): imports, the search, each figure drawn, the PDF, each PNG and SVG
saved, each export, waiting for the workers and writing the folder.  Each line gives the
process (``main``, or the worker's pid), the wall seconds from the start at which the
stage began and ended, and its length in wall and CPU seconds of that process; the CPU
column shows where a stage waited for a core (the machine is shared: wall times are
noisy, CPU times less so).  The figure files are made in forked workers, so their lines
come from there; ``[worker]`` lines are printed when the worker ends.
"""
from __future__ import annotations

import os
import sys
import tempfile
import time

T0 = time.perf_counter()
MAIN = os.getpid()
_LINES: list[tuple[float, str]] = []


def _stamp(label: str, wall0: float, cpu0: float) -> None:
    who = "main" if os.getpid() == MAIN else f"worker {os.getpid()}"
    now = time.perf_counter()
    line = (f"{who:13s} {label:36s} {wall0 - T0:6.2f} {now - T0:6.2f} {now - wall0:7.2f} "
            f"{time.process_time() - cpu0:7.2f}")
    if os.getpid() == MAIN:
        _LINES.append((wall0, line))
    else:  # a forked worker: print at once (its lines never reach the parent's list)
        print(line, file=sys.__stdout__, flush=True)


def _timed(owner, name: str, label: str | None = None) -> None:
    real = getattr(owner, name, None)
    if real is None:  # a stage an earlier helix does not have (see --old)
        return

    def timed(*args, **kwargs):
        wall0, cpu0 = time.perf_counter(), time.process_time()
        try:
            return real(*args, **kwargs)
        finally:
            _stamp(label or name, wall0, cpu0)
    setattr(owner, name, timed)


def main() -> None:
    argv = sys.argv[1:]
    extra: list[str] = []
    if "--" in argv:
        extra, argv = argv[argv.index("--") + 1:], argv[:argv.index("--")]
    if "--old" in argv:
        k = argv.index("--old")
        old = os.path.abspath(argv[k + 1])
        del argv[k:k + 2]
        # The earlier package first on the path, ahead of an editable install's finder.
        sys.meta_path[:] = [f for f in sys.meta_path if "__editable__" not in repr(f)]
        sys.path.insert(0, old)
        os.chdir(old)
    project = argv[0] if argv else "configs/demo-search.yaml"
    wall0, cpu0 = time.perf_counter(), time.process_time()
    import matplotlib.figure  # noqa: F401  (what any report needs first)
    import numpy  # noqa: F401
    import yaml  # noqa: F401
    _stamp("import numpy, matplotlib, yaml", wall0, cpu0)
    wall0, cpu0 = time.perf_counter(), time.process_time()
    from helix import cli, exports, figures, outputs, report, search
    _stamp("import helix", wall0, cpu0)
    _timed(search, "design", "search")
    _timed(cli, "_load", "load the project file")
    def named(make, stem):
        def make_timed(*args):
            wall0, cpu0 = time.perf_counter(), time.process_time()
            try:
                fig = make(*args)
                fig._bench_stem = stem
                return fig
            finally:
                _stamp(f"draw {stem}", wall0, cpu0)
        return make_timed
    figures.pareto_figure = named(figures.pareto_figure, "pareto")
    figures.options_figure = named(figures.options_figure, "options")
    figures.FIGURES = tuple((stem, named(make, stem), caption) for stem, make, caption in figures.FIGURES)
    real_save = figures._save

    def save(fig, fmt, dpi=figures.PNG_DPI):
        wall0, cpu0 = time.perf_counter(), time.process_time()
        try:
            return real_save(fig, fmt, dpi)
        finally:
            _stamp(f"save {getattr(fig, '_bench_stem', '?')}.{fmt}" + (f" {dpi} dpi" if fmt == "png" else ""),
                   wall0, cpu0)
    figures._save = save
    _timed(report, "_pdf", "PDF report (17 pages for the demo)")
    _timed(report, "_markdown", "Markdown report")
    _timed(report, "report_makers", "the report's text (before its pages)")
    from helix import results
    _timed(results, "design_dict", "the search's JSON")
    _timed(figures.RenderJob, "result", "collect the workers")
    _timed(outputs, "write_outputs", "write the folder")
    real_load = exports.Format.load

    def load(self):
        writer = real_load(self)

        def timed(ev):
            wall0, cpu0 = time.perf_counter(), time.process_time()
            try:
                return writer(ev)
            finally:
                _stamp(f"export {self.name} (with its import)", wall0, cpu0)
        return timed
    exports.Format.load = load
    with tempfile.TemporaryDirectory() as tmp:
        print(f"helix design {project} -o DIR {' '.join(extra)}; {os.cpu_count()} cores")
        print(f"{'process':13s} {'stage':36s} {'from s':>6s} {'to s':>6s} {'wall s':>7s} {'cpu s':>7s}", flush=True)
        wall0, cpu0 = time.perf_counter(), time.process_time()
        with open(os.devnull, "w") as null:
            stdout, sys.stdout = sys.stdout, null
            try:
                status = cli.main(["design", project, "-o", f"{tmp}/out"] + extra)
            finally:
                sys.stdout = stdout
        _stamp("the whole run (after the imports)", wall0, cpu0)
    for _, line in sorted(_LINES):
        print(line)
    children = os.times()
    print(f"status {status}; total wall {time.perf_counter() - T0:.2f} s; CPU {time.process_time():.2f} s "
          f"here and {children.children_user + children.children_system:.2f} s in the workers")


if __name__ == "__main__":
    main()
