"""Layout of the Model Bench (/bench): the settings panel, the result panels and their placeholders.

Pure layout: no callbacks, no core calls (the callbacks are in :mod:`app.pages.bench`, which
may hand :func:`page` a first answer to show at once). The charts are not part of the first
layout: each sits in an empty box (``<id>-box``) that the "picked model" callback fills with
its :class:`dash.dcc.Graph`, so a first visit draws the candidates table without waiting for
plotly.js to load and draw five charts.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from dash import dcc, html

from app import figures, tables
from app.analysis import CONSTANT_LABELS, DIFFERENCES, SEARCH_LABELS
from app.state import TRANSFORM_LABELS, TRANSFORMS
from app.ui import page_header, section

#: The bench's charts: (graph id, file name of its PNG download, height in px), in the order
#: the "picked model" callback returns their figures.
GRAPHS: tuple[tuple[str, str, int], ...] = (
    ("bench-hindcast-graph", "hindcast", 380),
    ("bench-skill-graph", "hindcast_mase", 260),
    ("bench-resid-time", "residuals", 260),
    ("bench-resid-acf", "residual_acf", 260),
    ("bench-resid-qq", "residual_qq", 260),
)
_HEIGHTS = {graph_id: height for graph_id, _name, height in GRAPHS}


def field(label: str, control: Any, hint: str | None = None) -> html.Div:
    parts = [
        html.Label(label, className="hc-field__label", htmlFor=getattr(control, "id", None)),
        control,
    ]
    if hint:
        parts.append(html.Span(hint, className="hc-field__hint"))
    return html.Div(parts, className="hc-field")


def settings_panel() -> html.Section:
    # debounce=False: dash's Input with debounce=True compares a value typed then blurred with
    # the value it had when last blurred (or first drawn), not with the one a callback set since,
    # so typing the layout's 5 after the page restored 9 was dropped and "Run" used 9. Nothing
    # listens to these as an Input (the "Run" callback reads them as State), so no request per key.
    number = {"type": "number", "step": 1, "debounce": False, "className": "hc-input"}
    return section(
        "Settings",
        field(
            "Search",
            dcc.RadioItems(
                id="bench-search",
                options=[{"label": v, "value": k} for k, v in SEARCH_LABELS.items()],
                value="auto",
                className="hc-choices",
            ),
        ),
        html.Div(
            [
                field(
                    "Largest AR order p",
                    dcc.Input(id="bench-max-p", min=0, max=5, value=5, **number),
                ),
                field(
                    "Largest MA order q",
                    dcc.Input(id="bench-max-q", min=0, max=5, value=5, **number),
                ),
            ],
            className="hc-row bench-pair",
        ),
        field(
            "Seasonal part",
            dcc.Checklist(
                id="bench-seasonal",
                options=[{"label": "Search seasonal terms", "value": "on"}],
                value=["on"],
                className="hc-choices",
            ),
            hint="Monthly and quarterly data only.",
        ),
        field(
            "Transform",
            dcc.Dropdown(
                id="bench-transform",
                options=[{"label": TRANSFORM_LABELS[t], "value": t} for t in TRANSFORMS],
                value="auto",
                clearable=False,
                className="hc-dropdown",
            ),
        ),
        field(
            "Constant or drift",
            dcc.RadioItems(
                id="bench-constant",
                options=[{"label": v, "value": k} for k, v in CONSTANT_LABELS.items()],
                value="auto",
                className="hc-choices bench-inline",
            ),
        ),
        html.Div(
            [
                field(
                    "Differences d",
                    dcc.Dropdown(
                        id="bench-d",
                        options=[{"label": "Automatic", "value": "auto"}]
                        + [{"label": str(n), "value": n} for n in DIFFERENCES["d"]],
                        value="auto",
                        clearable=False,
                        searchable=False,
                        className="hc-dropdown",
                    ),
                ),
                field(
                    "Seasonal D",
                    dcc.Dropdown(
                        id="bench-D",
                        options=[{"label": "Automatic", "value": "auto"}]
                        + [{"label": str(n), "value": n} for n in DIFFERENCES["D"]],
                        value="auto",
                        clearable=False,
                        searchable=False,
                        className="hc-dropdown",
                    ),
                ),
            ],
            className="hc-row bench-pair",
        ),
        html.Span(
            "Automatic: from the stationarity tests, as Intake shows them. D only with "
            "seasonal terms (monthly and quarterly data).",
            className="hc-field__hint",
        ),
        html.Div(
            [
                field(
                    "Hindcast origins",
                    dcc.Input(
                        id="bench-origins", min=1, max=40, value=None, placeholder="auto", **number
                    ),
                    hint="Blank: the last min(10, n/4) periods as origins.",
                ),
                field(
                    "Horizon",
                    dcc.Input(id="bench-horizon", min=1, max=30, value=5, **number),
                    hint="Steps ahead.",
                ),
            ],
            className="hc-row bench-pair",
        ),
        # what went back to its default for this series' frequency (see bench_for_frequency)
        html.P(id="bench-settings-note", className="hc-field__hint bench-settings-note", role="status"),
        html.Button("Run comparison", id="bench-run", n_clicks=0, className="hc-button bench-run"),
        html.P(id="bench-timing", className="hc-figure-note"),
        className="bench-settings",
    )


def progress(text: str, label: str) -> html.Div:
    """The spinner shown over a panel while its callback runs (an indeterminate bar)."""
    return html.Div(
        [
            html.Div(html.Div(className="bench-progress__bar"), className="bench-progress__track"),
            html.P(text, className="bench-progress__text"),
        ],
        className="bench-progress",
        role="progressbar",
        **{"aria-label": label},
    )


def graph_box(graph_id: str) -> html.Div:
    """The empty box a chart is drawn into later (keeps the page from jumping when it comes)."""
    return html.Div(
        id=f"{graph_id}-box",
        className="hc-graph-box",
        style={"minHeight": f"{_HEIGHTS[graph_id]}px"},
    )


def graph(graph_id: str, figure: dict[str, Any]) -> dcc.Graph:
    """The chart for a box made by :func:`graph_box` (``figure`` as plotly JSON)."""
    name = next(n for g, n, _h in GRAPHS if g == graph_id)
    return dcc.Graph(
        id=graph_id,
        config=figures.graph_config(name),
        className="hc-graph",
        style={"height": f"{_HEIGHTS[graph_id]}px"},
        figure=figure,
    )


def _loading(children: Any, text: str, label: str, **kwargs: Any) -> dcc.Loading:
    return dcc.Loading(
        children,
        custom_spinner=progress(text, label),
        delay_show=120,
        overlay_style={"visibility": "visible", "opacity": 0.35},
        **kwargs,
    )


def search_results() -> html.Div:
    """Status line, candidates table and benchmarks (the search's answer)."""
    return html.Div(
        [
            html.Div(id="bench-status", className="bench-status"),
            html.Div(
                [
                    section(
                        "Candidates",
                        tables.candidates_table(),
                        html.P(
                            [
                                "Pick a row to carry that model to the Forecast Board; the best "
                                "by AICc is picked to start with. Click a heading to sort. ",
                                dcc.Link("Open the Forecast Board \u2192", href="/board"),
                            ],
                            className="hc-figure-note",
                        ),
                        lead="ARIMA orders ranked by AICc; rejected fits are listed with the reason.",
                    ),
                    section(
                        "Benchmarks",
                        # filled by the hindcast callback, after the candidates
                        dcc.Loading(html.Div(id="bench-benchmarks"), type="dot", delay_show=120),
                        lead="Simple methods every model must beat on past years.",
                    ),
                ],
                className="hc-grid bench-grid--cands",
            ),
        ]
    )


def hindcast_results() -> html.Div:
    """Hindcast skill and the picked model's residual checks (after the search)."""
    return html.Div(
        [
            section(
                "Hindcast",
                html.Div(id="bench-verdict", className="hc-verdict"),
                tables.skill_table(),
                html.Div(
                    [graph_box("bench-hindcast-graph"), graph_box("bench-skill-graph")],
                    className="hc-grid bench-grid--hc",
                ),
                html.P(
                    "Each line starts at an origin (a past year, quarter or month) and shows what "
                    "the model forecast from the data up to then; the dark line is what happened. "
                    "Click 'last value' in the legend to compare.",
                    className="hc-figure-note",
                ),
                lead="The past replayed with a rolling origin: fit on the data up to each origin, "
                "forecast ahead, compare with what happened.",
            ),
            section(
                "Residual checks",
                html.Div(id="bench-ljung", className="hc-verdict"),
                html.Div(
                    [
                        graph_box("bench-resid-time"),
                        graph_box("bench-resid-acf"),
                        graph_box("bench-resid-qq"),
                    ],
                    className="hc-grid bench-grid--3",
                ),
                lead="One-step residuals of the picked model on the transformed scale.",
            ),
        ]
    )


def fill(layout: Any, values: Mapping[tuple[str, str], Any]) -> Any:
    """Set ``values`` (``{(component id, property): value}``) on the components of ``layout``.

    Returns ``layout`` itself; ids that are not in it are ignored.
    """
    if values:
        found = [c for c in layout._traverse() if getattr(c, "id", None) is not None]  # noqa: SLF001
        for component in found:
            for (cid, prop), value in values.items():
                if cid == component.id:
                    setattr(component, prop, value)
    return layout


def page(first: Mapping[tuple[str, str], Any] | None = None) -> html.Div:
    """The whole Model Bench page.

    Parameters
    ----------
    first : mapping, optional
        The first answer to show at once, as :func:`fill` takes it (see
        :func:`app.pages.bench.first_answer`); without it the page starts empty and its
        arrival callbacks fill it.
    """
    return fill(_page(), first or {})


def _page() -> html.Div:
    return html.Div(
        [
            dcc.Store(id="bench-mount", data=True),
            # what the layout was answered for (None: nothing), and the arrival callbacks' start
            dcc.Store(id="bench-prefill", data=None),
            dcc.Store(id="bench-go"),
            dcc.Store(id="bench-shown", data=None),
            dcc.Store(id="bench-request"),
            page_header(
                "Model Bench",
                "Search ARIMA orders, measure them against simple benchmarks "
                "on past years, check the residuals and pick the model to forecast with.",
                step=2,
            ),
            html.Div(id="bench-alert"),
            html.Div(
                [
                    settings_panel(),
                    html.Div(
                        [
                            html.Div(
                                [
                                    _loading(
                                        search_results(),
                                        "Fitting every candidate order\u2026",
                                        "Order search running",
                                        # not the benchmarks, which wait for the hindcast
                                        target_components={"bench-candidates": "data"},
                                    ),
                                    _loading(
                                        hindcast_results(),
                                        "Replaying past years (hindcast) and checking the "
                                        "residuals\u2026",
                                        "Hindcast running",
                                    ),
                                ],
                                id="bench-results",
                            ),
                            html.Div(
                                [
                                    html.Span(id="bench-picked", className="hc-muted"),
                                    dcc.Link(
                                        "Go to Forecast Board \u2192",
                                        href="/board",
                                        id="bench-to-board",
                                        className="hc-button",
                                    ),
                                ],
                                className="hc-next",
                            ),
                        ]
                    ),
                ],
                className="hc-grid hc-grid--side",
            ),
        ],
        className="hc-page bench-page",
    )
