"""Saving, listing, reading, revising and deleting scenarios, and running them, on SQLite and
on PostgreSQL: facts an analyst relies on when a briefing's numbers are questioned later."""

from __future__ import annotations

import copy

import pytest
from sqlalchemy import create_engine, update

from service import limits
from service.examples import example_request
from service.library import database_url
from service.library.models import Revision

FREEZE = example_request("quillbrook-rent-freeze")
UNCERTAIN = example_request("quillbrook-uncertain-elasticities")


def short(request, **changes):
    out = copy.deepcopy(request)
    out.update({"horizon": 3, **changes})
    return out


def save(client, name="Quillbrook freeze", request=None, **fields):
    body = {"name": name, "request": short(FREEZE) if request is None else request, **fields}
    response = client.post("/v1/scenarios", json=body)
    assert response.status_code == 201, response.get_json()
    return response


def put(client, record, headers=None, **fields):
    body = {"name": record["name"], "request": record["request"], **fields}
    tag = {"If-Match": f'"{record["id"]}.{record["revision"]}"'}
    return client.put(f"/v1/scenarios/{record['id']}", json=body, headers=tag if headers is None else headers)


def test_a_saved_scenario_holds_its_request_id_version_time_and_revision(library_client):
    request = short(FREEZE)
    response = save(library_client, notes="March briefing", tags=["Briefing", " freeze", "briefing"])
    record = response.get_json()
    assert response.headers["Location"] == f"/v1/scenarios/{record['id']}"
    assert response.headers["ETag"] == f'"{record["id"]}.1"'
    assert len(record["id"]) >= 22  # 16 random bytes, URL-safe
    assert record["revision"] == record["latest_revision"] == 1
    assert record["tags"] == ["briefing", "freeze"]  # lower case, each once, in order
    assert record["kind"] == "paths" and record["mine"] is True and record["shared"] is False
    assert record["created_at"].endswith("Z") and record["created_at"] == record["revised_at"]
    computed = library_client.post("/v1/paths", json=request).get_json()
    assert record["scenario_id"] == computed["scenario_id"]
    assert record["model_version"] == computed["model_version"]
    assert record["request"] == request
    assert list(record["request"]) == sorted(record["request"])  # normalised: keys sorted
    again = library_client.get(record["links"]["self"])
    assert again.status_code == 200 and again.get_json() == record


def test_ids_are_random_and_distinct(library_client):
    ids = {save(library_client, name=f"s{i}").get_json()["id"] for i in range(5)}
    assert len(ids) == 5


def test_a_bands_request_is_saved_as_bands_with_the_id_of_its_answer(library_client):
    request = short(UNCERTAIN, draws=200)
    record = save(library_client, request=request).get_json()
    assert record["kind"] == "bands"
    answer = library_client.post("/v1/bands", json=request)
    assert record["scenario_id"] == answer.get_json()["scenario_id"]
    run = library_client.get(f"/v1/scenarios/{record['id']}/bands")
    assert run.status_code == 200 and run.headers["ETag"] == answer.headers["ETag"]
    assert run.get_json() == answer.get_json()
    wrong = library_client.get(f"/v1/scenarios/{record['id']}/paths")
    assert wrong.status_code == 409 and record["links"]["compute"] in wrong.get_json()["detail"]


def test_a_saved_scenario_runs_exactly_as_post_paths_answers_it(library_client):
    request = short(FREEZE)
    record = save(library_client, request=request).get_json()
    direct = library_client.post("/v1/paths", json=request)
    run = library_client.get(f"/v1/scenarios/{record['id']}/paths")
    assert run.status_code == 200
    assert run.get_data() == direct.get_data() and run.headers["ETag"] == direct.headers["ETag"]
    assert run.headers["Scenario-Model-Version"] == record["model_version"]
    assert run.headers["Model-Version-Changed"] == "false"
    csv_run = library_client.get(f"/v1/scenarios/{record['id']}/paths", headers={"Accept": "text/csv"})
    csv_direct = library_client.post("/v1/paths", json=request, headers={"Accept": "text/csv"})
    assert csv_run.mimetype == "text/csv" and csv_run.get_data() == csv_direct.get_data()
    assert csv_run.headers["ETag"] == csv_direct.headers["ETag"]
    unchanged = library_client.get(
        f"/v1/scenarios/{record['id']}/paths", headers={"If-None-Match": run.headers["ETag"]}
    )
    assert unchanged.status_code == 304
    refused = library_client.get(f"/v1/scenarios/{record['id']}/paths", headers={"Accept": "image/png"})
    assert refused.status_code == 406


