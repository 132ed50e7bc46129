"""The delete-draft callbacks of the board and the home page, called as Dash would call them:
every input a user (or a hand-made request) can get wrong gets a plain message in the page,
nothing else changes, and a real deletion hands the board a selection naming no analysis.

The callback modules are imported only after ``create_app`` (see the fixtures): a module with
``dash.callback`` registrations imported earlier would leave them in Dash's process-wide list,
where the first app to serve a request takes them, instead of with every app
(``app._page_callbacks``).
"""

from __future__ import annotations

import json

import pytest

from app import create_app, saved
from app.state import update_selection

CSV = b"year,cod_t\n" + b"".join(
    f"{y},{100 + 3 * (y - 1990) + y % 4}\n".encode() for y in range(1990, 2020)
)


@pytest.fixture(scope="module")
def app(tmp_path_factory):
    return create_app(
        {
            "DATA_DIR": str(tmp_path_factory.mktemp("data")),
            "CACHE_TYPE": "SimpleCache",
            "LOAD_SAMPLES": False,
        }
    )


@pytest.fixture
def store(app):
    return app.server.extensions["haulcast"]["store"]


@pytest.fixture
def board_delete(app):
    from app import board_delete

    return board_delete


@pytest.fixture
def home_delete(app):
    from app import home_delete

    return home_delete


def _saved(store, *, publish: bool = False, author: str = "Ana"):
    dataset = store.save(CSV, "cod.csv")
    a = store.save_analysis(
        dataset_id=dataset,
        series="cod_t",
        settings={"horizon": 3},
        model="ARIMA(0,1,1)",
        forecast={"forecast": [{"time": "2020", "mean": 1.5}]},
        author=author,
        title="Cod <b>draft</b>",
    )
    return store.publish(a.id, author=author) if publish else a


def _text(component) -> str:
    return json.dumps(component.to_plotly_json(), default=str) if component is not None else ""


@pytest.mark.parametrize(
    ("target", "name", "message"),
    [
        ("../../etc/passwd", "Ana", "analysis id must be 32 hexadecimal digits"),
        ("f" * 32, "Ana", "was not found on this server"),
        ("draft", "", "Your name is needed"),
        ("draft", "Ben", "only the draft's author (Ana) can delete it; you typed Ben."),
        ("published", "Ana", "published analyses are never deleted"),
    ],
)
def test_home_delete_answers_every_bad_request_plainly(
    app, store, home_delete, target, name, message
):
    ids = {"draft": _saved(store).id, "published": _saved(store, publish=True).id}
    target = ids.get(target, target)
    with app.server.test_request_context():
        style, msg, refresh = home_delete.delete(1, name, target, 3)
    assert message in _text(msg) and "Check this" in _text(msg)
    assert refresh is style  # both no_update: the list and the confirm step stay as they were
    assert store.get_analysis(ids["draft"]).status == "draft"


def test_home_delete_removes_the_draft_and_redraws_the_list(app, store, home_delete):
    draft = _saved(store)
    with app.server.test_request_context():
        style, msg, refresh = home_delete.delete(1, " ana ", draft.id, 3)
    assert style == {"display": "none"} and refresh == 4
    assert "Deleted the draft" in _text(msg) and "Cod <b>draft</b>" in _text(msg)  # text, as data
    assert draft.id not in {a.id for a in store.list_analyses()}


def test_board_delete_gives_the_board_a_selection_naming_no_analysis(app, store, board_delete):
    draft = _saved(store)
    opened = {"id": draft.id, "selection": saved.selection_from_analysis(draft), "tick": 0}
    with app.server.test_request_context():
        new_open, msg, style = board_delete.delete(1, "Ana", None, opened)
    assert new_open["id"] is None and new_open["deleted"] == draft.id
    sel = new_open["selection"]
    assert sel["analysis"] is None
    assert (sel["dataset_id"], sel["series"]) == (draft.dataset_id, "cod_t")  # same forecast
    assert "not saved now; save it again to keep it" in _text(msg)
    assert style == {"display": "none"}


