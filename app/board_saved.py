"""The Forecast Board's saved-analysis panel: save, publish, sign off, revise.

The board page (:mod:`app.pages.board`) places :func:`app.saved_views.saved_section` below the forecast and
imports this module, which registers the panel's callbacks. What the board is looking at is
``hc-selection["analysis"]`` (the id of a saved analysis) plus, on a visit opened by link
(``/board?analysis=<id>``), the ``board-open`` store holding that analysis' selection
(see :func:`app.saved.overlay`). Published analyses are never changed: saving changed settings
on one makes a new version linked to it.
"""

from __future__ import annotations

import time
from collections.abc import Mapping
from datetime import UTC, datetime
from typing import Any

from dash import Input, Output, State, callback, clientside_callback, no_update
from dash.exceptions import PreventUpdate

import forecasting_core as fc
from app import saved
from app.analysis import board_state
from app.saved_views import (
    AUTHOR_ID,
    HIDE,
    OPEN_ID,
    SHOW,
    optional,
    required,
    status_panel,
)
from app.state import SELECTION_ID
from app.store_checks import DUPLICATE_SIGNOFF
from app.ui import alert, guarded

# ---------------------------------------------------------------------------------------------
# Pure pieces
# ---------------------------------------------------------------------------------------------


def opened_store(analysis: Any, data: Mapping[str, Any] | None = None) -> dict[str, Any]:
    """The ``board-open`` value for an analysis (JSON-safe)."""
    sel = saved.selection_from_analysis(analysis, data)
    sel.pop("is_demo", None)
    return {"id": analysis.id, "selection": sel, "tick": time.time()}


def looking_at(state: Mapping[str, Any], store: Any) -> tuple[Any | None, bool, dict[str, Any]]:
    """The analysis the board is looking at, whether the settings changed since it was saved,
    and the current settings (see :func:`app.saved.settings_from_selection`).

    Returns ``(None, True, settings)`` when no saved analysis is being looked at (or it is
    no longer on this server).
    """
    forecast: fc.Forecast = state["forecast"]
    current = saved.settings_from_selection(
        state["selection"], forecast.reference, state["candidate"].label
    )
    analysis_id = state["selection"].get("analysis")
    if not saved.looks_like_id(analysis_id):
        return None, True, current
    try:
        analysis = store.get_analysis(analysis_id)
    except fc.InputError:
        return None, True, current
    changed = not (
        analysis.dataset_id == state["selection"]["dataset_id"]
        and analysis.series == state["selection"]["series"]
        and saved.same_settings(analysis.settings, current)
    )
    return analysis, changed, current


# ---------------------------------------------------------------------------------------------
# Callbacks
# ---------------------------------------------------------------------------------------------


@callback(
    Output(SELECTION_ID, "data", allow_duplicate=True),
    Input(OPEN_ID, "data"),
    State(SELECTION_ID, "data"),
    prevent_initial_call="initial_duplicate",
)
def open_analysis(opened: Mapping[str, Any] | None, data: Mapping[str, Any] | None) -> Any:
    """An analysis opened by link or just saved becomes the session's selection."""
    if not isinstance(opened, Mapping) or not opened.get("selection"):
        raise PreventUpdate
    sel = saved.overlay(data, opened)
    if isinstance(data, Mapping) and all(data.get(k) == v for k, v in sel.items()):
        raise PreventUpdate
    return sel


# The author name saved last in this browser (localStorage) into the Save box, without a round
# trip. The sign-off Name box starts empty: an analyst is not invited to sign off their own work.
clientside_callback(
    """function (_mount, author) {
        return (author && typeof author.name === "string") ? author.name : "";
    }""",
    Output("board-save-name", "value"),
    Input("board-mount", "data"),
    State(AUTHOR_ID, "data"),
)

# The address bar names the analysis being looked at, so it can be copied as a link: the one
# whose link the saved panel shows (so it follows what is on screen, whichever callback
# answered first), else the one this visit opened or saved.
clientside_callback(
    """function (panel, opened) {
        var shown = null;
        var find = function (node) {
            if (shown || !node || typeof node !== "object") { return; }
            if (Array.isArray(node)) { node.forEach(find); return; }
            var props = node.props || {};
            if (props.id === "board-saved-link" && typeof props.href === "string") {
                var m = props.href.match(/[?&]analysis=([0-9a-f]{32})(?:&|$)/);
                if (m) { shown = m[1]; return; }
            }
            find(props.children);
        };
        find(panel);
        var id = shown || ((opened && typeof opened.id === "string") ? opened.id : null);
        var params = new URLSearchParams(window.location.search);
        var query = null;
        if (window.location.pathname !== "/board") {
            query = null;
        } else if (id && /^[0-9a-f]{32}$/.test(id)) {
            if (params.get("analysis") !== id) {
                params.set("analysis", id);
                query = params.toString();
            }
        } else if (opened && opened.deleted && params.has("analysis")) {
            // the draft this link named was just deleted: the link would no longer open
            params.delete("analysis");
            query = params.toString();
        }
        if (query !== null) {
            window.history.replaceState(
                window.history.state, "", "/board" + (query ? "?" + query : "")
            );
        }
        return window.dash_clientside.no_update;
    }""",
    Output("board-open-note", "title"),
    Input("board-saved-status", "children"),
    Input(OPEN_ID, "data"),
)


