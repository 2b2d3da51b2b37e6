"""A key rotated out does not strand what it saved: `python -m service.library transfer` (the
old key, then the new, on standard input) gives its scenarios to the key that replaces it, in one
transaction, counts and all; the old key then sees only what is shared."""

from __future__ import annotations

import copy
import io
import sys

import pytest

from service.examples import example_request
from service.library.__main__ import main

from .conftest import KEY_A, KEY_B, bearer

REQUEST = dict(copy.deepcopy(example_request("quillbrook-rent-freeze")), horizon=3)
KEY_NEW = "key-that-replaces-a-0123456789"


def _save(client, key, name, shared=False):
    body = {"name": name, "tags": ["team"], "shared": shared, "request": REQUEST}
    response = client.post("/v1/scenarios", json=body, headers=bearer(key) if key else {})
    assert response.status_code == 201, response.get_json()
    return response.get_json()


def _transfer(monkeypatch, capsys, database, text: str) -> tuple[int, str]:
    for name in ("SHOCKPATH_DATABASE_URL", "SHOCKPATH_LIBRARY_PATH"):
        monkeypatch.delenv(name, raising=False)
    if "database_url" in database:
        monkeypatch.setenv("SHOCKPATH_DATABASE_URL", database["database_url"])
    else:
        monkeypatch.setenv("SHOCKPATH_LIBRARY_PATH", database["library_path"])
    monkeypatch.setattr(sys, "stdin", io.StringIO(text))
    code = main(["transfer"])
    return code, capsys.readouterr()


def test_a_rotated_keys_scenarios_move_to_the_key_that_replaces_it(
    make_client, database, monkeypatch, capsys
):
    client = make_client(api_keys=f"{KEY_A},{KEY_B},{KEY_NEW}", library_max_records=3)
    drafts = [_save(client, KEY_A, f"A's draft {i}") for i in range(2)]
    shared = _save(client, KEY_A, "A's shared plan", shared=True)
    _save(client, KEY_B, "B's own")
    _save(client, KEY_NEW, "the new key's own")
    assert client.get(f"/v1/scenarios/{drafts[0]['id']}", headers=bearer(KEY_NEW)).status_code == 404

    code, printed = _transfer(monkeypatch, capsys, database, f"{KEY_A}\n{KEY_NEW}\n")
    assert code == 0 and printed.out.strip() == "3 scenario(s) moved to the new key"
    assert KEY_A not in printed.out + printed.err and KEY_NEW not in printed.out + printed.err

    for record in (*drafts, shared):
        response = client.get(f"/v1/scenarios/{record['id']}", headers=bearer(KEY_NEW))
        assert response.status_code == 200 and response.get_json()["name"] == record["name"]
    # The old key keeps only what everyone sees; the other key's view is unchanged.
    assert client.get(f"/v1/scenarios/{drafts[0]['id']}", headers=bearer(KEY_A)).status_code == 404
    assert client.get(f"/v1/scenarios/{shared['id']}", headers=bearer(KEY_A)).status_code == 200
    assert client.get(f"/v1/scenarios/{drafts[1]['id']}", headers=bearer(KEY_B)).status_code == 404
    # The new key holds 4 with a limit of 3: nothing is dropped, it only cannot save more...
    full = client.post(
        "/v1/scenarios", json={"name": "one more", "request": REQUEST}, headers=bearer(KEY_NEW)
    )
    assert full.status_code == 422 and full.get_json()["type"].endswith("library-full")
    # ... until it deletes; and the old key's count went with its scenarios.
    for record in drafts:
        headers = {**bearer(KEY_NEW), "If-Match": f'"{record["id"]}.{record["revision"]}"'}
        assert client.delete(f"/v1/scenarios/{record['id']}", headers=headers).status_code == 204
    assert _save(client, KEY_NEW, "room again")["name"] == "room again"
    for i in range(3):
        _save(client, KEY_A, f"A starts afresh {i}")


@pytest.mark.parametrize("text", ["", "only-one-key-0123456789\n", "a\nb\nc\n", "old-key-0123456789\n\n"])
def test_transfer_wants_exactly_two_keys_and_moves_nothing_otherwise(
    make_client, database, monkeypatch, capsys, text
):
    client = make_client(api_keys=f"{KEY_A},{KEY_NEW}")
    draft = _save(client, KEY_A, "A's draft")
    code, printed = _transfer(monkeypatch, capsys, database, text)
    assert code == 2 and "one per line" in printed.err
    assert client.get(f"/v1/scenarios/{draft['id']}", headers=bearer(KEY_A)).status_code == 200


def test_scenarios_saved_before_keys_were_turned_on_go_to_a_key(make_client, database, monkeypatch, capsys):
    before = _save(make_client(), None, "saved with no keys configured")
    client = make_client(api_keys=KEY_A)
    assert client.get(f"/v1/scenarios/{before['id']}", headers=bearer(KEY_A)).status_code == 404
    code, printed = _transfer(monkeypatch, capsys, database, f"\n{KEY_A}\n")
    assert code == 0 and printed.out.startswith("1 scenario(s) moved")
    assert client.get(f"/v1/scenarios/{before['id']}", headers=bearer(KEY_A)).status_code == 200
