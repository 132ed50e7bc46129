"""Saved analyses and sign-offs: the records, their checks and the store methods.

An analysis is a series of one dataset plus everything needed to restore the selection
(``settings``), the chosen model and the saved forecast. It is a draft until published; a
published analysis is never edited in place (the store refuses, and SQLite triggers refuse as
well): a change is a new draft, one version higher, linking to the analysis it revises. Sign-offs
(a name, a role, a note, the time) are added to published analyses only and are never changed.

Every check of what a caller (ultimately, a user) sends lives in :mod:`app.store_checks` and
raises :class:`forecasting_core.InputError` with a plain message. Settings and forecasts are stored as
JSON text (never pickle) and come back exactly as saved: floats are written with Python's
shortest round-trip representation, so every number compares equal after reopening.
"""

from __future__ import annotations

import json
import sqlite3
import uuid
from collections.abc import Iterator, Mapping
from contextlib import contextmanager
from typing import TYPE_CHECKING, Any

import forecasting_core as fc
from app.store_checks import (
    DUPLICATE_SIGNOFF,
    REVISABLE,
    check_analysis_id,
    check_json,
    check_status,
    check_text,
    duplicate_signoff_message,
    published_message,
)
from app.store_db import IMMUTABLE, now_utc
from app.store_records import Analysis, SignOff

if TYPE_CHECKING:
    from app.store_db import Database


# ---------------------------------------------------------------------------------------------
# Store methods (mixed into DatasetStore)
# ---------------------------------------------------------------------------------------------

_COLUMNS = (
    "id, version, parent_id, dataset_id, series, title, season, settings, model, forecast,"
    " status, author, created_at, published_at, published_by"
)


