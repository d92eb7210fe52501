"""Bad project files: one InputError line naming file, key path and what was expected;
the command line exits 2 with that line alone on stderr and writes nothing."""
from pathlib import Path

import re

import pytest
import yaml

from helix.cli import main
from helix.errors import InputError
from helix.project import load_project

DEMO = Path(__file__).resolve().parent.parent / "configs" / "demo-metric.yaml"


# Each change breaks exactly one thing in the metric demo.

def _set(data, path, value):
    *parents, last = path
    for key in parents:
        data = data[key]
    data[last] = value


def _rename(data, path, new):
    *parents, last = path
    for key in parents:
        data = data[key]
    data[new] = data.pop(last)


CASES = {
    # id: (change to the demo data, or raw bytes / None for no file), key path, expected fragments
    "missing file": (None, "", ["file not found"]),
    "YAML does not parse": (b"levels: [\n  {name: Ground, level: 0 m}\n", "",
                            ["YAML does not parse", "line 3"]),
    "empty file": (b"", "", ["empty", "expected a mapping of keys to values"]),
    "comments only": (b"# nothing here\n", "", ["empty", "expected a mapping of keys to values"]),
    "top-level list": (lambda d: [d], "", ["expected a mapping of keys to values", "list"]),
    "non-UTF-8 bytes": (DEMO.read_text(encoding="utf-8").replace("Millbrook", "M\u00fchlbrook")
                        .encode("latin-1"), "", ["not UTF-8"]),
    "missing design": (lambda d: d.pop("design"), "design", ["missing key 'design'"]),
    "misspelt key": (lambda d: _rename(d, ["design", "centre_radius"], "centre_raduis"),
                     "design.centre_raduis",
                     ["unknown key 'centre_raduis'", "did you mean 'centre_radius'?"]),
    "extra misspelt key": (lambda d: _set(d, ["design", "centre_raduis"], "9 m"),
                           "design.centre_raduis",
                           ["unknown key 'centre_raduis'", "did you mean 'centre_radius'?"]),
    "misspelt section": (lambda d: _rename(d, ["design"], "desing"), "desing",
                         ["unknown key 'desing'", "did you mean 'design'?"]),
    "levels not a list": (lambda d: _set(d, ["levels"], 5), "levels", ["got 5", "expected a list"]),
    "turns not a number": (lambda d: _set(d, ["design", "turns_per_storey"], "many"),
                           "design.turns_per_storey",
                           ["got 'many'", "expected a positive number of turns"]),
    "turns as boolean": (lambda d: _set(d, ["design", "turns_per_storey"], True),
                         "design.turns_per_storey", ["got True", "expected a positive number"]),
    "negative storey height": (lambda d: _set(d, ["levels", 3, "height"], "-3 m"),
                               "levels[3].height", ["got '-3 m'", "expected a positive length"]),
    "zero storey height": (lambda d: _set(d, ["levels", 3, "height"], "0 m"),
                           "levels[3].height", ["got '0 m'", "expected a positive length"]),
    "unknown unit": (lambda d: _set(d, ["levels", 3, "height"], "3 furlongs"),
                     "levels[3].height", ["got '3 furlongs'", "expected a length such as"]),
    "radius below lane width": (lambda d: _set(d, ["design", "centre_radius"], "3 m"),
                                "design.centre_radius",
                                ["got '3 m'", "expected a centre-line radius larger than the "
                                 "carriageway width (3.650 m)"]),
    "levels out of order": (lambda d: _set(d, ["levels", 2], {"name": "Level 2", "level": "1.0 m"}),
                            "levels[2].level", ["not above Level 1", "expected levels in ascending order"]),
    "unknown rule set": (lambda d: _set(d, ["rules"], "istructe-2012"), "rules",
                         ["unknown rule set 'istructe-2012'", "did you mean 'istructe-2011'?"]),
    "unknown rule set in use": (lambda d: _set(d, ["rules"], {"use": "de-garage-ordnance"}),
                                "rules.use", ["did you mean 'de-garage-ordinance'?"]),
    "unknown vehicle": (lambda d: _set(d, ["vehicle"], "large-svu"), "vehicle",
                        ["unknown vehicle 'large-svu'", "did you mean 'large-suv'?"]),
    "override with a bad unit": (
        lambda d: _set(d, ["rules"], {"use": "istructe-2011",
                                      "override": {"clear_height": {"min": "2 furlongs"}}}),
        "rules.override.clear_height.min", ["got '2 furlongs'", "expected a length such as"]),
    "override with a misspelt key": (
        lambda d: _set(d, ["rules"], {"use": "istructe-2011",
                                      "override": {"clear_hieght": {"min": "2.3 m"}}}),
        "rules.override.clear_hieght", ["unknown key 'clear_hieght'", "did you mean 'clear_height'?"]),
    "override with a bare gradient": (
        lambda d: _set(d, ["rules"], {"use": "istructe-2011", "override": {
            "gradient": [{"measured_at": "centre_line", "max": 0.1}]}}),
        "rules.override.gradient[0].max", ["got 0.1", "expected a gradient such as"]),
    "override not a mapping": (
        lambda d: _set(d, ["rules"], {"use": "istructe-2011", "override": [1]}),
        "rules.override", ["expected a mapping of keys to values"]),
}


