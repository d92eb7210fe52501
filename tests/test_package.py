"""helix as a Python package: typed, documented, quiet at import, with a schema that
agrees with the loader, and a command line that follows the usual conventions."""
from __future__ import annotations

import copy
import json
import os
import re
import subprocess
import sys
from pathlib import Path

import jsonschema
import pytest
import yaml
from hypothesis import HealthCheck, given, note, settings
from hypothesis import strategies as st

import helix
from helix.cli import main
from helix.errors import InputError
from helix.keys import sections
from helix.schema import SCHEMA_FILE, schema_text

ROOT = Path(__file__).resolve().parent.parent
CONFIGS = ROOT / "configs"
DEMOS = sorted(CONFIGS.glob("demo-*.yaml"))
VALIDATOR = jsonschema.Draft202012Validator(json.loads(SCHEMA_FILE.read_text(encoding="utf-8")))


def _python(code: str, **env: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=300,
                          env={**os.environ, **env}, cwd=ROOT)


# -- typing --------------------------------------------------------------------------

def test_mypy_passes_on_the_package():
    # mypy (the test extra) with the configuration in pyproject.toml, as CI runs it.
    proc = subprocess.run([sys.executable, "-m", "mypy", "helix"], capture_output=True, text=True,
                          cwd=ROOT, timeout=900)
    assert proc.returncode == 0, proc.stdout[-4000:] + proc.stderr[-2000:]
    assert "Success: no issues found" in proc.stdout


def test_the_package_is_marked_typed_and_exports_the_main_job():
    assert (Path(helix.__file__).parent / "py.typed").is_file()
    for name in ("load_project", "evaluate", "design", "Project", "Evaluation", "DesignResult", "Vehicle",
                 "RuleSet"):
        assert name in helix.__all__
        obj = getattr(helix, name)
        assert obj.__doc__ and ">>>" in obj.__doc__, f"{name} has no docstring with an example"


# -- no global state changed at import ------------------------------------------------

def test_importing_the_library_changes_neither_the_backend_nor_the_umask():
    # A notebook's backend (here 'svg', chosen before helix is imported) and the process
    # umask must be as they were after importing every module and drawing a plan.
    code = """
import os, matplotlib
matplotlib.use("svg")
os.umask(0o027)
import helix.figures, helix.report, helix.cli, helix.outputs
import helix
ev = helix.evaluate(helix.load_project(helix.demo_file("demo-metric")))
html = ev._repr_html_()
import matplotlib.pyplot as plt
mask = os.umask(0o022)
print(matplotlib.get_backend(), oct(mask), len(plt.get_fignums()), "<svg" in html)
"""
    proc = _python(code)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.split() == ["svg", "0o27", "0", "True"]


def test_version_and_help_load_neither_numpy_nor_matplotlib():
    # `helix --version` and `--help` answer without the numerical stack (fast start).
    for flag in ("--version", "--help"):
        code = f"""
import sys
from helix.cli import main
try:
    main([{flag!r}])
except SystemExit:
    pass
print(sorted(m for m in ("numpy", "matplotlib", "scipy", "yaml") if m in sys.modules))
"""
        proc = _python(code)
        assert proc.returncode == 0, proc.stderr
        assert proc.stdout.strip().splitlines()[-1] == "[]", proc.stdout


def test_check_and_design_never_import_scipy():
    # scipy is a test-only reference library: the main job runs without it.
    code = """
import sys, helix
helix.evaluate(helix.load_project(helix.demo_file("demo-metric")))
print("scipy" in sys.modules)
"""
    proc = _python(code)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.strip() == "False"


# -- notebook views --------------------------------------------------------------------

@pytest.fixture(scope="module")
def metric_eval():
    return helix.evaluate(helix.load_project(helix.demo_file("demo-metric")))


def test_reprs_are_short_and_html_has_table_verdict_and_plan(metric_eval):
    project = metric_eval.project
    for obj in (project, metric_eval):
        text = repr(obj)
        assert len(text) < 300 and "\n" not in text, text
        assert project.name in text
    assert "all checks pass" in repr(metric_eval)
    html = metric_eval._repr_html_()
    assert "<table>" in html and "all checks pass" in html
    assert html.count("<svg") == 1 and "<?xml" not in html
    assert "clear_height" in html
    page = project._repr_html_()
    assert "<table>" in page and "all checks pass" in page and page.count("<svg") == 1
    search = helix.load_project(helix.demo_file("demo-search"))
    assert "search space" in search._repr_html_() and "<svg" not in search._repr_html_()


