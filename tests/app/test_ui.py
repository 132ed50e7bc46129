"""How the app words a failed callback: input the analyst can correct vs a fault in the app."""

from __future__ import annotations

import pytest

import forecasting_core as fc
from app.ui import error_alert


def _texts(component) -> str:
    """Every string inside a Dash component tree, joined."""
    children = getattr(component, "children", component)
    if isinstance(children, str):
        return children
    if isinstance(children, list | tuple):
        return "".join(_texts(c) for c in children)
    return "" if children is None else _texts(children)


@pytest.mark.parametrize(
    "message",
    [
        "nothing changed since version 1 was saved. Change a setting first.",
        "Role is needed. Type it in the Role box and try again.",
    ],
)
def test_a_correctable_input_gets_a_calm_heading_and_its_message(message):
    text = _texts(error_alert(fc.InputError(message), "saving the analysis"))
    assert f"Check this: {message}" in text
    assert "Cannot use this input" not in text


def test_a_fault_in_the_app_still_says_something_went_wrong(caplog):
    text = _texts(error_alert(RuntimeError("boom"), "saving the analysis"))
    assert "Something went wrong: Something went wrong while saving the analysis" in text
    assert "the details are in the server log" in text
    assert "boom" not in text  # the traceback goes to the log, not the page