def test_a_scenario_saved_under_another_model_version_says_so(library_client, database):
    record = save(library_client).get_json()
    engine = create_engine(database_url(database.get("database_url", ""), database.get("library_path", "")))
    with engine.begin() as connection:
        connection.execute(update(Revision).values(model_version="0.9.0"))
    engine.dispose()
    run = library_client.get(f"/v1/scenarios/{record['id']}/paths")
    assert run.headers["Scenario-Model-Version"] == "0.9.0"
    assert run.headers["Model-Version-Changed"] == "true"
    assert run.get_json()["model_version"] == record["model_version"]  # the running model answers


def test_a_revision_keeps_the_old_one_readable(library_client):
    first = save(library_client, tags=["draft"]).get_json()
    changed = short(FREEZE, horizon=5)
    response = put(library_client, first, request=changed, tags=["final"], notes="after review")
    assert response.status_code == 200, response.get_json()
    second = response.get_json()
    assert second["revision"] == 2 and second["id"] == first["id"]
    assert response.headers["ETag"] == f'"{first["id"]}.2"'
    assert second["created_at"] == first["created_at"] and second["revised_at"] > first["revised_at"]
    assert library_client.get(f"/v1/scenarios/{first['id']}").get_json()["request"]["horizon"] == 5
    old = library_client.get(f"/v1/scenarios/{first['id']}?revision=1").get_json()
    assert old["request"] == first["request"] and old["tags"] == ["draft"] and old["latest_revision"] == 2
    assert old["links"]["self"].endswith("?revision=1")
    old_run = library_client.get(f"/v1/scenarios/{first['id']}/paths?revision=1").get_json()
    assert len(old_run["periods"]) == 4
    assert library_client.get(f"/v1/scenarios/{first['id']}?revision=3").status_code == 404
    assert library_client.get(f"/v1/scenarios/{first['id']}?revision=x").status_code == 422
    tagged = library_client.get("/v1/scenarios?tag=final").get_json()["scenarios"]
    assert [r["id"] for r in tagged] == [first["id"]]
    assert library_client.get("/v1/scenarios?tag=draft").get_json()["scenarios"] == []


def test_a_change_needs_the_etag_of_the_revision_it_starts_from(library_client):
    record = save(library_client).get_json()
    missing = put(library_client, record, headers={})
    assert missing.status_code == 428 and missing.mimetype == "application/problem+json"
    assert put(library_client, record, notes="mine").status_code == 200
    stale = put(library_client, record, notes="theirs")  # still revision 1's tag
    assert stale.status_code == 412 and stale.headers["ETag"] == f'"{record["id"]}.2"'
    weak = put(library_client, record, headers={"If-Match": f'W/"{record["id"]}.2"'})
    assert weak.status_code == 412  # If-Match compares strongly
    now = library_client.get(f"/v1/scenarios/{record['id']}").get_json()
    assert now["notes"] == "mine" and now["revision"] == 2
    star = put(library_client, now, headers={"If-Match": "*"}, notes="whatever is there")
    assert star.status_code == 200 and star.get_json()["revision"] == 3
    gone = library_client.delete(f"/v1/scenarios/{record['id']}", headers={"If-Match": f'"{record["id"]}.2"'})
    assert gone.status_code == 412
    deleted = library_client.delete(f"/v1/scenarios/{record['id']}")
    assert deleted.status_code == 204 and deleted.data == b""
    assert "Content-Type" not in deleted.headers  # no content, so no type of content
    assert library_client.get(f"/v1/scenarios/{record['id']}").status_code == 404
    assert library_client.get(f"/v1/scenarios/{record['id']}?revision=1").status_code == 404
    assert library_client.delete(f"/v1/scenarios/{record['id']}").status_code == 404


def test_get_answers_if_none_match_with_304(library_client):
    response = save(library_client)
    again = library_client.get(
        response.headers["Location"], headers={"If-None-Match": response.headers["ETag"]}
    )
    assert again.status_code == 304