class AnalysesMixin:
    """Analyses and sign-offs on the store's database (``self.db``)."""

    db: Database

    # provided by DatasetStore
    def _known_dataset(self, dataset_id: str) -> None: ...  # pragma: no cover
    def _series_names(self, dataset_id: str) -> list[str]: ...  # pragma: no cover

    # -- writing ------------------------------------------------------------------------------

    def save_analysis(
        self,
        *,
        dataset_id: str,
        series: str,
        settings: Mapping[str, Any],
        model: str,
        forecast: Mapping[str, Any],
        author: str,
        title: str = "",
        season: str = "",
        parent_id: str | None = None,
    ) -> Analysis:
        """Save a new draft and return it as stored.

        Raises
        ------
        forecasting_core.InputError
            When a field is missing, too long or not JSON, the dataset is unknown, the series is
            not in it, or ``parent_id`` names no analysis.
        """
        row = self._checked_fields(
            dataset_id=dataset_id,
            series=series,
            settings=settings,
            model=model,
            forecast=forecast,
            title=title,
            season=season,
        )
        author = check_text(author, "author")
        if parent_id is not None:
            check_analysis_id(parent_id)
        new_id = uuid.uuid4().hex
        with self._writing() as tx:
            if parent_id is None:
                root_id, version = new_id, 1
            else:
                parent = tx.execute(
                    "SELECT root_id FROM analyses WHERE id = ?", (parent_id,)
                ).fetchone()
                if parent is None:
                    raise fc.InputError(_unknown(parent_id))
                root_id = parent[0]
                version = (
                    1
                    + tx.execute(
                        "SELECT max(version) FROM analyses WHERE root_id = ?", (root_id,)
                    ).fetchone()[0]
                )
            tx.execute(
                "INSERT INTO analyses (id, root_id, version, parent_id, dataset_id, series, title,"
                " season, settings, model, forecast, status, author, created_at)"
                " VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, 'draft', ?, ?)",
                (
                    new_id,
                    root_id,
                    version,
                    parent_id,
                    row["dataset_id"],
                    row["series"],
                    row["title"],
                    row["season"],
                    row["settings"],
                    row["model"],
                    row["forecast"],
                    author,
                    now_utc(),
                ),
            )
        return self.get_analysis(new_id)

    def publish(self, analysis_id: str, *, author: str) -> Analysis:
        """Make a draft published (once; a published analysis never changes again)."""
        check_analysis_id(analysis_id)
        author = check_text(author, "author")
        with self._writing() as tx:
            found = tx.execute(
                "SELECT status FROM analyses WHERE id = ?", (analysis_id,)
            ).fetchone()
            if found is None:
                raise fc.InputError(_unknown(analysis_id))
            if found[0] == "published":
                raise fc.InputError(published_message(analysis_id))
            tx.execute(
                "UPDATE analyses SET status = 'published', published_at = ?, published_by = ?"
                " WHERE id = ?",
                (now_utc(), author, analysis_id),
            )
        return self.get_analysis(analysis_id)

    def revise(self, analysis_id: str, *, author: str, **changes: Any) -> Analysis:
        """A new draft copying ``analysis_id`` with ``changes``; version + 1 in the same chain.

        ``changes`` may set any of ``dataset_id, series, settings, model, forecast, title,
        season``. The revised analysis itself is left as it was.
        """
        unknown = sorted(set(changes) - set(REVISABLE))
        if unknown:
            raise fc.InputError(
                f"revise can change {', '.join(REVISABLE)}. Got {', '.join(unknown)} instead."
            )
        base = self.get_analysis(analysis_id)
        fields = {
            name: changes.get(name, getattr(base, name))
            for name in ("dataset_id", "series", "settings", "model", "forecast", "title", "season")
        }
        return self.save_analysis(**fields, author=author, parent_id=analysis_id)

    def add_signoff(self, analysis_id: str, *, name: str, role: str, note: str = "") -> Analysis:
        """Sign off a published analysis; return it with the new sign-off last.

        One person signs off one analysis once in a role: a sign-off with the name and role
        (compared ignoring case) of an earlier one on the same analysis is refused, whatever
        the time between them (a double click, a resent request, a retry after a timeout).
        The check and the insert are one write transaction, so two requests at once cannot
        both pass.

        Raises
        ------
        forecasting_core.InputError
            When a field is missing or too long, the analysis is unknown or a draft, or this
            name already signed it off in this role.
        """
        check_analysis_id(analysis_id)
        name = check_text(name, "name")
        role = check_text(role, "role")
        note = check_text(note, "note", required=False)
        with self._writing() as tx:
            found = tx.execute(
                "SELECT status FROM analyses WHERE id = ?", (analysis_id,)
            ).fetchone()
            if found is None:
                raise fc.InputError(_unknown(analysis_id))
            if found[0] != "published":
                raise fc.InputError(
                    f"analysis {analysis_id} is a draft; only published analyses can be signed "
                    "off. Publish it first."
                )
            for done_name, done_role, done_at in tx.execute(
                "SELECT name, role, signed_at FROM signoffs WHERE analysis_id = ?",
                (analysis_id,),
            ):
                if (done_name.casefold(), done_role.casefold()) == (
                    name.casefold(),
                    role.casefold(),
                ):
                    raise fc.InputError(duplicate_signoff_message(done_name, done_role, done_at))
            tx.execute(
                "INSERT INTO signoffs (analysis_id, name, role, note, signed_at)"
                " VALUES (?, ?, ?, ?, ?)",
                (analysis_id, name, role, note, now_utc()),
            )
        return self.get_analysis(analysis_id)

    def delete_draft(self, analysis_id: str, *, author: str) -> Analysis:
        """Delete a draft for good, at its author's request; return it as it was.

        Only drafts: a published analysis is kept for good (the forecast record and sign-offs
        rest on it; a SQLite trigger refuses its deletion too). Only by its author, the name
        compared ignoring case (the board's "Your name"; there are no accounts, so this keeps
        people from deleting a colleague's draft by mistake rather than by intent). A draft
        that a later version revises is kept while that version exists (it links to it).
        The checks and the deletion are one write transaction.

        Parameters
        ----------
        analysis_id : str
            The draft (32 hexadecimal digits).
        author : str
            Who asks; must be the draft's author.

        Raises
        ------
        forecasting_core.InputError
            When the id is malformed or unknown, the analysis is published, ``author`` is not
            its author, or a later version revises it.
        """
        check_analysis_id(analysis_id)
        author = check_text(author, "author")
        with self._writing() as tx:
            row = tx.execute(
                f"SELECT {_COLUMNS} FROM analyses WHERE id = ?", (analysis_id,)
            ).fetchone()
            if row is None:
                raise fc.InputError(_unknown(analysis_id))
            found = _analysis(row, ())
            if found.is_published:
                raise fc.InputError(
                    f"analysis {analysis_id} is published, and published analyses are never "
                    "deleted (the forecast record and the sign-offs rest on them). Revise it "
                    "to make a new version."
                )
            if found.author.casefold() != author.casefold():
                raise fc.InputError(
                    f"only the draft's author ({found.author}) can delete it; you typed {author}."
                )
            child = tx.execute(
                "SELECT version FROM analyses WHERE parent_id = ? ORDER BY version LIMIT 1",
                (analysis_id,),
            ).fetchone()
            if child is not None:
                raise fc.InputError(
                    f"version {found.version} cannot be deleted while version {child[0]} "
                    f"revises it. Delete version {child[0]} first, or keep both."
                )
            tx.execute("DELETE FROM analyses WHERE id = ? AND status = 'draft'", (analysis_id,))
        return found

    # -- reading ------------------------------------------------------------------------------

    def get_analysis(self, analysis_id: str) -> Analysis:
        """One analysis with its sign-offs (InputError naming the id when unknown/malformed)."""
        check_analysis_id(analysis_id)
        with self.db.read() as conn:
            row = conn.execute(
                f"SELECT {_COLUMNS} FROM analyses WHERE id = ?", (analysis_id,)
            ).fetchone()
            if row is None:
                raise fc.InputError(_unknown(analysis_id))
            signoffs = _signoffs(conn, [analysis_id])
        return _analysis(row, signoffs.get(analysis_id, ()))

    def list_analyses(
        self,
        *,
        query: str | None = None,
        status: str | None = None,
        series: str | None = None,
        limit: int | None = None,
    ) -> list[Analysis]:
        """Saved analyses, newest first.

        Parameters
        ----------
        query : str, optional
            Words that must all appear (case-insensitively) in the title, series, season,
            author or model.
        status : {"draft", "published"}, optional
            Only analyses with this status (default: both).
        series : str, optional
            Only analyses of this series (exact name).
        limit : int, optional
            At most this many (from 1 to 10000).
        """
        status = check_status(status)
        where, args = [], []
        if query is not None:
            for word in check_text(query, "query", required=False).split():
                where.append(
                    "instr(hc_fold(title || ' ' || series || ' ' || season || ' ' || author"
                    " || ' ' || model), ?) > 0"
                )
                args.append(word.casefold())
        if status is not None:
            where.append("status = ?")
            args.append(status)
        if series is not None:
            where.append("series = ?")
            args.append(check_text(series, "series"))
        sql = f"SELECT {_COLUMNS} FROM analyses"
        if where:
            sql += " WHERE " + " AND ".join(where)
        sql += " ORDER BY seq DESC"
        if limit is not None:
            if isinstance(limit, bool) or not isinstance(limit, int) or not 1 <= limit <= 10_000:
                raise fc.InputError(
                    f"limit must be an integer from 1 to 10000. Got {limit!r} instead."
                )
            sql += f" LIMIT {int(limit)}"
        with self.db.read() as conn:
            rows = conn.execute(sql, args).fetchall()
            signoffs = _signoffs(conn, [r[0] for r in rows])
        return [_analysis(r, signoffs.get(r[0], ())) for r in rows]

    def history(self, analysis_id: str) -> list[Analysis]:
        """Every version in the chain ``analysis_id`` belongs to, oldest first."""
        check_analysis_id(analysis_id)
        with self.db.read() as conn:
            root = conn.execute(
                "SELECT root_id FROM analyses WHERE id = ?", (analysis_id,)
            ).fetchone()
            if root is None:
                raise fc.InputError(_unknown(analysis_id))
            rows = conn.execute(
                f"SELECT {_COLUMNS} FROM analyses WHERE root_id = ? ORDER BY version", (root[0],)
            ).fetchall()
            signoffs = _signoffs(conn, [r[0] for r in rows])
        return [_analysis(r, signoffs.get(r[0], ())) for r in rows]

    # -- internals ----------------------------------------------------------------------------

    def _checked_fields(self, **fields: Any) -> dict[str, Any]:
        from app.store import check_dataset_id

        dataset_id = check_dataset_id(fields["dataset_id"])
        self._known_dataset(dataset_id)
        series = check_text(fields["series"], "series")
        names = self._series_names(dataset_id)
        if series not in names:
            shown = ", ".join(names[:12]) + (" ..." if len(names) > 12 else "")
            raise fc.InputError(
                f"series {series!r} is not in dataset {dataset_id[:12]}. "
                f"Its series are: {shown or 'none'}."
            )
        return {
            "dataset_id": dataset_id,
            "series": series,
            "settings": check_json(fields["settings"], "settings"),
            "model": check_text(fields["model"], "model"),
            "forecast": check_json(fields["forecast"], "forecast"),
            "title": check_text(fields["title"], "title", required=False),
            "season": check_text(fields["season"], "season", required=False),
        }

    @contextmanager
    def _writing(self) -> Iterator[sqlite3.Connection]:
        """``db.write()``, with a trigger's refusal turned into the store's plain message."""
        try:
            with self.db.write() as tx:
                yield tx
        except sqlite3.IntegrityError as err:
            if IMMUTABLE in str(err):
                raise fc.InputError(
                    "a published analysis cannot be changed. Revise it to make a new version."
                ) from err
            if "signoffs" in str(err) and "UNIQUE" in str(err):  # the index behind the check
                raise fc.InputError(
                    f"this name {DUPLICATE_SIGNOFF} this role; a second sign-off in the same "
                    "role is not recorded."
                ) from err
            raise


