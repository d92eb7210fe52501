"""helix: plan and check the helical ramps of multi-storey car parks.

The pipeline, one module per stage::

    project = load_project(demo_file("demo-metric"))     # project.py: file -> Project
    result = evaluate(project)                           # evaluate.py: helix, checks, headroom
    options = design(project)                            # search.py: layouts, radii, turns

Importing ``helix`` is cheap and changes nothing global: the names below are loaded on
first use (numpy and matplotlib only come in with the objects that need them).

>>> import helix
>>> project = helix.load_project(helix.demo_file("demo-metric"))
>>> project.name
'Millbrook Street car park (invented demo)'
"""
from __future__ import annotations

import importlib
import sys
import types
from typing import TYPE_CHECKING, Any

from ._version import __version__

#: The distribution name on the package index (``pip install helix-ramp-planner``).
DIST_NAME = "helix-ramp-planner"

_LAZY = {
    "InputError": "errors", "DesignError": "errors", "OutputError": "errors",
    "Evaluation": "evaluate", "evaluate": "evaluate",
    "build_helix": "layout",
    "Project": "project", "load_project": "project",
    "DesignResult": "search", "design": "search",
    "RuleSet": "rules", "Vehicle": "vehicle",
    "demo_file": "library_files",
    "sweep": "sweep",
}

__all__ = ["load_project", "evaluate", "design", "Project", "Evaluation", "DesignResult", "Vehicle",
           "RuleSet", "build_helix", "demo_file", "sweep", "InputError", "DesignError", "OutputError",
           "DIST_NAME", "__version__"]

if TYPE_CHECKING:  # what mypy and editors see; at run time, __getattr__ below
    from .errors import DesignError, InputError, OutputError
    from .evaluate import Evaluation, evaluate
    from .layout import build_helix
    from .library_files import demo_file
    from .project import Project, load_project
    from .rules import RuleSet
    from .search import DesignResult, design
    from .sweep import sweep
    from .vehicle import Vehicle


def __getattr__(name: str) -> Any:
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module 'helix' has no attribute {name!r}")
    value = getattr(importlib.import_module(f".{module}", __name__), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))


class _Package(types.ModuleType):
    """``helix.evaluate`` and ``helix.sweep`` are the functions, although modules of the
    same names exist: importing those modules must not rebind the package's names."""

    def __setattr__(self, name: str, value: Any) -> None:
        if name in ("evaluate", "sweep") and isinstance(value, types.ModuleType):
            return
        super().__setattr__(name, value)


sys.modules[__name__].__class__ = _Package
