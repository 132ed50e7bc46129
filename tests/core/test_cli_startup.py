"""Start-up: ``--help`` and argument errors answer without loading the numerical stack.

The public names load on first use through a module ``__getattr__`` (PEP 562, "Module
__getattr__ and __dir__"), so ``import forecasting_core`` is cheap and every name in
``__all__`` still resolves.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
HEAVY = ("pandas", "scipy", "statsmodels", "numba")

_PROBE = """
import json, sys
from forecasting_core.__main__ import main
code = main({argv!r})
print(json.dumps({{"code": code, "loaded": sorted({{m.split('.')[0] for m in sys.modules}} & {heavy!r})}}))
"""


def _probe(argv: list[str]) -> dict:
    proc = subprocess.run(
        [sys.executable, "-c", _PROBE.format(argv=argv, heavy=set(HEAVY))],
        capture_output=True,
        text=True,
        cwd=ROOT,
        timeout=120,
    )
    return json.loads(proc.stdout.strip().splitlines()[-1])


@pytest.mark.parametrize(
    ("argv", "code"),
    [
        (["--help"], 0),
        (["forecast", "--help"], 0),
        (["check"], 2),  # missing FILE
        (["forecast", "x.csv", "--bogus"], 2),
        (["batch", "x.csv", "--transform", "sqrt", "--horizon", "3"], 2),
    ],
)
def test_help_and_usage_errors_load_no_numerical_library(argv, code):
    out = _probe(argv)
    assert out["code"] == code
    assert out["loaded"] == []


def test_importing_the_package_loads_no_numerical_library_until_a_name_is_used():
    probe = (
        "import sys, forecasting_core as fc\n"
        f"heavy = {set(HEAVY)!r}\n"
        "before = sorted({m.split('.')[0] for m in sys.modules} & heavy)\n"
        "fc.read_table\n"
        "after = sorted({m.split('.')[0] for m in sys.modules} & heavy)\n"
        "print(before, after)\n"
    )
    proc = subprocess.run(
        [sys.executable, "-c", probe], capture_output=True, text=True, cwd=ROOT, timeout=120
    )
    assert proc.stdout.split("]")[0] == "["  # nothing before a name is used
    assert "pandas" in proc.stdout.split("]")[1]


def test_every_public_name_imports_from_the_package_and_dir_lists_it():
    import forecasting_core as fc

    namespace: dict = {}
    exec(f"from forecasting_core import {', '.join(fc.__all__)}", namespace)
    assert all(name in namespace for name in fc.__all__)
    assert set(fc.__all__) <= set(dir(fc))
    with pytest.raises(AttributeError, match="no attribute 'not_a_name'"):
        fc.not_a_name  # noqa: B018


def test_warm_up_loads_every_core_module_so_forked_workers_inherit_them():
    probe = (
        "import sys, forecasting_core as fc\n"
        "fc.warm_up()\n"
        "print(sorted({m.split('.')[0] for m in sys.modules} & "
        f"{set(HEAVY)!r}))\n"
    )
    proc = subprocess.run(
        [sys.executable, "-c", probe], capture_output=True, text=True, cwd=ROOT, timeout=300
    )
    assert proc.stdout.strip() == str(sorted(HEAVY))
