"""Saved analyses in the store: exact round trips, drafts and published versions, sign-offs,
search, and the plain messages for every input a user can get wrong."""

from __future__ import annotations

import json
import sqlite3

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import forecasting_core as fc
from app.store import DB_NAME, Analysis, DatasetStore, SignOff

CSV = b"year,cod_t,ling_t\n" + b"".join(
    f"{y},{100 + 3 * (y - 1990) + y % 4},{50 + (y % 7)}\n".encode() for y in range(1990, 2020)
)
SETTINGS = {
    "transform": "log",
    "bench": {"horizon": 5, "search": "exhaustive", "max_p": 5},
    "model": "ARIMA(0,1,1) with drift",
    "reference": 812.5,
    "horizon": 5,
}


@pytest.fixture(scope="module")
def forecast_dict(nile) -> dict:
    """A forecast in the JSON contract's shape with real, many-digit floats.

    The numbers are statsmodels' ARIMA(0,1,1) forecast of the Nile flow (data shipped by
    statsmodels), computed here directly so the test does not depend on the core's search.
    """
    from statsmodels.tsa.arima.model import ARIMA

    fit = ARIMA(nile.to_numpy(), order=(0, 1, 1)).fit()
    fc_ = fit.get_forecast(5)
    rows = []
    for step, mean in enumerate(fc_.predicted_mean, start=1):
        intervals = {}
        for level in (50, 80, 95):
            lo, hi = fc_.conf_int(alpha=1 - level / 100)[step - 1]
            intervals[str(level)] = [float(lo), float(hi)]
        rows.append(
            {
                "time": str(1970 + step),
                "step": step,
                "mean": float(mean),
                "median": float(mean),
                "intervals": intervals,
                "prob_below_reference": None,
            }
        )
    return {
        "series": "nile",
        "frequency": "annual",
        "forecast": rows,
        "sigma2": float(fit.params[-1]),
    }


@pytest.fixture(scope="module")
def store(tmp_path_factory) -> DatasetStore:
    """One store for the module (each test makes its own analyses, so they do not meet)."""
    shared = DatasetStore(tmp_path_factory.mktemp("store"))
    yield shared
    shared.close()


@pytest.fixture(scope="module")
def dataset_id(store: DatasetStore) -> str:
    return store.save(CSV, "cod.csv")


@pytest.fixture
def draft(store: DatasetStore, dataset_id: str, forecast_dict: dict) -> Analysis:
    return store.save_analysis(
        dataset_id=dataset_id,
        series="cod_t",
        settings=SETTINGS,
        model="ARIMA(0,1,1) with drift",
        forecast=forecast_dict,
        author="Ana Ruiz",
        title="Cod landings 2020",
        season="2020",
    )


def _save(store: DatasetStore, dataset: str, **over) -> Analysis:
    fields = {
        "dataset_id": dataset,
        "series": "cod_t",
        "settings": {"horizon": 3},
        "model": "ARIMA(1,1,0)",
        "forecast": {"forecast": [{"mean": 1.0}]},
        "author": "Ana",
    }
    return store.save_analysis(**{**fields, **over})


# -- round trips ------------------------------------------------------------------------------


def test_a_saved_forecast_reopens_with_exactly_the_same_numbers(store, draft, forecast_dict):
    # reference: statsmodels' own forecast numbers, compared with ==, so every float must come
    # back bit for bit (Python's json writes the shortest repr that round-trips; Python docs,
    # "Floating Point Arithmetic", repr)
    reopened = DatasetStore(store.data_dir).get_analysis(draft.id)
    assert reopened.forecast == forecast_dict
    assert reopened.settings == SETTINGS
    assert reopened == draft
    assert [r["intervals"]["95"] for r in reopened.forecast["forecast"]] == [
        r["intervals"]["95"] for r in forecast_dict["forecast"]
    ]


@pytest.mark.parametrize(
    "value",
    [0.1 + 0.2, 1e-300, 5e-324, -0.0, 2**53 + 1, 1.7976931348623157e308, "Großer Fang ±5 %", None],
)
def test_awkward_values_survive_the_round_trip(store, dataset_id, value):
    saved = _save(store, dataset_id, settings={"v": value, "nested": [[value]]})
    again = store.get_analysis(saved.id)
    assert again.settings == {"v": value, "nested": [[value]]}
    if isinstance(value, float):
        assert repr(again.settings["v"]) == repr(value)  # -0.0 keeps its sign


def test_tuples_come_back_as_lists_as_json_has_no_tuples(store, dataset_id):
    saved = _save(store, dataset_id, settings={"order": (1, 1, 0)})
    assert saved.settings == {"order": [1, 1, 0]}
    assert store.get_analysis(saved.id) == saved


