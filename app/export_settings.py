"""The settings behind a comparison as labelled lines a manager can read (for the HTML report).

Program internals (worker count, engine, screening margins, raw dicts) are left out.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from forecasting_core import Comparison

__all__ = ["settings_rows"]


_SEARCH_WORDS = {"exhaustive": "every order", "stepwise": "stepwise"}
_PERIOD_WORDS = {"annual": "year", "quarterly": "quarter", "monthly": "month"}


def _transform_words(used: Any) -> str:
    if isinstance(used, Mapping):
        name, lam = str(used.get("name", "")), used.get("lambda")
    else:
        name, lam = str(used or ""), None
    if name == "boxcox":
        return "Box-Cox" + (f" (\u03bb={float(lam):.2f})" if lam is not None else "")
    if name == "log":
        return "log"
    return name or ""


def settings_rows(
    settings: Mapping[str, Any], comparison: Comparison | None = None
) -> dict[str, str]:
    """The settings that produced a comparison as labelled lines a manager can read.

    Program internals (worker count, engine, screening margins, raw dicts) are left out.

    Parameters
    ----------
    settings : Mapping
        ``Comparison.settings`` (the core's keys) or the Model Bench's settings
        (``search, max_p, max_q, seasonal, constant, origins, horizon``).
    comparison : Comparison, optional
        Gives the frequency (for "5 years ahead") and the hindcast's origin count.

    Returns
    -------
    dict
        Label -> plain text, e.g. ``{"Transform": "log (chosen automatically)", ...}``.
    """
    s = dict(settings)
    out: dict[str, str] = {}
    chosen = s.get("transform")
    used = s.get("transform_used")
    if used is None and comparison is not None:
        used = comparison.transform.to_dict()
    if used is not None or chosen:
        text = _transform_words(used if used is not None else chosen)
        out["Transform"] = text + (" (chosen automatically)" if chosen == "auto" else "")
    order = s.get("order")
    if order:
        seasonal_order = s.get("seasonal_order")
        label = f"ARIMA({','.join(str(int(x)) for x in order)})"
        if seasonal_order:
            so = [int(x) for x in seasonal_order]
            label += f"({so[0]},{so[1]},{so[2]})[{so[3]}]"
        out["Model order"] = f"fixed at {label}"
    else:
        search, search_used = s.get("search"), s.get("search_used") or s.get("search")
        if search_used:
            out["Order search"] = _SEARCH_WORDS.get(str(search_used), str(search_used)) + (
                " (chosen automatically)" if search == "auto" and s.get("search_used") else ""
            )
        if s.get("max_p") is not None and s.get("max_q") is not None:
            text = f"p \u2264 {s['max_p']}, q \u2264 {s['max_q']}"
            if s.get("seasonal") and s.get("max_P") is not None:
                text += f"; seasonal P \u2264 {s['max_P']}, Q \u2264 {s.get('max_Q')}"
            out["Orders searched"] = text
        elif "seasonal" in s:
            out["Seasonal terms"] = "searched" if s["seasonal"] else "not searched"
    if s.get("differences_words"):
        # where they came from, as the board knows it (app.analysis.differences_words)
        out["Differences"] = str(s["differences_words"])
    elif s.get("d") is not None:
        how = " (from the stationarity tests)" if s.get("stationarity") else ""
        text = f"d = {s['d']}"
        if s.get("seasonal") or s.get("D"):
            text += f", seasonal D = {s.get('D') or 0}"
        out["Differences"] = text + how
    constant = s.get("constant", "absent")
    constant_words = {
        None: "decided by AICc (fitted with and without)",
        "auto": "decided by AICc (fitted with and without)",
        True: "always included",
        "on": "always included",
        False: "never included",
        "off": "never included",
    }
    if constant != "absent" and constant in constant_words:
        out["Constant or drift"] = constant_words[constant]
    frequency = comparison.frequency if comparison is not None else "annual"
    period = _PERIOD_WORDS.get(frequency, "period")
    if s.get("horizon") is not None:
        h = int(s["horizon"])
        out["Horizon"] = f"{h} {period}{'s' if h != 1 else ''} ahead"
    hc = comparison.hindcast if comparison is not None else None
    if s.get("hindcast") is False and hc is None:
        out["Hindcast"] = "not run"
    else:
        origins = s.get("hindcast_origins", s.get("origins"))
        if hc is not None:
            n = len(hc.origins)
            how = "" if origins is not None else f" (default: the last min(10, n/4) {period}s)"
            out["Hindcast"] = f"{n} origin{'s' if n != 1 else ''}{how}, {hc.method}"
        elif origins is not None:
            out["Hindcast"] = f"{origins} origins"
    if s.get("stationarity"):
        out["Stationarity check"] = str(s["stationarity"])
    return out
