"""Who sees what: with keys on, each key sees and changes only its own scenarios unless one is
shared; another key's private scenario answers 404 (never 403), so its id cannot be probed;
keys are stored only as hashes."""

from __future__ import annotations

import copy

from sqlalchemy import MetaData, create_engine, select

from service.examples import example_request
from service.library import database_url, owner_hash

from .conftest import KEY_A, KEY_B, bearer

REQUEST = dict(copy.deepcopy(example_request("quillbrook-rent-freeze")), horizon=3)


def _save(client, key, name, shared=False):
    body = {"name": name, "tags": ["team"], "shared": shared, "request": REQUEST}
    response = client.post("/v1/scenarios", json=body, headers=bearer(key))
    assert response.status_code == 201, response.get_json()
    return response.get_json()


def _change(client, key, record):
    headers = {**bearer(key), "If-Match": f'"{record["id"]}.{record["revision"]}"'}
    body = {"name": "taken over", "request": REQUEST}
    return client.put(f"/v1/scenarios/{record['id']}", json=body, headers=headers)


def test_another_keys_private_scenario_does_not_exist_for_it(make_client):
    client = make_client(api_keys=f"{KEY_A},{KEY_B}")
    private = _save(client, KEY_A, "A's draft")
    base = f"/v1/scenarios/{private['id']}"
    for path in (base, base + "/paths", base + "?revision=1"):
        response = client.get(path, headers=bearer(KEY_B))
        assert response.status_code == 404
        unknown = client.get(path.replace(private["id"], "x" * 22), headers=bearer(KEY_B))
        assert response.get_json() == unknown.get_json()  # nothing tells the two apart
    assert _change(client, KEY_B, private).status_code == 404
    assert client.delete(base, headers=bearer(KEY_B)).status_code == 404
    assert client.get("/v1/scenarios", headers=bearer(KEY_B)).get_json()["scenarios"] == []
    assert client.get(base, headers=bearer(KEY_A)).get_json()["name"] == "A's draft"
    assert client.get(base).status_code == 401  # no key at all


def test_a_shared_scenario_is_read_by_every_key_and_changed_only_by_its_owner(make_client):
    client = make_client(api_keys=f"{KEY_A},{KEY_B}")
    shared = _save(client, KEY_A, "Briefing", shared=True)
    own = _save(client, KEY_B, "B's own")
    base = f"/v1/scenarios/{shared['id']}"
    read = client.get(base, headers=bearer(KEY_B)).get_json()
    assert read["name"] == "Briefing" and read["mine"] is False
    assert client.get(base + "/paths", headers=bearer(KEY_B)).status_code == 200
    listed = client.get("/v1/scenarios", headers=bearer(KEY_B)).get_json()["scenarios"]
    assert [(r["name"], r["mine"]) for r in listed] == [("B's own", True), ("Briefing", False)]
    assert _change(client, KEY_B, shared).status_code == 403
    assert client.delete(base, headers=bearer(KEY_B)).status_code == 403
    assert [
        r["name"] for r in client.get("/v1/scenarios", headers=bearer(KEY_A)).get_json()["scenarios"]
    ] == ["Briefing"]
    # The owner takes the sharing back: the other key no longer finds it.
    unshared = _change(client, KEY_A, shared)
    assert unshared.status_code == 200 and unshared.get_json()["shared"] is False
    assert client.get(base, headers=bearer(KEY_B)).status_code == 404
    assert client.get(f"/v1/scenarios/{own['id']}", headers=bearer(KEY_A)).status_code == 404


def test_keys_are_stored_only_as_hashes(make_client, database):
    client = make_client(api_keys=f"{KEY_A},{KEY_B}")
    _save(client, KEY_A, "A's", shared=True)
    _save(client, KEY_B, "B's")
    url = database_url(database.get("database_url", ""), database.get("library_path", ""))
    engine = create_engine(url)
    dumped = []
    with engine.connect() as connection:
        metadata = MetaData()
        metadata.reflect(connection)
        for table in metadata.sorted_tables:
            dumped += [str(v) for row in connection.execute(select(table)) for v in row]
        owners = {row[0] for row in connection.execute(select(metadata.tables["library_owners"].c.owner))}
    engine.dispose()
    text = "\n".join(dumped)
    assert KEY_A not in text and KEY_B not in text
    assert KEY_A[:16] not in text
    assert owners == {owner_hash(KEY_A), owner_hash(KEY_B)}


def test_without_keys_there_is_one_owner(make_client):
    client = make_client()
    record = _save(client, "", "local")
    assert client.get(f"/v1/scenarios/{record['id']}").get_json()["mine"] is True
    # Turning keys on later: the keyless owner's records belong to no key.
    keyed = make_client(api_keys=KEY_A)
    assert keyed.get(f"/v1/scenarios/{record['id']}", headers=bearer(KEY_A)).status_code == 404


def test_units_are_seen_only_by_whoever_may_see_the_record(make_client):
    client = make_client(api_keys=f"{KEY_A},{KEY_B}")
    units = {"currency": "pounds", "period": "year"}
    body = {"name": "A's draft", "units": units, "request": REQUEST}
    private = client.post("/v1/scenarios", json=body, headers=bearer(KEY_A)).get_json()
    shared = client.post(
        "/v1/scenarios", json={**body, "name": "A's briefing", "shared": True}, headers=bearer(KEY_A)
    ).get_json()
    # The other key: the private one does not exist for it, the shared one reads with its units.
    assert client.get(f"/v1/scenarios/{private['id']}", headers=bearer(KEY_B)).status_code == 404
    listed = client.get("/v1/scenarios", headers=bearer(KEY_B)).get_json()["scenarios"]
    assert [(r["name"], r["units"]) for r in listed] == [("A's briefing", units)]
    assert client.get(f"/v1/scenarios/{shared['id']}", headers=bearer(KEY_B)).get_json()["units"] == units
    # It cannot relabel A's records: 403 on the shared one, 404 on the private one.
    headers = {**bearer(KEY_B), "If-Match": f'"{shared["id"]}.1"'}
    relabel = {"name": "A's briefing", "units": {"currency": "euros"}, "request": REQUEST}
    assert client.put(f"/v1/scenarios/{shared['id']}", json=relabel, headers=headers).status_code == 403
    headers["If-Match"] = f'"{private["id"]}.1"'
    assert client.put(f"/v1/scenarios/{private['id']}", json=relabel, headers=headers).status_code == 404
    for record in (private, shared):
        kept = client.get(f"/v1/scenarios/{record['id']}", headers=bearer(KEY_A)).get_json()
        assert kept["revision"] == 1 and kept["units"] == units