def test_a_new_draft_has_version_one_a_random_id_and_no_publication(draft):
    assert len(draft.id) == 32 and int(draft.id, 16) >= 0
    assert (draft.version, draft.parent_id, draft.status) == (1, None, "draft")
    assert draft.published_at is None and draft.published_by is None
    assert draft.signoffs == ()
    assert draft.created_at.endswith("+00:00")


def test_to_dict_is_json_and_a_copy(draft):
    out = draft.to_dict()
    assert json.loads(json.dumps(out, allow_nan=False)) == out
    out["settings"]["horizon"] = 99
    assert draft.settings["horizon"] == 5


# -- publishing, immutability, versions ---------------------------------------------------------


def test_publishing_sets_the_time_and_who(store, draft):
    published = store.publish(draft.id, author="Ben Ode")
    assert published.status == "published"
    assert published.published_by == "Ben Ode"
    assert published.published_at >= draft.created_at
    assert published.forecast == draft.forecast


def test_a_published_analysis_cannot_be_published_again(store, draft):
    store.publish(draft.id, author="Ben")
    with pytest.raises(
        fc.InputError,
        match=f"analysis {draft.id} is published and cannot be changed. Revise it to make a new",
    ):
        store.publish(draft.id, author="Cy")
    assert store.get_analysis(draft.id).published_by == "Ben"


@pytest.mark.parametrize(
    "sql",
    [
        "UPDATE analyses SET title = 'changed' WHERE id = ?",
        "UPDATE analyses SET forecast = '{}' WHERE id = ?",
        "UPDATE analyses SET status = 'draft', published_at = NULL WHERE id = ?",
        "DELETE FROM analyses WHERE id = ?",
        "UPDATE signoffs SET note = 'changed' WHERE analysis_id = ?",
        "DELETE FROM signoffs WHERE analysis_id = ?",
    ],
)
def test_sqlite_itself_refuses_to_change_a_published_analysis(store, draft, sql):
    store.publish(draft.id, author="Ben")
    store.add_signoff(draft.id, name="Dee", role="manager", note="agreed")
    before = store.get_analysis(draft.id)
    # a second, plain connection: the triggers hold even for code that bypasses the store
    conn = sqlite3.connect(store.data_dir / DB_NAME)
    try:
        with pytest.raises(sqlite3.IntegrityError, match="immutable"):
            conn.execute(sql, (draft.id,))
    finally:
        conn.close()
    assert store.get_analysis(draft.id) == before


def test_even_a_draft_keeps_its_content(store, draft):
    conn = sqlite3.connect(store.data_dir / DB_NAME)
    try:
        with pytest.raises(sqlite3.IntegrityError, match="immutable"):
            conn.execute("UPDATE analyses SET model = 'other' WHERE id = ?", (draft.id,))
    finally:
        conn.close()


def test_revising_makes_a_new_draft_linked_to_the_previous_one(store, draft):
    store.publish(draft.id, author="Ben")
    new = store.revise(draft.id, author="Cy", title="Cod landings 2020, revised", model="m2")
    assert (new.version, new.parent_id, new.status) == (2, draft.id, "draft")
    assert (new.title, new.model, new.author) == ("Cod landings 2020, revised", "m2", "Cy")
    assert new.forecast == draft.forecast and new.settings == draft.settings
    old = store.get_analysis(draft.id)
    assert (old.title, old.status, old.model) == (draft.title, "published", draft.model)


def test_versions_stay_unique_in_a_chain_even_when_an_old_version_is_revised(store, draft):
    v2 = store.revise(draft.id, author="Cy")
    v3 = store.revise(v2.id, author="Cy")
    sibling = store.revise(draft.id, author="Dee")  # revising v1 again
    assert [v2.version, v3.version, sibling.version] == [2, 3, 4]
    assert sibling.parent_id == draft.id
    assert [a.version for a in store.history(v3.id)] == [1, 2, 3, 4]
    assert [a.id for a in store.history(draft.id)] == [draft.id, v2.id, v3.id, sibling.id]


def test_a_new_analysis_may_name_its_parent(store, dataset_id, draft):
    child = _save(store, dataset_id, parent_id=draft.id)
    assert (child.version, child.parent_id) == (2, draft.id)


def test_revise_refuses_fields_it_cannot_change(store, draft):
    with pytest.raises(fc.InputError, match=r"revise can change dataset_id, .*Got status instead"):
        store.revise(draft.id, author="Cy", status="published")


# -- sign-offs --------------------------------------------------------------------------------


