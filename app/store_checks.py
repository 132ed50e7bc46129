"""The checks of everything a caller (ultimately, a user) sends to the store.

This is the one place where the store's input is validated: each check returns the clean value
or raises :class:`forecasting_core.InputError` with a plain message that names the field, what
is allowed and what was given ("author must be at most 80 characters. Got 95 characters
instead.").
"""

from __future__ import annotations

import json
import math
import re
from collections.abc import Mapping

import forecasting_core as fc

__all__ = [
    "JSON_LIMITS",
    "LIMITS",
    "REVISABLE",
    "STATUSES",
    "check_analysis_id",
    "check_json",
    "check_status",
    "check_text",
    "duplicate_signoff_message",
    "published_message",
]

STATUSES = ("draft", "published")
_ANALYSIS_ID = re.compile(r"^[0-9a-f]{32}$")
_CONTROL = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\x7f]")

#: Longest accepted text per field, in characters.
LIMITS = {
    "author": 80,
    "name": 80,
    "role": 80,
    "series": 200,
    "title": 200,
    "season": 40,
    "model": 200,
    "note": 2000,
    "query": 200,
}
_EMPTY_HINTS = {
    "author": "Enter your name.",
    "name": "Enter your name.",
    "role": "Enter a role, e.g. stock lead.",
    "series": "Choose a series.",
    "model": "Choose a model.",
}
#: Largest accepted JSON per field, in bytes of UTF-8 text.
JSON_LIMITS = {"settings": 64 * 1024, "forecast": 2 * 1024 * 1024}
#: Fields ``revise`` may change.
REVISABLE = ("dataset_id", "series", "settings", "model", "forecast", "title", "season")

# ---------------------------------------------------------------------------------------------


def check_analysis_id(analysis_id: object) -> str:
    """Return ``analysis_id`` if it is 32 lowercase hex digits, else raise InputError."""
    if not isinstance(analysis_id, str) or not _ANALYSIS_ID.match(analysis_id):
        shown = str(analysis_id)[:80] if analysis_id is not None else None
        raise fc.InputError(
            f"analysis id must be 32 hexadecimal digits (0-9, a-f). Got {shown!r} instead."
        )
    return analysis_id


def check_text(value: object, what: str, *, required: bool = True) -> str:
    """A text field: a string, stripped, without control characters, within ``LIMITS``."""
    if value is None and not required:
        return ""
    if not isinstance(value, str):
        raise fc.InputError(f"{what} must be text. Got {type(value).__name__} instead.")
    if what == "series":
        text = value  # a series name must match the dataset's exactly
    else:
        text = value.strip()
        if what != "note" and ("\n" in text or "\t" in text):
            text = " ".join(text.split())
    if _CONTROL.search(text):
        raise fc.InputError(f"{what} must not contain control characters. Remove them and retry.")
    if required and not text.strip():
        raise fc.InputError(f"{what} must not be empty. {_EMPTY_HINTS.get(what, 'Enter it.')}")
    limit = LIMITS[what]
    if len(text) > limit:
        raise fc.InputError(
            f"{what} must be at most {limit} characters. Got {len(text)} characters instead."
        )
    return text


def check_json(value: object, what: str) -> str:
    """A dict field as compact JSON text (numbers finite, size within ``JSON_LIMITS``)."""
    if not isinstance(value, Mapping):
        raise fc.InputError(f"{what} must be a dictionary. Got {type(value).__name__} instead.")
    try:
        text = json.dumps(dict(value), allow_nan=False, ensure_ascii=False, separators=(",", ":"))
    except ValueError as err:
        raise fc.InputError(
            f"{what} must hold only finite numbers (no NaN or infinity). Replace them with null."
        ) from err
    except TypeError as err:
        raise fc.InputError(
            f"{what} must hold only text, numbers, true/false, null, lists and dictionaries. {err}."
        ) from err
    limit = JSON_LIMITS[what]
    size = len(text.encode("utf-8"))
    if size > limit:
        raise fc.InputError(
            f"{what} must be at most {limit // 1024} kB as JSON. Got {math.ceil(size / 1024)} kB "
            "instead."
        )
    return text


def check_status(status: object) -> str | None:
    if status is None:
        return None
    if status not in STATUSES:
        raise fc.InputError(
            f"status must be 'draft' or 'published'. Got {str(status)[:40]!r} instead."
        )
    return str(status)


def published_message(analysis_id: str) -> str:
    return (
        f"analysis {analysis_id} is published and cannot be changed. "
        "Revise it to make a new version."
    )


#: The start of the store's refusal of a repeated sign-off (see ``duplicate_signoff_message``).
DUPLICATE_SIGNOFF = "already signed off this analysis as"


def duplicate_signoff_message(name: str, role: str, signed_at: str) -> str:
    """The plain refusal of a second sign-off with the same name and role."""
    return (
        f"{name} {DUPLICATE_SIGNOFF} {role} (at {signed_at}); a second sign-off in the same "
        "role is not recorded. Use another role, or revise the analysis for a new version."
    )
