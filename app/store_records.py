"""The records the store hands back: a saved :class:`Analysis` and its :class:`SignOff` s.

Both are frozen; ``to_dict()`` gives a plain JSON-ready copy (the API and the exports use it).
"""

from __future__ import annotations

import copy
from dataclasses import dataclass, field
from typing import Any

__all__ = ["Analysis", "SignOff"]


@dataclass(frozen=True)
class SignOff:
    """A named, dated approval of a published analysis.

    Parameters
    ----------
    name, role : str
        Who signed off and in which capacity (e.g. "stock lead").
    note : str
        Free text (may be empty).
    signed_at : str
        ISO 8601 UTC time, to the second.
    """

    name: str
    role: str
    note: str
    signed_at: str

    def to_dict(self) -> dict[str, str]:
        return {
            "name": self.name,
            "role": self.role,
            "note": self.note,
            "signed_at": self.signed_at,
        }


@dataclass(frozen=True)
class Analysis:
    """One saved analysis (a version in a chain of revisions).

    Parameters
    ----------
    id : str
        32 lowercase hexadecimal digits (a random uuid4): unguessable and safe in URLs.
    version : int
        1, 2, ... within one chain of revisions (unique within the chain).
    parent_id : str or None
        The analysis this version revises (None for a first version).
    dataset_id, series, title : str
        The dataset (sha256), the series name in it, a display title (may be empty).
    season : str
        Label of the first forecast period, e.g. ``"2026"`` or ``"2026-07"`` (may be empty).
    settings : dict
        JSON: everything needed to restore the selection.
    model : str
        Label of the chosen candidate.
    forecast : dict
        ``Forecast.to_dict()`` of the saved forecast.
    status : {"draft", "published"}
    author, created_at, published_at : str
        Times are ISO 8601 UTC to the second; ``published_at`` is None for a draft.
    signoffs : tuple of SignOff
        Oldest first.
    published_by : str or None
        Who published it (None for a draft).
    """

    id: str
    version: int
    parent_id: str | None
    dataset_id: str
    series: str
    title: str
    season: str
    settings: dict
    model: str
    forecast: dict
    status: str
    author: str
    created_at: str
    published_at: str | None
    signoffs: tuple[SignOff, ...] = ()
    published_by: str | None = field(default=None)

    @property
    def is_published(self) -> bool:
        return self.status == "published"

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready copy (changing it does not change the analysis)."""
        return {
            "id": self.id,
            "version": self.version,
            "parent_id": self.parent_id,
            "dataset_id": self.dataset_id,
            "series": self.series,
            "title": self.title,
            "season": self.season,
            "settings": copy.deepcopy(self.settings),
            "model": self.model,
            "forecast": copy.deepcopy(self.forecast),
            "status": self.status,
            "author": self.author,
            "created_at": self.created_at,
            "published_at": self.published_at,
            "published_by": self.published_by,
            "signoffs": [s.to_dict() for s in self.signoffs],
        }
