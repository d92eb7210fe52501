"""helix: plan and check the helical ramps of multi-storey car parks.

The pipeline, one module per stage::

    project = load_project("configs/demo-metric.yaml")   # project.py: file -> Project
    helix_ = build_helix(project)                        # layout.py: Project -> Helix
    result = evaluate(project, helix_)                   # evaluate.py: checks, headroom
    files = figures.render_all(result)                   # figures.py: plan, section
"""
from .errors import InputError
from .evaluate import Evaluation, evaluate
from .layout import build_helix
from .project import Project, load_project
from .search import DesignResult, design

__version__ = "0.1.0"
__all__ = ["InputError", "Evaluation", "evaluate", "build_helix", "Project", "load_project",
           "design", "DesignResult", "__version__"]
