"""Home (/): the team's saved analyses by stock and season, with search.

Each row opens its analysis on the Forecast Board (``/board?analysis=<id>``) with the dataset,
series and settings restored; drafts open there too, since saving, publishing and sign-off
live on the board. A draft's row also has "Delete…" (after a confirm step, for its author;
:mod:`app.home_delete`). Saved analyses are shared by everyone on this server; an upload that was
never saved stays private to its browser session.
"""

from __future__ import annotations

from typing import Any

import dash
from dash import Input, Output, callback, dcc, html

from app import home_delete, saved
from app.ui import guarded, html_table, page_header

dash.register_page(__name__, path="/", name="Home", order=0, title="Saved analyses \u00b7 Haulcast")

STATUS_OPTIONS = [
    {"label": "Published and drafts", "value": "all"},
    {"label": "Published only", "value": "published"},
    {"label": "Drafts only", "value": "draft"},
]
#: At most this many analyses are listed (the newest); the search reaches the rest.
LIST_LIMIT = 2000


def layout(**_query: Any) -> html.Div:
    """The home page."""
    return html.Div(
        [
            page_header(
                "Saved analyses",
                "Forecasts the team has saved, by stock and season. Open one to see it on the "
                "Forecast Board with its data and settings restored.",
            ),
            html.Div(
                [
                    html.Div(
                        [
                            html.Label(
                                "Search", htmlFor="home-search", className="hc-field__label"
                            ),
                            dcc.Input(
                                id="home-search",
                                type="search",
                                debounce=0.3,
                                placeholder="stock, season, title, author or model",
                                className="hc-input",
                                autoComplete="off",
                            ),
                        ],
                        className="hc-field home-search",
                    ),
                    html.Div(
                        [
                            html.Label("Show", htmlFor="home-status", className="hc-field__label"),
                            dcc.Dropdown(
                                id="home-status",
                                options=STATUS_OPTIONS,
                                value="all",
                                clearable=False,
                                searchable=False,
                                className="hc-dropdown",
                            ),
                        ],
                        className="hc-field",
                    ),
                    html.Div(
                        [
                            html.Label("Order", htmlFor="home-sort", className="hc-field__label"),
                            dcc.Dropdown(
                                id="home-sort",
                                options=[{"label": v, "value": k} for k, v in saved.SORTS.items()],
                                value="stock",
                                clearable=False,
                                searchable=False,
                                className="hc-dropdown",
                            ),
                        ],
                        className="hc-field",
                    ),
                    dcc.Checklist(
                        id="home-versions",
                        options=[{"label": " Earlier versions too", "value": "all"}],
                        value=[],
                        className="hc-choices home-versions",
                    ),
                ],
                className="hc-row home-controls",
            ),
            html.P(id="home-count", className="hc-muted home-count", **{"aria-live": "polite"}),
            dcc.Store(id=home_delete.REFRESH_ID, data=0),
            dcc.Store(id=home_delete.TARGET_ID),
            home_delete.confirm_box(),
            html.Div(id="home-delete-msg", **{"aria-live": "polite"}),
            html.Div(id="home-list", className="home-list"),
            html.P(
                [
                    "Start a new analysis: bring in data on ",
                    dcc.Link("Intake", href="/intake"),
                    ", compare models on the ",
                    dcc.Link("Model Bench", href="/bench"),
                    ", then save it from the ",
                    dcc.Link("Forecast Board", href="/board"),
                    ".",
                ],
                className="home-start",
            ),
        ],
        className="hc-page home-page",
    )


def _status(analysis: Any, newer: int | None = None) -> Any:
    """The status tag; a draft's has "Delete…" unless a later version (``newer``) revises it."""
    tag = html.Span(
        analysis.status, className=f"hc-tag board-status board-status--{analysis.status}"
    )
    if analysis.status != "draft":
        return tag
    if newer is not None:
        # the store keeps a draft a later version revises: no Delete that would only refuse
        tag.title = f"Version {newer} revises this draft; delete the later versions first."
        return tag
    return html.Span([tag, home_delete.delete_button(analysis)], className="home-status")


def _rows(items: list[Any], superseded: dict[str, int], show_stock: bool) -> list[dict[str, Any]]:
    rows = []
    for a in items:
        version: Any = str(a.version)
        if a.id in superseded:
            version = [version, html.Span(f" (v{superseded[a.id]} is newer)", className="hc-muted")]
        rows.append(
            {
                "stock": a.series,
                "season": a.season,
                "title": dcc.Link(
                    a.title or a.series, href=saved.open_href(a), className="home-open"
                ),
                "status": _status(a, superseded.get(a.id)),
                "version": version,
                "author": a.author,
                "signoffs": str(len(a.signoffs)),
                "saved": saved.fmt_time(a.published_at or a.created_at),
                "_class": f"home-row home-row--{a.status}",
            }
        )
    return rows


def _table(items: list[Any], superseded: dict[str, int], sort: str) -> html.Table:
    columns = [("title", "Analysis")]
    if sort != "stock":
        columns.append(("stock", "Stock (series)"))
    if sort != "season":
        columns.append(("season", "Season"))
    columns += [
        ("status", "Status"),
        ("version", "Version"),
        ("author", "Author"),
        ("signoffs", "Sign-offs"),
        ("saved", "Saved or published"),
    ]
    return html_table(
        _rows(items, superseded, sort != "stock"),
        columns,
        numeric=("version", "signoffs"),
        className="home-table",
    )


@callback(
    Output("home-list", "children"),
    Output("home-count", "children"),
    Input("home-search", "value"),
    Input("home-status", "value"),
    Input("home-sort", "value"),
    Input("home-versions", "value"),
    Input(home_delete.REFRESH_ID, "data"),
)
@guarded("listing the saved analyses", outputs=2, alert_at=0)
def show_list(query: Any, status: Any, sort: Any, versions: Any, _refresh: Any = None) -> list[Any]:
    from app.store import get_store

    everything = get_store().list_analyses(limit=LIST_LIMIT)
    if not everything:
        return [
            html.Div(
                "Nothing is saved on this server yet. Save a forecast from the Forecast Board "
                "and it is listed here for the team.",
                className="home-empty",
                id="home-empty",
            ),
            "",
        ]
    # the newest version number of each chain, to say when a row is superseded
    newest = saved.newer_version_numbers(everything)
    items = list(everything)
    if status in ("published", "draft"):
        items = [a for a in items if a.status == status]
    items = [a for a in items if saved.matches_query(a, query)]
    if "all" not in (versions or []):
        items = saved.latest_versions(items)
    sort = sort if sort in saved.SORTS else "stock"
    groups = saved.group_analyses(items, sort)
    count = sum(len(g) for _, g in groups)
    noun = "analysis" if count == 1 else "analyses"
    text = f"{count} {noun}" + (
        f" matching \u201c{str(query).strip()}\u201d" if query and str(query).strip() else ""
    )
    if not groups:
        return [
            html.Div(
                "No saved analysis matches. Try fewer words, or show drafts and earlier versions.",
                className="home-empty",
                id="home-empty",
            ),
            text,
        ]
    parts: list[Any] = []
    for heading, group in groups:
        if heading:
            label = heading if sort == "stock" else f"Season {heading}"
            parts.append(html.H2(label, className="home-group__title"))
        parts.append(html.Div(_table(group, newest, sort), className="hc-table-wrap"))
    return [parts, text]
