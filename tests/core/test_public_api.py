"""The core's public surface: sorted __all__, no web stack."""

from __future__ import annotations

import ast
from pathlib import Path

import forecasting_core as fc

CORE = Path(fc.__file__).parent
WEB_STACK = {"dash", "flask", "plotly", "flask_caching", "werkzeug"}


def test_all_is_sorted_and_complete():
    assert fc.__all__ == sorted(fc.__all__)
    for name in fc.__all__:
        assert hasattr(fc, name), name


def test_core_never_imports_the_web_stack():
    for path in CORE.rglob("*.py"):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.Import):
                roots = {alias.name.split(".")[0] for alias in node.names}
            elif isinstance(node, ast.ImportFrom) and node.module:
                roots = {node.module.split(".")[0]}
            else:
                continue
            assert not roots & WEB_STACK, f"{path.name} imports {roots & WEB_STACK}"