def test_sign_offs_are_kept_in_order_on_published_analyses(store, draft):
    store.publish(draft.id, author="Ben")
    store.add_signoff(draft.id, name="Dee Ola", role="stock lead", note="Bands checked.")
    signed = store.add_signoff(draft.id, name="Eli", role="manager", note="")
    assert [(s.name, s.role, s.note) for s in signed.signoffs] == [
        ("Dee Ola", "stock lead", "Bands checked."),
        ("Eli", "manager", ""),
    ]
    assert all(isinstance(s, SignOff) and s.signed_at.endswith("+00:00") for s in signed.signoffs)
    assert DatasetStore(store.data_dir).get_analysis(draft.id).signoffs == signed.signoffs


def test_a_draft_cannot_be_signed_off(store, draft):
    with pytest.raises(fc.InputError, match="is a draft; only published analyses can be signed"):
        store.add_signoff(draft.id, name="Dee", role="lead", note="")


@pytest.mark.parametrize(
    ("name", "role", "note"),
    [
        ("Dee Ola", "stock lead", ""),  # a double click: the second request has the note cleared
        ("Dee Ola", "stock lead", "Bands checked."),  # the same request sent twice
        ("dee ola", "Stock Lead", "again"),  # case does not make another person or role
    ],
)
def test_a_second_sign_off_with_the_same_name_and_role_is_refused(store, draft, name, role, note):
    store.publish(draft.id, author="Ben")
    store.add_signoff(draft.id, name="Dee Ola", role="stock lead", note="Bands checked.")
    with pytest.raises(
        fc.InputError, match="Dee Ola already signed off this analysis as stock lead"
    ):
        store.add_signoff(draft.id, name=name, role=role, note=note)
    assert len(store.get_analysis(draft.id).signoffs) == 1


def test_the_same_person_may_sign_off_in_another_role(store, draft):
    store.publish(draft.id, author="Ben")
    store.add_signoff(draft.id, name="Dee Ola", role="stock lead", note="")
    signed = store.add_signoff(draft.id, name="Dee Ola", role="manager", note="")
    assert [s.role for s in signed.signoffs] == ["stock lead", "manager"]


def test_a_note_keeps_its_line_breaks(store, draft):
    store.publish(draft.id, author="Ben")
    signed = store.add_signoff(draft.id, name="Dee", role="lead", note="line one\nline two")
    assert signed.signoffs[0].note == "line one\nline two"


# -- deleting drafts --------------------------------------------------------------------------


def test_an_author_can_delete_their_own_draft(store, draft):
    gone = store.delete_draft(draft.id, author="ana ruiz")  # the name, ignoring case
    assert gone == draft
    with pytest.raises(fc.InputError, match=f"analysis {draft.id} was not found"):
        store.get_analysis(draft.id)
    assert draft.id not in {a.id for a in store.list_analyses()}
    with pytest.raises(fc.InputError, match="was not found"):  # a second click finds nothing
        store.delete_draft(draft.id, author="Ana Ruiz")


def test_a_published_analysis_is_never_deleted(store, draft):
    store.publish(draft.id, author="Ana Ruiz")
    with pytest.raises(fc.InputError, match="is published, and published analyses are never"):
        store.delete_draft(draft.id, author="Ana Ruiz")
    assert store.get_analysis(draft.id).is_published


def test_someone_else_cannot_delete_a_draft(store, draft):
    with pytest.raises(
        fc.InputError,
        match=r"only the draft's author \(Ana Ruiz\) can delete it; you typed Ben\.",
    ):
        store.delete_draft(draft.id, author="Ben")
    assert store.get_analysis(draft.id) == draft


def test_a_draft_another_version_revises_is_kept_until_that_one_is_deleted(store, draft):
    v2 = store.revise(draft.id, author="Ana Ruiz", title="second try")
    with pytest.raises(fc.InputError, match="version 1 cannot be deleted while version 2 revises"):
        store.delete_draft(draft.id, author="Ana Ruiz")
    store.delete_draft(v2.id, author="Ana Ruiz")
    store.delete_draft(draft.id, author="Ana Ruiz")
    assert draft.id not in {a.id for a in store.list_analyses()}


def test_deleting_the_newest_draft_leaves_the_published_versions_and_their_sign_offs(store, draft):
    store.publish(draft.id, author="Ana Ruiz")
    store.add_signoff(draft.id, name="Dee", role="lead", note="")
    v2 = store.revise(draft.id, author="Ana Ruiz", title="next")
    store.delete_draft(v2.id, author="Ana Ruiz")
    assert [a.version for a in store.history(draft.id)] == [1]
    assert [s.name for s in store.get_analysis(draft.id).signoffs] == ["Dee"]
    # the chain goes on: the next revision takes the number that is free again
    assert store.revise(draft.id, author="Ana Ruiz").version == 2