@callback(
    Output("board-saved-status", "children"),
    Output("board-publish-box", "style"),
    Output("board-signoff-box", "style"),
    Output("board-save", "children"),
    Output("board-save-season-hint", "children"),
    Output("board-save-title", "placeholder"),
    Output("board-delete-box", "style"),
    Output("board-delete-confirm", "style"),
    Input("board-table", "children"),
    Input(OPEN_ID, "data"),
    State("board-reference", "value"),
    State(SELECTION_ID, "data"),
    prevent_initial_call=True,
)
@guarded("showing the saved analysis", outputs=8, alert_at=0)
def show_saved(
    _table: Any, opened: Mapping[str, Any] | None, reference: Any, data: Mapping[str, Any] | None
) -> list[Any]:
    from flask import request

    from app.store import get_store

    store = get_store()
    state = board_state(saved.overlay(data, opened), reference)
    analysis, changed, _current = looking_at(state, store)
    fdict = state["forecast"].to_dict()
    season = saved.season_label(fdict)
    hint = (
        f"Blank: the first forecast period ({season})."
        if season
        else "Blank: the first forecast period."
    )
    if analysis is None:
        return [
            status_panel(None, True, [], None),
            HIDE,
            HIDE,
            "Save analysis",
            hint,
            "e.g. Hake 2026 advice",
            HIDE,
            HIDE,
        ]
    # exact first; a difference in the last floating-point digits only is said so
    exact = not changed and not saved.forecast_differences(analysis.forecast, fdict, rel=0.0)
    differences = [] if changed or exact else saved.forecast_differences(analysis.forecast, fdict)
    history = getattr(store, "history", None)
    newer = (
        saved.newest_version(analysis, history(analysis.id))
        if history is not None
        else saved.newest_in_chain(analysis, store.list_analyses(series=analysis.series))
    )
    panel = status_panel(
        analysis, changed, differences, newer, request.host_url.rstrip("/"), exact=exact
    )
    publish = SHOW if analysis.status == "draft" and not changed else HIDE
    signoff = SHOW if analysis.status == "published" and not changed else HIDE
    label = f"Save as version {analysis.version + 1}" if changed else "Save analysis"
    # a draft a later version revises is kept by the store: no Delete that would only refuse
    delete = SHOW if analysis.status == "draft" and newer is None else HIDE
    placeholder = analysis.title or "e.g. Hake 2026 advice"
    return [panel, publish, signoff, label, hint, placeholder, delete, HIDE]


@callback(
    Output(OPEN_ID, "data", allow_duplicate=True),
    Output(AUTHOR_ID, "data", allow_duplicate=True),
    Output("board-saved-msg", "children", allow_duplicate=True),
    Input("board-save", "n_clicks"),
    State("board-save-title", "value"),
    State("board-save-name", "value"),
    State("board-save-season", "value"),
    State("board-reference", "value"),
    State(SELECTION_ID, "data"),
    State(OPEN_ID, "data"),
    prevent_initial_call=True,
)
@guarded("saving the analysis", outputs=3, alert_at=2)
def save_analysis(
    n: int,
    title: Any,
    name: Any,
    season: Any,
    reference: Any,
    data: Mapping[str, Any] | None,
    opened: Mapping[str, Any] | None,
) -> list[Any]:
    from app.store import get_store

    if not n:
        raise PreventUpdate
    author = required(name, "Your name")
    title = optional(title, "Title", 120)
    season = optional(season, "Season", 40)
    store = get_store()
    state = board_state(saved.overlay(data, opened), reference)
    analysis, changed, settings = looking_at(state, store)
    fdict = state["forecast"].to_dict()
    season = season or saved.season_label(fdict)
    model = state["candidate"].label
    if analysis is not None:
        if (
            not changed
            and (title or analysis.title) == analysis.title
            and season == analysis.season
        ):
            raise fc.InputError(
                f"nothing changed since version {analysis.version} was saved. Change a setting, "
                "the title or the season first"
                + (
                    ", or sign it off below."
                    if analysis.status == "published"
                    else ", or publish it."
                )
            )
        new = store.revise(
            analysis.id,
            author=author,
            settings=settings,
            model=model,
            forecast=fdict,
            title=title or analysis.title,
            season=season,
        )
        message = (
            f"Saved as version {new.version}, a draft linked to version {analysis.version}. "
            "Publish it when it is ready."
        )
    else:
        sel = state["selection"]
        new = store.save_analysis(
            dataset_id=sel["dataset_id"],
            series=sel["series"],
            settings=settings,
            model=model,
            forecast=fdict,
            author=author,
            title=title or f"{sel['series']} {season}".strip(),
            season=season,
        )
        message = "Saved as a draft (version 1). Publish it when it is ready."
    return [
        opened_store(new, state["selection"]),
        {"name": author},
        alert(message, "ok", title="Saved"),
    ]


