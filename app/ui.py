"""Shared interface pieces: the palette, the alert pattern and small layout helpers.

Every page imports from here so that the three pages look and fail the same way.

The alert pattern
-----------------
Wrap every callback body with :func:`guarded`. Any exception inside becomes a readable
``html.Div(role="alert", className="hc-alert ...")`` in the output you name, never a broken page
and never a traceback::

    @callback(Output("bench-alert", "children"), Output("bench-table", "children"),
              Input("bench-run", "n_clicks"), prevent_initial_call=True)
    @guarded("comparing models", outputs=2, alert_at=0)
    def run(n_clicks):
        ...
        return None, table          # None clears the alert

:class:`forecasting_core.InputError` messages are shown verbatim (they are written for the
analyst); any other exception is logged with its traceback on the server and shown as
"Something went wrong while <action> — the details are in the server log."
"""

from __future__ import annotations

import functools
import logging
from collections.abc import Callable, Iterable, Sequence
from typing import Any

from dash import dcc, html, no_update
from dash.exceptions import PreventUpdate

from forecasting_core import CAUTIONS, InputError

logger = logging.getLogger("haulcast.app")

#: Haulcast's palette (the same values are CSS variables in ``assets/haulcast.css``).
#: Deep sea blues for structure, teal for everything a model says, sand for quiet
#: backgrounds, coral for the reference level and errors, amber for warnings.
PALETTE: dict[str, str] = {
    "ink": "#14222e",  # body text, observed values
    "slate": "#1e2b36",  # observed history line (matches figures.COLORS["history"])
    "deep": "#0b3954",  # top bar, headings
    "sea": "#155e75",  # links, primary buttons
    "teal": "#0f6e80",  # model lines and bands (matches figures.COLORS["model"])
    "teal_dark": "#0a4f5d",
    "foam": "#dceef0",  # selected / highlighted rows
    "sand": "#f3ecdf",  # page background
    "paper": "#fffdf9",  # cards and panels
    "line": "#d6d0c4",  # card borders
    "grid": "#e3e8ec",  # figure grid lines
    "muted": "#5a6672",  # secondary text (contrast >= 5.5:1 on paper)
    "benchmark": "#8a94a0",  # benchmark models in figures
    "coral": "#c2452d",  # reference level, errors (contrast >= 4.5:1 on paper)
    "coral_bg": "#fbe7e2",
    "amber": "#8a5a00",  # warning text (contrast >= 5:1 on paper)
    "amber_bg": "#fdf1d6",
    "kelp": "#2f6b3a",  # success / usable
    "kelp_bg": "#e3f1e5",
}

#: Font stack: locally installed fonts only (nothing is fetched from the internet).
FONT_FAMILY = "'Segoe UI', 'Noto Sans', 'DejaVu Sans', 'Helvetica Neue', Arial, sans-serif"

_SEVERITY = {
    # severity -> (icon, label); the icon's shape and the word carry the meaning, the colour repeats it
    "error": ("\u2716", "Error"),  # heavy multiplication x
    "warning": ("\u25b2", "Warning"),  # triangle
    "info": ("\u2139", "Note"),  # information source
    "ok": ("\u2714", "OK"),  # check mark
}


# ---------------------------------------------------------------------------------------------
# Alerts
# ---------------------------------------------------------------------------------------------


def alert(message: Any, kind: str = "error", *, title: str | None = None) -> html.Div:
    """A readable alert box.

    Parameters
    ----------
    message : str or Dash component
        What happened and what to do, in plain language.
    kind : {"error", "warning", "info", "ok"}
        Sets the icon, the label and the colour.
    title : str, optional
        Bold lead-in; defaults to the kind's label.
    """
    icon, label = _SEVERITY.get(kind, _SEVERITY["error"])
    return html.Div(
        [
            html.Span(icon, className="hc-alert__icon", **{"aria-hidden": "true"}),
            html.Div(
                [
                    html.Strong((title or label) + ": "),
                    html.Span(message, className="hc-alert__text"),
                ],
                className="hc-alert__body",
            ),
        ],
        role="alert",
        className=f"hc-alert hc-alert--{kind}",
    )


#: The heading of a message about input the analyst can correct (an InputError).
CHECK_TITLE = "Check this"


def error_alert(err: BaseException, action: str) -> html.Div:
    """The alert for an exception raised while doing ``action`` (logged unless an InputError)."""
    if isinstance(err, InputError):
        # something the analyst can correct: a calm heading, not one that reads like a fault
        return alert(str(err), "error", title=CHECK_TITLE)
    logger.error("Callback failed while %s", action, exc_info=err)
    return alert(
        f"Something went wrong while {action} \u2014 the details are in the server log.",
        "error",
        title="Something went wrong",
    )