def _unknown(analysis_id: str) -> str:
    return f"analysis {analysis_id} was not found on this server."


def _signoffs(conn: sqlite3.Connection, ids: list[str]) -> dict[str, tuple[SignOff, ...]]:
    out: dict[str, list[SignOff]] = {}
    for start in range(0, len(ids), 500):
        chunk = ids[start : start + 500]
        marks = ",".join("?" * len(chunk))
        for analysis_id, *rest in conn.execute(
            f"SELECT analysis_id, name, role, note, signed_at FROM signoffs"
            f" WHERE analysis_id IN ({marks}) ORDER BY seq",
            chunk,
        ):
            out.setdefault(analysis_id, []).append(SignOff(*rest))
    return {k: tuple(v) for k, v in out.items()}


def _analysis(row: tuple[Any, ...], signoffs: tuple[SignOff, ...]) -> Analysis:
    (
        id_,
        version,
        parent_id,
        dataset_id,
        series,
        title,
        season,
        settings,
        model,
        forecast,
        status,
        author,
        created_at,
        published_at,
        published_by,
    ) = row
    return Analysis(
        id=id_,
        version=int(version),
        parent_id=parent_id,
        dataset_id=dataset_id,
        series=series,
        title=title,
        season=season,
        settings=json.loads(settings),
        model=model,
        forecast=json.loads(forecast),
        status=status,
        author=author,
        created_at=created_at,
        published_at=published_at,
        signoffs=signoffs,
        published_by=published_by,
    )
