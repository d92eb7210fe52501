"""Shared fixtures."""
from __future__ import annotations

import builtins
import os

import pytest


@pytest.fixture
def refuse_writes(monkeypatch):
    """``refuse_writes(code, nth)``: the ``nth`` file helix opens for writing in an
    output folder (its temporaries and journal, ``.helix-*``) fails with OSError
    ``code``, as a full disk or a read-only file system would.  Undone with the test."""
    real = builtins.open

    def install(code: int, nth: int) -> None:
        calls = {"n": 0}

        def refusing(file, mode="r", *args, **kwargs):
            if "w" in mode and ".helix-" in str(file):
                calls["n"] += 1
                if calls["n"] == nth:
                    raise OSError(code, os.strerror(code))
            return real(file, mode, *args, **kwargs)

        monkeypatch.setattr(builtins, "open", refusing)

    return install
