"""The Forecast Board's "Delete this draft": a confirm step, then the store's ``delete_draft``.

The button shows only on a saved draft (see :func:`app.board_saved.show_saved`). Clicking it
asks "Delete version N ... for good?" with Yes and No; Yes deletes the draft when the name in
"Your name" is its author's (compared ignoring case; the store checks it, and refuses a
published analysis and a draft a later version revises). The forecast stays on the board,
unsaved, so nothing the analyst is looking at disappears with the draft.
"""

from __future__ import annotations

import time
from collections.abc import Mapping
from typing import Any

from dash import Input, Output, State, callback
from dash.exceptions import PreventUpdate

import forecasting_core as fc
from app import saved
from app.saved_views import HIDE, OPEN_ID, SHOW, required
from app.state import SELECTION_ID, update_selection
from app.ui import alert, guarded


def _draft(data: Mapping[str, Any] | None, opened: Mapping[str, Any] | None, store: Any) -> Any:
    """The saved draft the board is looking at, or InputError saying why there is none."""
    analysis_id = saved.overlay(data, opened).get("analysis")
    if not saved.looks_like_id(analysis_id):
        raise fc.InputError("no saved draft is open on the board, so there is nothing to delete.")
    analysis = store.get_analysis(analysis_id)
    if analysis.is_published:
        raise fc.InputError(
            f"version {analysis.version} is published, and published analyses are never "
            "deleted. Revise it to make a new version."
        )
    blocked = revised_by(store, analysis)
    if blocked is not None:
        raise fc.InputError(refusal_while_revised(analysis.version, blocked))
    return analysis


def revised_by(store: Any, analysis: Any) -> int | None:
    """The version number of the draft's direct revision, if a later version revises it."""
    children = [
        a.version for a in store.history(analysis.id) if str(a.parent_id or "") == analysis.id
    ]
    return min(children) if children else None


def refusal_while_revised(version: int, child: int) -> str:
    """Why a draft that a later version revises cannot be deleted (said before any confirm)."""
    return (
        f"version {version} cannot be deleted while version {child} revises it. Delete version "
        f"{child} first, or keep both."
    )


def question(analysis: Any, *, on_board: bool = True) -> str:
    """The confirm step's question, naming the draft (``on_board``: the board's wording)."""
    title = analysis.title or analysis.series
    text = (
        f"Delete version {analysis.version} of \u201c{title}\u201d (a draft saved by "
        f"{analysis.author} on {saved.fmt_time(analysis.created_at)}) for good? It cannot be "
        "brought back."
    )
    return text + (" The forecast stays on the board, unsaved." if on_board else "")


@callback(
    Output("board-delete-confirm", "style", allow_duplicate=True),
    Output("board-delete-question", "children"),
    Output("board-saved-msg", "children", allow_duplicate=True),
    Input("board-delete", "n_clicks"),
    State(SELECTION_ID, "data"),
    State(OPEN_ID, "data"),
    prevent_initial_call=True,
)
@guarded("preparing to delete the draft", outputs=3, alert_at=2)
def ask(n: int, data: Mapping[str, Any] | None, opened: Mapping[str, Any] | None) -> list[Any]:
    from app.store import get_store

    if not n:
        raise PreventUpdate
    return [SHOW, question(_draft(data, opened, get_store())), None]


@callback(
    Output("board-delete-confirm", "style", allow_duplicate=True),
    Input("board-delete-no", "n_clicks"),
    prevent_initial_call=True,
)
def keep(n: int) -> Any:
    if not n:
        raise PreventUpdate
    return HIDE


@callback(
    Output(OPEN_ID, "data", allow_duplicate=True),
    Output("board-saved-msg", "children", allow_duplicate=True),
    Output("board-delete-confirm", "style", allow_duplicate=True),
    Input("board-delete-yes", "n_clicks"),
    State("board-save-name", "value"),
    State(SELECTION_ID, "data"),
    State(OPEN_ID, "data"),
    prevent_initial_call=True,
)
@guarded("deleting the draft", outputs=3, alert_at=1)
def delete(
    n: int, name: Any, data: Mapping[str, Any] | None, opened: Mapping[str, Any] | None
) -> list[Any]:
    from app.store import get_store

    if not n:
        raise PreventUpdate
    author = required(name, "Your name")
    store = get_store()
    draft = _draft(data, opened, store)
    gone = store.delete_draft(draft.id, author=author)
    # the same selection, no longer naming a saved analysis: the board keeps its forecast
    sel = update_selection(saved.overlay(data, opened), analysis=None)
    message = (
        f"Deleted the draft \u201c{gone.title or gone.series}\u201d (version {gone.version}). "
        "The forecast on the board is not saved now; save it again to keep it."
    )
    return [
        {"id": None, "selection": sel, "tick": time.time(), "deleted": gone.id},
        alert(message, "ok", title="Deleted"),
        HIDE,
    ]
