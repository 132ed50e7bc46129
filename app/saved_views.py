"""The Forecast Board's saved-analysis panel: its pieces, drawn from an analysis (no callbacks).

:mod:`app.board_saved` places and updates them.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from dash import dcc, html

import forecasting_core as fc
from app import saved
from app.ui import alert, section

#: ``board-open``: the analysis this visit opened or saved, ``{"id", "selection", "tick"}``;
#: after a draft was deleted, ``{"id": None, "selection", "tick", "deleted": <its id>}``.
OPEN_ID = "board-open"
#: ``board-author`` (browser localStorage): ``{"name": str}``, the name last typed here.
AUTHOR_ID = "board-author"
HIDE = {"display": "none"}
SHOW: dict[str, str] = {}


def required(value: Any, what: str, limit: int = 120) -> str:
    """``value`` stripped, or InputError naming the field when blank or too long."""
    text = " ".join(str(value or "").split())
    if not text:
        raise fc.InputError(f"{what} is needed. Type it in the {what} box and try again.")
    if len(text) > limit:
        raise fc.InputError(
            f"{what} must be at most {limit} characters. Got {len(text)} characters instead."
        )
    return text


def optional(value: Any, what: str, limit: int = 200) -> str:
    """``value`` stripped ('' when blank), or InputError when longer than ``limit``."""
    text = " ".join(str(value or "").split())
    if len(text) > limit:
        raise fc.InputError(
            f"{what} must be at most {limit} characters. Got {len(text)} characters instead."
        )
    return text


def _when(iso: str | None) -> html.Span:
    """A time that never breaks over two lines."""
    return html.Span(saved.fmt_time(iso), className="board-when")


def signoff_items(analysis: Any) -> list[Any]:
    """The sign-offs as a dated list (oldest first)."""
    items = [
        html.Li(
            [
                html.Span(saved.fmt_time(s.signed_at), className="board-when board-signoff__when"),
                " ",
                html.Strong(s.name),
                f" ({s.role})" if s.role else "",
                f": {s.note}" if s.note else "",
            ],
            className="board-signoff",
        )
        for s in analysis.signoffs
    ]
    if not items:
        return [html.P("No sign-offs yet.", className="hc-muted", id="board-signoffs-none")]
    return [html.Ol(items, id="board-signoffs", className="board-signoffs")]


def status_panel(
    analysis: Any | None,
    changed: bool,
    differences: list[str],
    newer: Any | None,
    base_url: str = "",
    *,
    exact: bool = True,
) -> list[Any]:
    """What the board says about the saved analysis it is looking at.

    ``differences`` lists where the recomputed forecast differs from the saved one beyond the
    last floating-point digits; ``exact`` is False when they agree only to those digits.
    """
    if analysis is None:
        return [
            html.P(
                "This forecast is not saved. Save it to share it with the team: a saved draft "
                "can be published, and a published analysis signed off.",
                id="board-saved-none",
            )
        ]
    href = saved.open_href(analysis)
    meta: list[Any] = [
        f"{analysis.series}, season {analysis.season} \u00b7 saved by {analysis.author} on ",
        _when(analysis.created_at),
    ]
    if analysis.published_at:
        meta += [" \u00b7 published ", _when(analysis.published_at)]
    parts: list[Any] = [
        html.P(
            [
                html.Strong(analysis.title or analysis.series, id="board-saved-title"),
                html.Span(
                    analysis.status,
                    className=f"hc-tag board-status board-status--{analysis.status}",
                    id="board-saved-state",
                ),
                " ",
                html.Span(f"version {analysis.version}", id="board-saved-version"),
            ],
            className="board-saved-head",
        ),
        html.P(meta, className="hc-muted hc-small board-saved-meta"),
        html.P(
            [
                "Link for the team: ",
                html.A(base_url + href, href=href, id="board-saved-link"),
            ],
            className="hc-small",
        ),
    ]
    if analysis.parent_id:
        parts.append(
            html.P(
                [
                    f"Version {analysis.version} revises ",
                    html.A("the version before", href=f"/board?analysis={analysis.parent_id}"),
                    ".",
                ],
                className="hc-small",
            )
        )
    if newer is not None:
        parts.append(
            html.Div(
                alert(
                    [
                        f"A newer version exists: version {newer.version} ({newer.status}, "
                        f"by {newer.author}, {saved.fmt_time(newer.created_at)}). ",
                        html.A(f"Open version {newer.version}", href=saved.open_href(newer)),
                    ],
                    "warning",
                    title="Newer version",
                ),
                id="board-saved-newer",
            )
        )
    if changed:
        then = (
            "the published version stays as it is"
            if analysis.status == "published"
            else "the saved draft stays as it is"
        )
        parts.append(
            html.Div(
                alert(
                    f"The settings changed since version {analysis.version} was saved, so these "
                    f"are not its numbers. Saving makes a new version linked to it ({then}).",
                    "info",
                    title="Changed",
                ),
                id="board-saved-changed",
            )
        )
    elif differences:
        parts.append(
            html.Div(
                alert(
                    "Recomputed from the dataset and the saved settings, the forecast differs from "
                    "the saved one: " + "; ".join(differences[:5]) + ".",
                    "error",
                    title="Not the saved numbers",
                ),
                id="board-saved-check",
            )
        )
    else:
        parts.append(
            html.Div(
                alert(
                    "Recomputed from the dataset and the saved settings: the same numbers as "
                    f"saved on {saved.fmt_time(analysis.created_at)}"
                    + ("." if exact else " (to the last few floating-point digits)."),
                    "ok",
                    title="Same numbers",
                ),
                id="board-saved-check",
            )
        )
    if analysis.status == "published":
        parts.append(html.H3("Sign-offs", className="board-saved-sub"))
        parts.extend(signoff_items(analysis))
    return parts


def _field(label: str, field_id: str, hint: str | None = None, **kwargs: Any) -> html.Div:
    children: list[Any] = [
        html.Label(label, htmlFor=field_id, className="hc-field__label"),
        dcc.Input(id=field_id, type="text", className="hc-input", debounce=False, **kwargs),
    ]
    if hint:
        children.append(html.Span(hint, className="hc-field__hint", id=f"{field_id}-hint"))
    return html.Div(children, className="hc-field")


def delete_box() -> html.Div:
    """ "Delete this draft", then a confirm step (shown by :mod:`app.board_delete`)."""
    return html.Div(
        [
            html.Div(
                [
                    html.Button(
                        "Delete this draft",
                        id="board-delete",
                        n_clicks=0,
                        className="hc-button hc-button--quiet",
                    ),
                    html.Span(
                        "Only its author can delete a draft (the name in Your name). "
                        "Published versions are kept for good.",
                        className="hc-field__hint",
                    ),
                ],
                className="hc-row",
            ),
            html.Div(
                [
                    html.P(id="board-delete-question", className="board-delete-question"),
                    html.Div(
                        [
                            html.Button(
                                "Yes, delete the draft",
                                id="board-delete-yes",
                                n_clicks=0,
                                className="hc-button board-delete-yes",
                            ),
                            html.Button(
                                "No, keep it",
                                id="board-delete-no",
                                n_clicks=0,
                                className="hc-button hc-button--quiet",
                            ),
                        ],
                        className="hc-row",
                    ),
                ],
                id="board-delete-confirm",
                className="board-delete-confirm",
                role="group",
                style=HIDE,
                **{"aria-label": "Confirm deleting the draft"},
            ),
        ],
        id="board-delete-box",
        className="board-delete-box",
        style=HIDE,
    )


def saved_section(opened: Mapping[str, Any] | None, note: Any = None) -> html.Section:
    """The panel: status, the save form, publish and sign-off (shown when they apply)."""
    return section(
        "Save, publish and sign off",
        dcc.Store(id=OPEN_ID, data=opened),
        dcc.Store(id=AUTHOR_ID, storage_type="local"),
        html.Div(note, id="board-open-note"),
        html.Div(
            id="board-saved-status", className="board-saved-status", **{"aria-live": "polite"}
        ),
        html.Div(
            [
                _field(
                    "Title",
                    "board-save-title",
                    "Listed on the home page.",
                    maxLength=120,
                    placeholder="e.g. Hake 2026 advice",
                ),
                _field(
                    "Your name", "board-save-name", "Remembered in this browser.", maxLength=120
                ),
                _field(
                    "Season",
                    "board-save-season",
                    "Blank: the first forecast period.",
                    maxLength=40,
                ),
                html.Button("Save analysis", id="board-save", n_clicks=0, className="hc-button"),
            ],
            className="hc-row board-save-row",
        ),
        html.Div(
            [
                html.Button("Publish", id="board-publish", n_clicks=0, className="hc-button"),
                html.Span(
                    "Publishing shares it with the team as final: it can no longer be edited, "
                    "and later changes make a new version.",
                    className="hc-field__hint",
                ),
            ],
            id="board-publish-box",
            className="hc-row board-publish-box",
            style=HIDE,
        ),
        delete_box(),
        html.Div(
            [
                html.H3("Sign off this version", className="board-saved-sub"),
                html.Div(
                    [
                        _field("Name", "board-signoff-name", maxLength=120),
                        _field(
                            "Role",
                            "board-signoff-role",
                            maxLength=80,
                            placeholder="e.g. Stock manager",
                        ),
                        _field("Note", "board-signoff-note", maxLength=500, placeholder="optional"),
                        html.Button(
                            "Sign off", id="board-signoff", n_clicks=0, className="hc-button"
                        ),
                    ],
                    className="hc-row",
                ),
            ],
            id="board-signoff-box",
            className="board-signoff-box",
            style=HIDE,
        ),
        html.Div(id="board-saved-msg", **{"aria-live": "polite"}),
        id="board-saved",
        className="board-saved",
        lead="A saved analysis keeps the dataset, the settings and these numbers for the team.",
    )
