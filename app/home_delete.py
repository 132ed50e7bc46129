"""Deleting a draft from the home page: a "Delete…" button on each draft's row, a confirm step
naming the draft and asking whose name, then the store's ``delete_draft``.

The name box starts with the name this browser last saved under on the board (the board's
``board-author`` localStorage entry); the store refuses a name that is not the draft's author,
and never deletes a published analysis. :mod:`app.pages.home` places :func:`confirm_box` and
the buttons (:func:`delete_button`), and this module registers the callbacks.
"""

from __future__ import annotations

from typing import Any

from dash import ALL, Input, Output, State, callback, clientside_callback, ctx, dcc, html
from dash.exceptions import PreventUpdate

import forecasting_core as fc
from app.board_delete import question
from app.saved_views import HIDE, SHOW, required
from app.ui import alert, guarded

#: ``home-refresh``: bumped after a deletion so the list is drawn again.
REFRESH_ID = "home-refresh"
TARGET_ID = "home-delete-target"
BUTTON_TYPE = "home-delete"


def delete_button(analysis: Any) -> html.Button:
    """The row's "Delete…" button (drafts only)."""
    return html.Button(
        "Delete\u2026",
        id={"type": BUTTON_TYPE, "index": analysis.id},
        n_clicks=0,
        className="hc-button hc-button--quiet home-delete",
        title="Delete this draft (asks first)",
    )


def confirm_box() -> html.Div:
    """The confirm step above the list (hidden until a row's Delete… is clicked)."""
    return html.Div(
        [
            html.P(id="home-delete-question", className="board-delete-question"),
            html.Div(
                [
                    html.Div(
                        [
                            html.Label(
                                "Your name", htmlFor="home-delete-name", className="hc-field__label"
                            ),
                            dcc.Input(
                                id="home-delete-name",
                                type="text",
                                maxLength=120,
                                className="hc-input",
                                debounce=False,
                            ),
                            html.Span(
                                "Only the draft's author can delete it.",
                                className="hc-field__hint",
                            ),
                        ],
                        className="hc-field",
                    ),
                    html.Button(
                        "Yes, delete the draft",
                        id="home-delete-yes",
                        n_clicks=0,
                        className="hc-button board-delete-yes",
                    ),
                    html.Button(
                        "No, keep it",
                        id="home-delete-no",
                        n_clicks=0,
                        className="hc-button hc-button--quiet",
                    ),
                ],
                className="hc-row home-delete-row",
            ),
        ],
        id="home-delete-confirm",
        className="home-delete-confirm",
        role="group",
        style=HIDE,
        **{"aria-label": "Confirm deleting the draft"},
    )


@callback(
    Output(TARGET_ID, "data"),
    Output("home-delete-confirm", "style", allow_duplicate=True),
    Output("home-delete-question", "children"),
    Output("home-delete-msg", "children", allow_duplicate=True),
    Input({"type": BUTTON_TYPE, "index": ALL}, "n_clicks"),
    prevent_initial_call=True,
)
@guarded("preparing to delete the draft", outputs=4, alert_at=3)
def ask(clicks: list[Any]) -> list[Any]:
    from app.store import get_store

    trigger = ctx.triggered_id
    # a list drawn again gives every button n_clicks 0: only a real click asks
    if not isinstance(trigger, dict) or not ctx.triggered or not ctx.triggered[0]["value"]:
        raise PreventUpdate
    analysis = get_store().get_analysis(str(trigger.get("index")))
    if analysis.is_published:
        raise fc.InputError(
            f"version {analysis.version} is published, and published analyses are never deleted."
        )
    from app.board_delete import refusal_while_revised, revised_by

    blocked = revised_by(get_store(), analysis)
    if blocked is not None:
        raise fc.InputError(refusal_while_revised(analysis.version, blocked))
    return [analysis.id, SHOW, question(analysis, on_board=False), None]


# The name this browser last saved under on the board, into the confirm step's box.
clientside_callback(
    """function (target) {
        try {
            var a = JSON.parse(window.localStorage.getItem("board-author") || "null");
            return (a && typeof a.name === "string") ? a.name : "";
        } catch (err) { return ""; }
    }""",
    Output("home-delete-name", "value"),
    Input(TARGET_ID, "data"),
    prevent_initial_call=True,
)


@callback(
    Output("home-delete-confirm", "style", allow_duplicate=True),
    Input("home-delete-no", "n_clicks"),
    prevent_initial_call=True,
)
def keep(n: int) -> Any:
    if not n:
        raise PreventUpdate
    return HIDE


@callback(
    Output("home-delete-confirm", "style", allow_duplicate=True),
    Output("home-delete-msg", "children", allow_duplicate=True),
    Output(REFRESH_ID, "data"),
    Input("home-delete-yes", "n_clicks"),
    State("home-delete-name", "value"),
    State(TARGET_ID, "data"),
    State(REFRESH_ID, "data"),
    prevent_initial_call=True,
)
@guarded("deleting the draft", outputs=3, alert_at=1)
def delete(n: int, name: Any, target: Any, refresh: Any) -> list[Any]:
    from app.store import get_store

    if not n or not target:
        raise PreventUpdate
    author = required(name, "Your name")
    gone = get_store().delete_draft(str(target), author=author)
    message = f"Deleted the draft \u201c{gone.title or gone.series}\u201d (version {gone.version})."
    return [HIDE, alert(message, "ok", title="Deleted"), int(refresh or 0) + 1]
