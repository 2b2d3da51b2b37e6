"""Routing: every answer is problem+json or the documented type, never werkzeug's HTML redirect
(a doubled slash and a trailing slash are unknown paths: one spelling per path)."""

from __future__ import annotations

import re

import pytest

from service import create_app
from service.examples import example_request


@pytest.fixture(scope="module")
def routes():
    app = create_app({"TESTING": True})
    return app, [r for r in app.url_map.iter_rules() if r.rule != "/"]


def _path(rule) -> str:
    return re.sub(r"<[^>]+>", "quillbrook-rent-freeze", rule.rule)


def _method(rule) -> str:
    return sorted(rule.methods - {"HEAD", "OPTIONS"})[0]


def test_no_route_can_answer_with_a_redirect(routes):
    app, rules = routes
    assert rules
    # werkzeug redirects (308, with an HTML body) to merge slashes, to add a trailing slash to a
    # strict rule that ends in one (only the root here, whose slashless form is the empty path no
    # request has), to a rule's redirect_to, and to the rule that spells out another's defaults.
    for rule in app.url_map.iter_rules():
        assert not rule.merge_slashes, rule.rule
        assert rule.rule == "/" or not rule.rule.endswith("/"), rule.rule
        assert rule.redirect_to is None and not rule.defaults, rule.rule


def test_a_doubled_slash_in_any_route_is_a_404_problem(routes):
    app, rules = routes
    client = app.test_client()
    for rule in rules:
        path = _path(rule)
        for i in [m.start() for m in re.finditer("/", path)][1:]:
            doubled = path[:i] + "/" + path[i:]
            response = client.open(doubled, method=_method(rule), json={})
            assert response.status_code == 404, (doubled, response.status_code)
            assert response.mimetype == "application/problem+json", doubled
            assert "Location" not in response.headers


def test_a_leading_doubled_slash_is_the_route_itself_not_a_redirect(routes):
    # werkzeug strips leading slashes before matching: //v1/paths is /v1/paths. (Passed as a
    # server passes it: the test client would read a leading "//" as a host.)
    app, _ = routes
    response = app.test_client().post(
        data=b"{}", content_type="text/plain", environ_overrides={"PATH_INFO": "//v1/paths"}
    )
    assert response.status_code == 415 and response.mimetype == "application/problem+json"


def test_post_v1_double_slash_paths_is_a_404_problem(routes):
    app, _ = routes
    response = app.test_client().post("/v1//paths", json={})
    assert response.status_code == 404
    assert response.get_json()["status"] == 404


def test_a_trailing_slash_in_any_route_is_a_404_problem(routes):
    """/v1/paths/ is an unknown path, as /v1//paths is: one spelling per path (API.md, Errors)."""
    app, rules = routes
    client = app.test_client()
    for rule in rules:
        path = _path(rule) + "/"
        response = client.open(path, method=_method(rule), json={})
        assert response.status_code == 404, (path, response.status_code)
        assert response.mimetype == "application/problem+json", path
        assert "Location" not in response.headers
    refused = client.post("/v1/paths/", json=example_request("quillbrook-rent-freeze"))
    assert refused.status_code == 404 and refused.get_json()["status"] == 404
    assert client.post("/v1/paths", json=example_request("quillbrook-rent-freeze")).status_code == 200


def test_there_is_no_static_file_route(routes):
    app, _ = routes
    response = app.test_client().get("/static/app.js")
    assert response.status_code == 404 and response.mimetype == "application/problem+json"