@pytest.mark.parametrize(
    ("author", "message"),
    [("", "author must not be empty"), ("x" * 81, "author must be at most 80 characters")],
)
def test_a_delete_needs_a_name(store, draft, author, message):
    with pytest.raises(fc.InputError, match=message):
        store.delete_draft(draft.id, author=author)


# -- listing and search -----------------------------------------------------------------------


@pytest.fixture(scope="module")
def listing(tmp_path_factory):
    """A store of its own holding only the analyses the listing tests expect."""
    store = DatasetStore(tmp_path_factory.mktemp("listing"))
    dataset_id = store.save(CSV, "cod.csv")
    made = [
        _save(store, dataset_id, title="Cod 2020 first look", season="2020", author="Ana"),
        _save(store, dataset_id, series="ling_t", title="Ling", season="2021", author="Ben"),
        _save(store, dataset_id, title="Cod again", season="2021", author="Åsa Öberg"),
        _save(store, dataset_id, series="ling_t", model="ARIMA(2,0,0) with mean", author="Cy"),
    ]
    store.publish(made[1].id, author="Ben")
    store.publish(made[2].id, author="Ana")
    store.add_signoff(made[1].id, name="Dee", role="lead", note="ok")
    yield store, made
    store.close()


@pytest.mark.parametrize(
    ("kwargs", "expected"),
    [
        ({}, [3, 2, 1, 0]),  # newest first
        ({"status": "published"}, [2, 1]),
        ({"status": "draft"}, [3, 0]),
        ({"series": "ling_t"}, [3, 1]),
        ({"query": "cod"}, [2, 0]),  # title
        ({"query": "COD 2021"}, [2]),  # every word must match, case-insensitively
        ({"query": "2021"}, [2, 1]),  # season
        ({"query": "ben"}, [1]),  # author
        ({"query": "åsa"}, [2]),  # non-ASCII folding
        ({"query": "arima(2,0,0)"}, [3]),  # model
        ({"query": "ling_t"}, [3, 1]),  # series
        ({"query": "100%_"}, []),  # LIKE wildcards are plain characters
        ({"query": "   "}, [3, 2, 1, 0]),
        ({"query": "cod", "status": "published"}, [2]),
        ({"limit": 2}, [3, 2]),
    ],
)
def test_list_analyses_filters_and_orders_newest_first(listing, kwargs, expected):
    store, several = listing
    found = store.list_analyses(**kwargs)
    assert [a.id for a in found] == [several[i].id for i in expected]


def test_listed_analyses_carry_their_sign_offs(listing):
    store, several = listing
    listed = {a.id: a for a in store.list_analyses()}
    assert [s.name for s in listed[several[1].id].signoffs] == ["Dee"]
    assert listed[several[0].id].signoffs == ()


# -- plain messages for bad input -------------------------------------------------------------


@pytest.mark.parametrize(
    ("over", "message"),
    [
        ({"author": ""}, "author must not be empty. Enter your name"),
        ({"series": "cod_t "}, "series 'cod_t ' is not in dataset"),  # names match exactly
        ({"author": "   "}, "author must not be empty"),
        ({"author": "x" * 81}, "author must be at most 80 characters. Got 81 characters instead"),
        ({"author": 5}, "author must be text. Got int instead"),
        (
            {"series": "no_such"},
            r"series 'no_such' is not in dataset .*Its series are: cod_t, ling_t",
        ),
        ({"series": ""}, "series must not be empty"),
        ({"model": ""}, "model must not be empty"),
        ({"title": "t" * 201}, "title must be at most 200 characters"),
        ({"season": "s" * 41}, "season must be at most 40 characters"),
        ({"title": "a\x00b"}, "title must not contain control characters"),
        ({"settings": [1, 2]}, "settings must be a dictionary. Got list instead"),
        ({"settings": {"x": float("nan")}}, "settings must hold only finite numbers"),
        ({"forecast": {"x": float("inf")}}, "forecast must hold only finite numbers"),
        ({"settings": {"x": object()}}, "settings must hold only text, numbers"),
        ({"settings": {"x": "y" * 70_000}}, "settings must be at most 64 kB as JSON. Got 69 kB"),
        ({"dataset_id": "../etc"}, "dataset id must be 64 hexadecimal digits"),
        ({"dataset_id": "0" * 64}, "dataset 000000000000 was not found on this server"),
        ({"parent_id": "z" * 32}, "analysis id must be 32 hexadecimal digits"),
        ({"parent_id": "0" * 32}, f"analysis {'0' * 32} was not found on this server"),
    ],
)
def test_bad_fields_are_refused_with_a_plain_message(store, dataset_id, over, message):
    before = len(store.list_analyses())
    with pytest.raises(fc.InputError, match=message):
        _save(store, dataset_id, **over)
    assert len(store.list_analyses()) == before