def guarded(
    action: str,
    *,
    outputs: int = 1,
    alert_at: int = 0,
    fallback: Any = no_update,
) -> Callable[[Callable[..., Any]], Callable[..., Any]]:
    """Decorate a callback so that any exception becomes an alert in one of its outputs.

    Parameters
    ----------
    action : str
        What the callback does, as a gerund phrase ("reading the file"); used in the
        message for unexpected errors.
    outputs : int
        Number of outputs of the callback (1 = a single, non-list output).
    alert_at : int
        Index of the output that receives the alert (its ``children``).
    fallback : Any or sequence
        Value(s) for the other outputs when an error occurs: one value for all (default
        ``dash.no_update``) or a list/tuple with one entry per output.

    Notes
    -----
    ``PreventUpdate`` passes through untouched. Put ``@guarded`` *below* ``@callback``.
    """

    def decorate(func: Callable[..., Any]) -> Callable[..., Any]:
        @functools.wraps(func)
        def wrapper(*args: Any, **kwargs: Any) -> Any:
            try:
                return func(*args, **kwargs)
            except PreventUpdate:
                raise
            except Exception as err:  # noqa: BLE001 - this is the one place that catches all
                box = error_alert(err, action)
            if outputs == 1:
                return box
            if isinstance(fallback, list | tuple):
                values = list(fallback)
                if len(values) != outputs:
                    raise ValueError(
                        f"fallback must have {outputs} values. Got {len(values)} instead."
                    )
            else:
                values = [fallback] * outputs
            values[alert_at] = box
            return values

        return wrapper

    return decorate


# ---------------------------------------------------------------------------------------------
# Layout helpers
# ---------------------------------------------------------------------------------------------


def page_header(title: str, lead: str | None = None, *, step: int | None = None) -> html.Div:
    """The title block of a page: an ``h1`` (tests look for it) and one line of purpose."""
    children: list[Any] = []
    if step is not None:
        children.append(html.Span(f"Step {step} of 3", className="hc-page__step"))
    children.append(html.H1(title, className="hc-page__title"))
    if lead:
        children.append(html.P(lead, className="hc-page__lead"))
    return html.Div(children, className="hc-page__header")


def section(
    title: str,
    *children: Any,
    id: str | None = None,  # noqa: A002 - mirrors Dash's keyword
    lead: str | None = None,
    className: str = "",
) -> html.Section:
    """A titled panel (``h2``) with an optional one-line explanation."""
    head: list[Any] = [html.H2(title, className="hc-section__title")]
    if lead:
        head.append(html.P(lead, className="hc-section__lead"))
    kwargs = {"id": id} if id else {}
    return html.Section(
        [html.Div(head, className="hc-section__head"), *children],
        className=f"hc-section {className}".strip(),
        **kwargs,
    )


def stat_card(
    label: str, value: Any, note: str | None = None, *, tone: str = "neutral"
) -> html.Div:
    """One number with its label (``tone``: neutral, good, warning, error)."""
    children = [
        html.Div(label, className="hc-stat__label"),
        html.Div(value, className="hc-stat__value"),
    ]
    if note:
        children.append(html.Div(note, className="hc-stat__note"))
    return html.Div(children, className=f"hc-stat hc-stat--{tone}")


def stat_row(cards: Iterable[html.Div]) -> html.Div:
    """Lay out stat cards in a wrapping row."""
    return html.Div(list(cards), className="hc-stats")


def caution_box(extra: Sequence[str] = (), *, compact: bool = False) -> html.Aside:
    """The cautions every published forecast carries (:data:`forecasting_core.CAUTIONS`)."""
    items = [html.Li(text) for text in (*CAUTIONS, *extra)]
    return html.Aside(
        [html.H3("Read before using these numbers", className="hc-caution__title"), html.Ul(items)],
        className="hc-caution hc-caution--compact" if compact else "hc-caution",
        role="note",
    )


def severity_badge(severity: str) -> html.Span:
    """Icon + word for a problem's severity (shape and text, not only colour)."""
    icon, label = _SEVERITY.get(severity, (severity[:1].upper(), severity.capitalize()))
    return html.Span(
        [html.Span(icon, className="hc-sev__icon", **{"aria-hidden": "true"}), label],
        className=f"hc-sev hc-sev--{severity}",
    )


def html_table(
    rows: Sequence[dict[str, Any]],
    columns: Sequence[tuple[str, str]],
    *,
    id: str | None = None,  # noqa: A002
    numeric: Iterable[str] = (),
    className: str = "",
    caption: str | None = None,
) -> html.Table:
    """A plain, styled HTML table.

    Parameters
    ----------
    rows : sequence of dict
        Cell values by column key; values may be Dash components.
    columns : sequence of (key, heading)
    numeric : iterable of str
        Keys of right-aligned (numeric) columns.
    """
    numeric = set(numeric)
    head = html.Thead(
        html.Tr(
            [
                html.Th(h, className="hc-num" if k in numeric else None, scope="col")
                for k, h in columns
            ]
        )
    )
    body = html.Tbody(
        [
            html.Tr(
                [
                    html.Td(row.get(k, ""), className="hc-num" if k in numeric else None)
                    for k, _ in columns
                ],
                className=row.get("_class"),
            )
            for row in rows
        ]
    )
    parts: list[Any] = []
    if caption:
        parts.append(html.Caption(caption))
    parts.extend([head, body])
    kwargs = {"id": id} if id else {}
    return html.Table(parts, className=f"hc-table {className}".strip(), **kwargs)


def loading(children: Any, *, id: str | None = None) -> dcc.Loading:  # noqa: A002
    """A spinner around a part that takes a moment (in the palette's teal)."""
    kwargs = {"id": id} if id else {}
    return dcc.Loading(children, type="circle", color=PALETTE["teal"], delay_show=150, **kwargs)


def fmt_number(value: Any, digits: int = 4) -> str:
    """Format a number for a table: ``4,210``, ``0.0312``; blank for missing."""
    try:
        v = float(value)
    except (TypeError, ValueError):
        return "" if value is None else str(value)
    if v != v:  # NaN
        return ""
    if abs(v) >= 1000:
        return f"{v:,.0f}"
    return f"{v:.{digits}g}"