def _current(data: Mapping[str, Any] | None, opened: Mapping[str, Any] | None, store: Any) -> Any:
    sel = saved.overlay(data, opened)
    analysis_id = sel.get("analysis")
    if not saved.looks_like_id(analysis_id):
        raise fc.InputError("save the analysis first: nothing saved is open on the board.")
    return store.get_analysis(analysis_id), sel


@callback(
    Output(OPEN_ID, "data", allow_duplicate=True),
    Output(AUTHOR_ID, "data", allow_duplicate=True),
    Output("board-saved-msg", "children", allow_duplicate=True),
    Input("board-publish", "n_clicks"),
    State("board-save-name", "value"),
    State(SELECTION_ID, "data"),
    State(OPEN_ID, "data"),
    prevent_initial_call=True,
)
@guarded("publishing the analysis", outputs=3, alert_at=2)
def publish(
    n: int, name: Any, data: Mapping[str, Any] | None, opened: Mapping[str, Any] | None
) -> list[Any]:
    from app.store import get_store

    if not n:
        raise PreventUpdate
    author = required(name, "Your name")
    store = get_store()
    analysis, sel = _current(data, opened, store)
    done = store.publish(analysis.id, author=author)
    return [
        opened_store(done, sel),
        {"name": author},
        alert(
            f"Version {done.version} is published: the team can open it by its link, and it "
            "can be signed off.",
            "ok",
            title="Published",
        ),
    ]


#: Seconds within which a repeat of the last sign-off is taken for the second click of a
#: double click (answered as the first was) rather than a new request; a repeat after that is
#: told the sign-off is already recorded. A double click's second request arrives well under a
#: second after the first; 5 s leaves room for a busy server.
REPEAT_SECONDS = 5.0


def just_signed(analysis: Any, name: str | None = None, role: str | None = None) -> bool:
    """Whether ``analysis``' last sign-off is under ``REPEAT_SECONDS`` old (and, when given,
    has this name and role, ignoring case)."""
    if not analysis.signoffs:
        return False
    last = analysis.signoffs[-1]
    if name is not None and (last.name.casefold(), last.role.casefold()) != (
        name.casefold(),
        str(role).casefold(),
    ):
        return False
    try:
        at = datetime.fromisoformat(last.signed_at)
    except ValueError:
        return False
    if at.tzinfo is None:
        at = at.replace(tzinfo=UTC)
    return 0 <= (datetime.now(UTC) - at).total_seconds() < REPEAT_SECONDS


@callback(
    Output(OPEN_ID, "data", allow_duplicate=True),
    Output(AUTHOR_ID, "data", allow_duplicate=True),
    Output("board-saved-msg", "children", allow_duplicate=True),
    Output("board-signoff-name", "value"),
    Output("board-signoff-role", "value"),
    Output("board-signoff-note", "value"),
    Input("board-signoff", "n_clicks"),
    State("board-signoff-name", "value"),
    State("board-signoff-role", "value"),
    State("board-signoff-note", "value"),
    State(SELECTION_ID, "data"),
    State(OPEN_ID, "data"),
    prevent_initial_call=True,
)
@guarded("signing off the analysis", outputs=6, alert_at=2)
def sign_off(
    n: int,
    name: Any,
    role: Any,
    note: Any,
    data: Mapping[str, Any] | None,
    opened: Mapping[str, Any] | None,
) -> list[Any]:
    from app.store import get_store

    if not n:
        raise PreventUpdate
    store = get_store()
    analysis, sel = _current(data, opened, store)
    if not any(str(v or "").strip() for v in (name, role, note)) and just_signed(analysis):
        # the second click of a double click, sent after the first cleared the form
        raise PreventUpdate
    who = required(name, "Name")
    role = required(role, "Role", 80)
    note = optional(note, "Note", 500)
    try:
        done = store.add_signoff(analysis.id, name=who, role=role, note=note)
    except fc.InputError as err:
        if DUPLICATE_SIGNOFF not in str(err):
            raise
        if just_signed(analysis, who, role):
            # the second click of a double click: answered as the first one was
            return [
                opened_store(analysis, sel),
                no_update,
                alert(f"Signed off by {who} ({role}).", "ok", title="Signed off"),
                "",
                "",
                "",
            ]
        # the same name and role again, later: said so, nothing recorded
        first = next(
            (
                s
                for s in analysis.signoffs
                if (s.name.casefold(), s.role.casefold()) == (who.casefold(), role.casefold())
            ),
            None,
        )
        shown = f"{first.name} ({first.role})" if first is not None else f"{who} ({role})"
        return [
            opened_store(analysis, sel),
            no_update,
            alert(
                f"{shown} has already signed off this version.", "info", title="Already signed off"
            ),
            "",
            "",
            "",
        ]
    # the form is cleared: the next sign-off is someone else's (the author name is not touched)
    return [
        opened_store(done, sel),
        no_update,
        alert(f"Signed off by {who} ({role}).", "ok", title="Signed off"),
        "",
        "",
        "",
    ]