@pytest.mark.parametrize(
    ("which", "message"),
    [
        (None, "no saved draft is open on the board"),
        ("published", "published analyses are never deleted"),
        ("bad", "no saved draft is open on the board"),  # a malformed id names nothing
    ],
)
def test_board_delete_refuses_what_is_not_a_saved_draft(app, store, board_delete, which, message):
    data = update_selection(None)
    if which == "published":
        data["analysis"] = _saved(store, publish=True).id
    elif which == "bad":
        data["analysis"] = "0" * 31 + "G"
    with app.server.test_request_context():
        new_open, msg, style = board_delete.delete(1, "Ana", data, None)
        asked = board_delete.ask(1, data, None)
    assert message in _text(msg) and message in _text(asked[2])
    assert new_open is style  # no_update


def test_the_confirm_question_names_the_draft_and_its_author(store, board_delete):
    draft = _saved(store)
    text = board_delete.question(draft)
    assert text.startswith("Delete version 1 of \u201cCod <b>draft</b>\u201d (a draft saved by Ana")
    assert text.endswith("The forecast stays on the board, unsaved.")
    assert "board" not in board_delete.question(draft, on_board=False)


def test_board_refuses_a_revised_draft_at_once_before_any_confirm(app, store, board_delete):
    # the store keeps a draft that a later version revises (store_analyses.delete_draft);
    # the board says so on the first click, not after the confirm step
    draft = _saved(store)
    store.revise(draft.id, author="Ana", title="second try")
    opened = {"id": draft.id, "selection": saved.selection_from_analysis(draft), "tick": 0}
    assert board_delete.revised_by(store, draft) == 2
    with app.server.test_request_context():
        style, question, msg = board_delete.ask(1, None, opened)
    text = _text(msg)
    assert "version 1 cannot be deleted while version 2 revises it" in text
    assert "Delete version 2 first" in text
    assert style is question  # both no_update: no confirm step is shown


def test_home_list_offers_no_delete_on_a_draft_a_later_version_revises(store):
    from app.pages import home

    draft = _saved(store)
    v2 = store.revise(draft.id, author="Ana", title="second try")
    older = _text(home._status(store.get_analysis(draft.id), 2))
    newest = _text(home._status(v2))
    assert "home-delete" not in older and "delete the later versions first" in older
    assert "home-delete" in newest


def test_a_repeated_sign_off_says_it_is_already_recorded(app, store, monkeypatch):
    from app import board_saved

    # a repeat later than a double click's second request (board_saved.REPEAT_SECONDS)
    monkeypatch.setattr(board_saved, "REPEAT_SECONDS", 0.0)
    a = _saved(store, publish=True)
    opened = {"id": a.id, "selection": saved.selection_from_analysis(a), "tick": 0}
    with app.server.test_request_context():
        board_saved.sign_off(1, "Mona Ger", "manager", "", None, opened)
        out = board_saved.sign_off(1, "mona ger", "Manager", "", None, opened)
    assert "Mona Ger (manager) has already signed off this version." in _text(out[2])
    assert "Signed off by" not in _text(out[2])
    assert len(store.get_analysis(a.id).signoffs) == 1


def test_the_second_click_of_a_double_click_is_answered_as_the_first(app, store):
    from app import board_saved

    a = _saved(store, publish=True)
    opened = {"id": a.id, "selection": saved.selection_from_analysis(a), "tick": 0}
    with app.server.test_request_context():
        first = board_saved.sign_off(1, "Mona Ger", "manager", "", None, opened)
        second = board_saved.sign_off(1, "Mona Ger", "manager", "", None, opened)
    assert "Signed off by Mona Ger (manager)." in _text(first[2])
    assert "Signed off by Mona Ger (manager)." in _text(second[2])
    assert len(store.get_analysis(a.id).signoffs) == 1
