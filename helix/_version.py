"""The one place the version is written (read by pyproject.toml and ``helix --version``)."""

__version__ = "0.1.0"