def test_design_result_repr_and_html():
    result = helix.design(helix.load_project(helix.demo_file("demo-search")))
    text = repr(result)
    assert len(text) < 300 and "best single-two-way" in text, text
    html = result._repr_html_()
    assert "<svg" in html and "double" in html and "FAIL" in html and "pass" in html


# -- command line ----------------------------------------------------------------------

def run(capsys, *args, stdin: str | None = None, monkeypatch=None):
    status = main(list(args))
    captured = capsys.readouterr()
    return status, captured.out, captured.err


def test_library_lists_five_rule_sets_and_four_vehicles(capsys):
    status, out, err = run(capsys, "library")
    assert status == 0 and err == ""
    assert "rule sets (5):" in out and "vehicles (4):" in out
    for name in ("conservative-default", "de-garage-ordinance", "istructe-2011", "us-ibc-2015",
                 "us-ibc-2015-ada-van", "aashto-p", "large-suv", "high-van", "low-sports-car"):
        assert re.search(rf"^  {re.escape(name)} ", out, re.M), name
    # Titles and sources from the files themselves.
    assert "IStructE Design recommendations" in out and "source(s), first: IStructE 4th ed." in out


def test_library_name_shows_the_file_in_full(capsys):
    status, out, _ = run(capsys, "library", "istructe-2011")
    assert status == 0
    assert out == (CONFIGS / "rules" / "istructe-2011.yaml").read_text(encoding="utf-8")
    status, _, err = run(capsys, "library", "istructe-2012")
    assert status == 2 and err.count("\n") == 1 and "did you mean 'istructe-2011'?" in err


def test_dash_reads_the_project_from_standard_input():
    text = (CONFIGS / "demo-metric.yaml").read_text(encoding="utf-8")
    proc = subprocess.run([sys.executable, "-m", "helix", "check", "-", "--json"], input=text, capture_output=True,
                          text=True, cwd=ROOT, timeout=300)
    assert proc.returncode == 0, proc.stderr
    assert json.loads(proc.stdout)["ok"] is True
    # A relative rule-set path in it starts from the working folder.
    broken = text.replace("rules: istructe-2011", "rules: ./no-such-rules.yaml")
    assert broken != text
    proc = subprocess.run([sys.executable, "-m", "helix", "check", "-"], input=broken, capture_output=True,
                          text=True, cwd=ROOT, timeout=300)
    assert proc.returncode == 2
    assert re.fullmatch(r"helix: error: <stdin>:\d+:\d+: rules: rule set file './no-such-rules.yaml' not found.*\n",
                        proc.stderr), proc.stderr


def test_errors_give_file_line_and_column_of_the_key(tmp_path, capsys):
    text = (CONFIGS / "demo-metric.yaml").read_text(encoding="utf-8")
    lines = text.splitlines()
    row = next(i for i, line in enumerate(lines) if line.startswith("  centre_radius:"))
    lines[row] = lines[row].replace("centre_radius", "centre_raduis")
    path = tmp_path / "typo.yaml"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    status, out, err = run(capsys, "check", str(path))
    assert status == 2 and out == ""
    assert err == (f"helix: error: {path}:{row + 1}:3: design.centre_raduis: unknown key 'centre_raduis'; "
                   "did you mean 'centre_radius'?\n")


def test_top_level_help_has_examples(capsys):
    with pytest.raises(SystemExit) as info:
        main(["--help"])
    out = capsys.readouterr().out
    assert info.value.code == 0
    assert "examples:" in out and "helix design configs/demo-search.yaml" in out and "helix library" in out
    assert "standard input" in out


# -- the schema ------------------------------------------------------------------------

def test_schema_file_is_what_the_declarations_generate():
    assert SCHEMA_FILE.read_bytes() == schema_text().encode("utf-8"), \
        "run 'python -m helix.schema --write' after changing helix/keys.py"


@pytest.mark.parametrize("demo", DEMOS, ids=lambda p: p.stem)
def test_every_demo_validates_and_names_the_schema(demo):
    text = demo.read_text(encoding="utf-8")
    assert text.startswith("# yaml-language-server: $schema=../helix/project.schema.json\n")
    assert (demo.parent / "../helix/project.schema.json").resolve() == SCHEMA_FILE
    errors = [e.message for e in VALIDATOR.iter_errors(yaml.safe_load(text))]
    assert errors == []