@pytest.fixture(params=list(CASES), ids=list(CASES))
def broken(request, tmp_path):
    """(path of the broken file, expected key path, expected fragments)."""
    change, key_path, fragments = CASES[request.param]
    path = tmp_path / "project.yaml"
    if isinstance(change, bytes):
        path.write_bytes(change)
    elif change is not None:
        data = yaml.safe_load(DEMO.read_text(encoding="utf-8"))
        replaced = change(data)
        if isinstance(replaced, list):
            data = replaced
        path.write_text(yaml.safe_dump(data, sort_keys=False, allow_unicode=True), encoding="utf-8")
    return path, key_path, fragments


def test_the_unbroken_demo_loads(tmp_path):
    """The changes below are the only thing wrong with their files."""
    path = tmp_path / "project.yaml"
    path.write_text(yaml.safe_dump(yaml.safe_load(DEMO.read_text(encoding="utf-8")), sort_keys=False))
    assert load_project(path).storeys == 4


def test_load_project_names_file_key_path_and_expectation(broken):
    path, key_path, fragments = broken
    with pytest.raises(InputError) as info:
        load_project(path)
    exc = info.value
    line = exc.line()
    assert "\n" not in line
    assert exc.file == str(path)
    assert exc.path == key_path
    # file:line:column: where the YAML gives the key path's position, else file: (an
    # editor or CI annotation jumps to the line).
    m = re.match(rf"{re.escape(str(path))}(?::(\d+):(\d+))?: ", line)
    assert m, line
    assert line[m.end():].startswith(f"{key_path}: " if key_path else ""), line
    if m.group(1):
        row, col = int(m.group(1)), int(m.group(2))
        text = path.read_bytes().decode("utf-8", "replace").splitlines()
        assert 1 <= row <= len(text) + 1 and col >= 1, line
        last = re.sub(r"\[\d+\]$", "", key_path.split(".")[-1]) if key_path else ""
        if last and not key_path.endswith("]") and exc.message.startswith("unknown key"):
            assert text[row - 1][col - 1:].startswith(last), (line, text[row - 1])
    for fragment in fragments:
        assert fragment in line, line


def test_cli_exits_2_with_one_line_and_writes_nothing(broken, tmp_path, capsys):
    path, key_path, fragments = broken
    out_dir = tmp_path / "out"
    status = main(["check", str(path), "-o", str(out_dir)])
    captured = capsys.readouterr()
    assert status == 2
    assert captured.out == ""
    assert "Traceback" not in captured.err
    assert captured.err.count("\n") == 1 and captured.err.endswith("\n"), captured.err
    assert re.match(rf"helix: error: {re.escape(str(path))}(:\d+:\d+)?: ", captured.err), captured.err
    if key_path:
        assert f": {key_path}: " in captured.err
    for fragment in fragments:
        assert fragment in captured.err
    assert not out_dir.exists() or not any(out_dir.iterdir())