@pytest.mark.parametrize("record_id", ["no-such-id", "a" * 64, "a" * 65, "..", "%00", "x y"])
def test_an_unknown_id_is_404_everywhere(library_client, record_id):
    for path in ("", "/paths", "/bands"):
        response = library_client.get(f"/v1/scenarios/{record_id}{path}")
        assert response.status_code == 404, (record_id, path)
        assert response.mimetype == "application/problem+json"
    body = {"name": "x", "request": short(FREEZE)}
    assert (
        library_client.put(f"/v1/scenarios/{record_id}", json=body, headers={"If-Match": "*"}).status_code
        == 404
    )
    assert library_client.delete(f"/v1/scenarios/{record_id}").status_code == 404


def test_the_list_filters_by_name_and_tag_and_pages_with_a_cursor(library_client):
    names = [f"Quillbrook {i}" if i % 2 else f"Essvane_{i}%" for i in range(7)]
    for i, name in enumerate(names):
        save(library_client, name=name, tags=["even"] if i % 2 == 0 else ["odd", "quill"])
    everything = library_client.get("/v1/scenarios").get_json()
    assert [r["name"] for r in everything["scenarios"]] == names[::-1]  # newest first
    assert everything["next_cursor"] is None and "request" not in everything["scenarios"][0]
    quill = library_client.get("/v1/scenarios?name=QUILLBROOK").get_json()["scenarios"]
    assert [r["name"] for r in quill] == [n for n in names[::-1] if n.startswith("Quill")]
    # % and _ are searched as themselves, not as SQL wildcards.
    assert len(library_client.get("/v1/scenarios?name=_4%25").get_json()["scenarios"]) == 1
    assert library_client.get("/v1/scenarios?name=e_v").get_json()["scenarios"] == []
    both = library_client.get("/v1/scenarios?tag=odd&tag=QUILL").get_json()["scenarios"]
    assert len(both) == 3
    assert library_client.get("/v1/scenarios?tag=odd&tag=even").get_json()["scenarios"] == []
    seen, cursor = [], None
    while True:
        query = "/v1/scenarios?limit=3" + (f"&cursor={cursor}" if cursor else "")
        page = library_client.get(query).get_json()
        assert len(page["scenarios"]) <= 3
        seen += [r["name"] for r in page["scenarios"]]
        cursor = page["next_cursor"]
        if cursor is None:
            break
    assert seen == names[::-1]


@pytest.mark.parametrize(
    ("query", "pointer"),
    [
        ("limit=0", "/limit"),
        ("limit=101", "/limit"),
        ("limit=ten", "/limit"),
        ("cursor=not-a-cursor", "/cursor"),
        ("name=" + "n" * (limits.MAX_SCENARIO_NAME_LENGTH + 1), "/name"),
        ("tag=" + "t" * (limits.MAX_SCENARIO_TAG_LENGTH + 1), "/tag/0"),
        ("&".join(f"tag=t{i}" for i in range(limits.MAX_SCENARIO_TAGS + 1)), "/tag"),
    ],
)
def test_bad_list_parameters_are_422_with_a_pointer(library_client, query, pointer):
    response = library_client.get(f"/v1/scenarios?{query}")
    assert response.status_code == 422
    assert [e["pointer"] for e in response.get_json()["errors"]] == [pointer]


def test_the_request_is_validated_exactly_as_post_paths_validates_it(library_client):
    bad = short(FREEZE)
    bad["market"]["price"] = -3
    bad["policies"][0]["colour"] = "blue"
    direct = library_client.post("/v1/paths", json=bad).get_json()
    saved = library_client.post("/v1/scenarios", json={"name": "x", "request": bad})
    assert saved.status_code == 422
    expected = [dict(e, pointer="/request" + e["pointer"]) for e in direct["errors"]]
    assert saved.get_json()["errors"] == expected
    # What the engine refuses is refused too, at the same field.
    choke = short(FREEZE)
    choke["policies"] = [{"name": "levy", "kind": "unit_tax", "amount": 1e6}]
    engine_says = library_client.post("/v1/paths", json=choke).get_json()
    refused = library_client.post("/v1/scenarios", json={"name": "x", "request": choke})
    assert refused.status_code == 422
    assert refused.get_json()["errors"][0]["pointer"] == "/request" + engine_says["errors"][0]["pointer"]
    bands_bad = short(UNCERTAIN, draws=0)
    bands_direct = library_client.post("/v1/bands", json=bands_bad).get_json()
    bands_saved = library_client.post("/v1/scenarios", json={"name": "x", "request": bands_bad}).get_json()
    assert bands_saved["errors"] == [
        dict(e, pointer="/request" + e["pointer"]) for e in bands_direct["errors"]
    ]
    assert library_client.get("/v1/scenarios").get_json()["scenarios"] == []  # nothing stored