def test_every_declared_key_is_read_by_the_loader():
    # The other half (every key read is declared) is checked on every load by Node.done.
    source = "".join((ROOT / "helix" / f).read_text(encoding="utf-8") for f in ("project.py", "approach.py"))
    for name, section in sections().items():
        for key in section.keys:
            assert f'child("{key.name}"' in source, f"{name}.{key.name} is declared but never read"


# Mutations of a demo: the loader and the schema must agree.
BAD_VALUES = [None, 0, -1, 2.5, True, "", "abc", "3 m", "5%", "90 deg", [], ["3 m"], {}, {"min": "3 m"}]


def _paths(data, prefix=()):
    """Every (path, value) of a YAML tree, a path being a tuple of keys and indices."""
    yield prefix, data
    if isinstance(data, dict):
        for k, v in data.items():
            yield from _paths(v, prefix + (k,))
    elif isinstance(data, list):
        for i, v in enumerate(data[:3]):
            yield from _paths(v, prefix + (i,))


def _mutate(data, path, kind, value):
    data = copy.deepcopy(data)
    *parent_path, last = path
    parent = data
    for p in parent_path:
        parent = parent[p]
    if kind == "drop" and isinstance(parent, dict):
        del parent[last]
    elif kind == "unknown":
        target = parent[last]
        if isinstance(target, dict):
            target["zz_not_a_key"] = "1 m"
        else:
            return None
    elif kind == "replace":
        parent[last] = value
    else:
        return None
    return data


def _loader_accepts(data, tmp: Path) -> bool:
    path = tmp / "mutant.yaml"
    path.write_text(yaml.safe_dump(data, sort_keys=False, allow_unicode=True), encoding="utf-8")
    try:
        helix.load_project(path)
    except InputError:
        return False
    return True


DEMO_DATA = [yaml.safe_load(d.read_text(encoding="utf-8")) for d in DEMOS]


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(demo=st.sampled_from(range(len(DEMO_DATA))), pick=st.integers(0, 10_000),
       kind=st.sampled_from(["drop", "unknown", "replace"]), value=st.sampled_from(BAD_VALUES))
def test_schema_and_loader_agree_on_mutated_demos(tmp_path, demo, pick, kind, value):
    data = DEMO_DATA[demo]
    paths = [p for p, _ in _paths(data) if p]
    path = paths[pick % len(paths)]
    mutant = _mutate(data, path, kind, value)
    if mutant is None:
        return
    schema_ok = VALIDATOR.is_valid(mutant)
    loader_ok = _loader_accepts(mutant, tmp_path)
    note(f"{kind} {path} {value!r}: schema {schema_ok}, loader {loader_ok}")
    if kind == "unknown" and path[:1] != ("vehicle",) and "override" not in path:
        # Keys are the declarations' business: both refuse a key no section declares
        # (inline vehicles and rule overrides are checked by loaders of their own).
        assert not schema_ok and not loader_ok
    if not schema_ok:
        # The loader checks more than the schema can say (positive lengths, levels in
        # order), never less: what the schema refuses, the loader refuses.
        assert not loader_ok, f"the loader accepts what the schema refuses: {kind} {path} {value!r}"


def test_schema_and_loader_agree_on_each_key_dropped_and_each_known_value():
    # Exhaustive over the metric demo: drop each key in turn; both accept (optional) or
    # both refuse (required), except where the loader's rule is beyond a schema.
    data = yaml.safe_load((CONFIGS / "demo-metric.yaml").read_text(encoding="utf-8"))
    agree = disagree = 0
    import tempfile
    with tempfile.TemporaryDirectory() as tmp:
        for path, _ in _paths(data):
            if not path or isinstance(path[-1], int):
                continue
            mutant = _mutate(data, path, "drop", None)
            schema_ok, loader_ok = VALIDATOR.is_valid(mutant), _loader_accepts(mutant, Path(tmp))
            assert loader_ok <= schema_ok, path  # loader-accept implies schema-accept
            agree += schema_ok == loader_ok
            disagree += schema_ok != loader_ok
    assert agree > 10 and disagree <= 2, (agree, disagree)


def test_without_scipy_the_bicycle_model_says_what_is_missing():
    # scipy blocked as if not installed: the main job runs, the optional model explains.
    code = """
import sys
sys.modules["scipy"] = None
import helix
from helix.turning import transient_swept_band
ev = helix.evaluate(helix.load_project(helix.demo_file("demo-metric")))
try:
    transient_swept_band(ev.project.vehicle, 8.0)
except ImportError as exc:
    print(ev.ok, exc)
"""
    proc = _python(code)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.startswith("True the transient bicycle model needs scipy"), proc.stdout