def test_text_is_stripped_and_inner_whitespace_collapsed(store, dataset_id):
    saved = _save(store, dataset_id, title="  Cod\n  2020 \t", author=" Ana ")
    assert (saved.title, saved.author) == ("Cod 2020", "Ana")


@pytest.mark.parametrize(
    ("bad_id", "message"),
    [
        ("", "analysis id must be 32 hexadecimal digits"),
        ("../../etc/passwd", "analysis id must be 32 hexadecimal digits"),
        ("A" * 32, "analysis id must be 32 hexadecimal digits"),
        (None, "analysis id must be 32 hexadecimal digits"),
        ("f" * 32, f"analysis {'f' * 32} was not found on this server"),
    ],
)
@pytest.mark.parametrize(
    "method", ["get_analysis", "publish", "add_signoff", "revise", "history", "delete_draft"]
)
def test_unknown_and_malformed_ids_are_named(store, bad_id, message, method):
    kwargs = {"publish": {"author": "a"}, "revise": {"author": "a"}}.get(method, {})
    if method == "delete_draft":
        kwargs = {"author": "a"}
    if method == "add_signoff":
        kwargs = {"name": "a", "role": "b", "note": ""}
    with pytest.raises(fc.InputError, match=message):
        getattr(store, method)(bad_id, **kwargs)


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"status": "final"}, "status must be 'draft' or 'published'. Got 'final' instead"),
        ({"query": "q" * 201}, "query must be at most 200 characters"),
        ({"limit": 0}, "limit must be an integer from 1 to 10000. Got 0 instead"),
        ({"limit": True}, "limit must be an integer from 1 to 10000"),
    ],
)
def test_bad_list_arguments_are_refused(store, kwargs, message):
    with pytest.raises(fc.InputError, match=message):
        store.list_analyses(**kwargs)


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"name": "", "role": "lead"}, "name must not be empty"),
        ({"name": "Dee", "role": ""}, "role must not be empty"),
        ({"name": "Dee", "role": "lead", "note": "n" * 2001}, "note must be at most 2000"),
    ],
)
def test_bad_sign_offs_are_refused(store, draft, kwargs, message):
    store.publish(draft.id, author="Ben")
    with pytest.raises(fc.InputError, match=message):
        store.add_signoff(draft.id, **{"note": "", **kwargs})
    assert store.get_analysis(draft.id).signoffs == ()


_JSON_VALUES = st.recursive(
    st.none()
    | st.booleans()
    | st.integers(min_value=-(2**63), max_value=2**63)
    | st.floats(allow_nan=False, allow_infinity=False)
    | st.text(max_size=20),
    lambda inner: (
        st.lists(inner, max_size=4) | st.dictionaries(st.text(max_size=8), inner, max_size=4)
    ),
    max_leaves=20,
)


@settings(max_examples=25, deadline=None)
@given(payload=st.dictionaries(st.text(max_size=12), _JSON_VALUES, max_size=6))
def test_any_json_settings_come_back_equal(store, dataset_id, payload):
    # reference: Python's json module (json.loads(json.dumps(x)) == x for finite JSON values)
    saved = _save(store, dataset_id, settings=payload, forecast={"rows": [payload]})
    again = store.get_analysis(saved.id)
    assert again.settings == payload == json.loads(json.dumps(payload))
    assert again.forecast == {"rows": [payload]}


def test_a_store_locked_too_long_by_another_writer_says_so_plainly(tmp_path, monkeypatch):
    import app.store_db

    monkeypatch.setattr(app.store_db, "BUSY_TIMEOUT_MS", 50)
    store = DatasetStore(tmp_path)
    dataset_id = store.save(CSV, "cod.csv")
    other = sqlite3.connect(tmp_path / DB_NAME, isolation_level=None)
    other.execute("BEGIN IMMEDIATE")  # another process holding the write lock
    try:
        with pytest.raises(fc.InputError, match="the store is busy .* Nothing was saved"):
            _save(store, dataset_id)
    finally:
        other.execute("ROLLBACK")
        other.close()
    assert _save(store, dataset_id).version == 1  # and it works again once the lock is gone
    assert len(store.list_analyses()) == 1
    store.close()