LONG = "n" * (limits.MAX_SCENARIO_NAME_LENGTH + 1)


@pytest.mark.parametrize(
    ("change", "pointer"),
    [
        ({"name": LONG}, "/name"),
        ({"name": "   "}, "/name"),
        ({"name": 7}, "/name"),
        ({"name": "line\nbreak"}, "/name"),
        ({"notes": "x" * (limits.MAX_SCENARIO_NOTES_LENGTH + 1)}, "/notes"),
        ({"notes": "nul\u0000"}, "/notes"),
        ({"tags": [f"t{i}" for i in range(limits.MAX_SCENARIO_TAGS + 1)]}, "/tags"),
        ({"tags": ["ok", "t" * (limits.MAX_SCENARIO_TAG_LENGTH + 1)]}, "/tags/1"),
        ({"tags": "briefing"}, "/tags"),
        ({"shared": "yes"}, "/shared"),
        ({"request": [1]}, "/request"),
        ({"owner": "someone"}, "/owner"),
    ],
)
def test_write_limits_and_types_are_422_at_their_pointer(library_client, change, pointer):
    body = {"name": "x", "request": short(FREEZE), **change}
    response = library_client.post("/v1/scenarios", json=body)
    assert response.status_code == 422
    assert pointer in [e["pointer"] for e in response.get_json()["errors"]]


def test_an_owner_keeps_at_most_the_configured_number_of_records(make_client):
    client = make_client(library_max_records=3)
    kept = [save(client, name=f"s{i}").get_json() for i in range(3)]
    full = client.post("/v1/scenarios", json={"name": "one more", "request": short(FREEZE)})
    assert full.status_code == 422 and full.get_json()["errors"][0]["pointer"] == ""
    assert full.get_json()["type"].endswith("library-full")
    assert client.delete(f"/v1/scenarios/{kept[0]['id']}").status_code == 204
    save(client, name="room again")


def test_a_record_reaches_at_most_the_configured_number_of_revisions(make_client):
    client = make_client(library_max_revisions=2)
    record = save(client).get_json()
    record = put(client, record, notes="second").get_json()
    third = put(client, record, notes="third")
    assert third.status_code == 422 and third.get_json()["type"].endswith("too-many-revisions")
    assert client.get(f"/v1/scenarios/{record['id']}").get_json()["revision"] == 2


def test_an_oversized_body_is_413(library_client):
    body = b'{"name": "' + b"x" * (limits.MAX_BODY_BYTES + 1) + b'"}'
    response = library_client.post("/v1/scenarios", data=body, content_type="application/json")
    assert response.status_code == 413


def test_a_restarted_service_keeps_everything(make_client):
    first = make_client()
    record = save(first, tags=["kept"]).get_json()
    second_revision = put(first, record, notes="second").get_json()
    restarted = make_client()  # a new app on the same database: migrations find nothing to do
    assert restarted.get(f"/v1/scenarios/{record['id']}").get_json() == second_revision
    assert restarted.get(f"/v1/scenarios/{record['id']}?revision=1").get_json()["notes"] == ""
    assert restarted.get(f"/v1/scenarios/{record['id']}/paths").status_code == 200


def test_a_dashboard_on_another_origin_may_revise_and_read_the_library_headers(make_client):
    client = make_client(cors_origins="https://dashboard.example.org")
    preflight = client._client.options(  # a preflight is not an operation of the document
        "/v1/scenarios/abc",
        headers={
            "Origin": "https://dashboard.example.org",
            "Access-Control-Request-Method": "PUT",
            "Access-Control-Request-Headers": "if-match, content-type",
        },
    )
    assert "PUT" in preflight.headers["Access-Control-Allow-Methods"]
    assert "if-match" in preflight.headers["Access-Control-Allow-Headers"].lower()
    saved = client.post(
        "/v1/scenarios",
        json={"name": "x", "request": short(FREEZE)},
        headers={"Origin": "https://dashboard.example.org"},
    )
    exposed = saved.headers["Access-Control-Expose-Headers"]
    assert "Location" in exposed and "ETag" in exposed and "Model-Version-Changed" in exposed
