"""A library database that cannot be reached: the library answers 503 problems (with
Retry-After) and the compute endpoints keep answering; the service starts all the same, and
the library comes back when the database does."""

from __future__ import annotations

import copy
import socket
import threading

import pytest

from service import create_app
from service.examples import example_request

from .conftest import closed_port, postgres_url

REQUEST = dict(copy.deepcopy(example_request("quillbrook-rent-freeze")), horizon=3)
OPERATIONS = [
    ("get", "/v1/scenarios", None),
    ("post", "/v1/scenarios", {"name": "x", "request": REQUEST}),
    ("get", "/v1/scenarios/abcdefabcdefabcdefabcd", None),
    ("get", "/v1/scenarios/abcdefabcdefabcdefabcd/paths", None),
    ("put", "/v1/scenarios/abcdefabcdefabcdefabcd", {"name": "x", "request": REQUEST}),
    ("delete", "/v1/scenarios/abcdefabcdefabcdefabcd", None),
]


def _library_is_503_and_paths_200(client):
    for method, path, body in OPERATIONS:
        response = getattr(client, method)(path, json=body, headers={"If-Match": "*"})
        assert response.status_code == 503, (method, path, response.get_data()[:300])
        assert response.mimetype == "application/problem+json"
        assert response.headers["Retry-After"].isdigit()
        assert response.get_json()["type"].endswith("library-unavailable")
    assert client.post("/v1/paths", json=REQUEST).status_code == 200
    assert client.get("/healthz").status_code == 200


def test_postgres_that_refuses_connections(checker):
    app = create_app({"TESTING": True, "database_url": f"postgresql://x:y@127.0.0.1:{closed_port()}/none"})
    _library_is_503_and_paths_200(checker.wrap(app.test_client()))


def test_sqlite_file_that_cannot_be_made(checker, tmp_path):
    blocker = tmp_path / "a-file"
    blocker.write_text("not a directory")
    app = create_app({"TESTING": True, "library_path": str(blocker / "library.sqlite3")})
    _library_is_503_and_paths_200(checker.wrap(app.test_client()))


class _Relay:
    """A TCP relay in front of PostgreSQL that can be cut (the database 'goes down') and
    restored, while the app keeps its URL."""

    def __init__(self, host: str, port: int):
        self.target = (host, port)
        self.listener = socket.create_server(("127.0.0.1", 0))
        self.port = self.listener.getsockname()[1]
        self.up = True
        self.sockets: list[socket.socket] = []
        threading.Thread(target=self._accept, daemon=True).start()

    def _accept(self):
        while True:
            try:
                client, _ = self.listener.accept()
            except OSError:
                return
            if not self.up:
                client.close()
                continue
            server = socket.create_connection(self.target)
            self.sockets += [client, server]
            for a, b in ((client, server), (server, client)):
                threading.Thread(target=self._pipe, args=(a, b), daemon=True).start()

    @staticmethod
    def _pipe(a, b):
        try:
            while data := a.recv(65536):
                b.sendall(data)
        except OSError:
            pass
        finally:
            for s in (a, b):
                try:
                    s.shutdown(socket.SHUT_RDWR)
                except OSError:
                    pass
                s.close()

    def cut(self):
        self.up = False
        for s in self.sockets:
            try:
                s.shutdown(socket.SHUT_RDWR)
            except OSError:
                pass
            s.close()
        self.sockets.clear()

    def close(self):
        self.cut()
        self.listener.close()


def test_postgres_going_down_and_coming_back(checker, monkeypatch):
    from sqlalchemy.engine import make_url

    from service.library import store

    from .conftest import empty_postgres

    url = make_url(postgres_url().replace("postgresql://", "postgresql+psycopg://", 1))
    empty_postgres(url.render_as_string(hide_password=False))
    relay = _Relay(url.host or "127.0.0.1", url.port or 5432)
    try:
        relayed = url.set(host="127.0.0.1", port=relay.port).render_as_string(hide_password=False)
        app = create_app({"TESTING": True, "database_url": relayed})
        client = checker.wrap(app.test_client())
        saved = client.post("/v1/scenarios", json={"name": "before", "request": REQUEST})
        assert saved.status_code == 201
        relay.cut()
        _library_is_503_and_paths_200(client)
        relay.up = True
        monkeypatch.setattr(store, "RETRY_SECONDS", 0.0)
        again = client.get(saved.headers["Location"])
        assert again.status_code == 200 and again.get_json()["name"] == "before"
        app.extensions["shockpath.library"].close()
    finally:
        relay.close()


@pytest.mark.parametrize("where", ["start-up"])
def test_a_database_down_at_start_up_comes_back_without_a_restart(checker, tmp_path, monkeypatch, where):
    from service.library import store

    blocker = tmp_path / "later-a-directory"
    blocker.write_text("")
    app = create_app({"TESTING": True, "library_path": str(blocker / "library.sqlite3")})
    client = checker.wrap(app.test_client())
    assert client.get("/v1/scenarios").status_code == 503
    blocker.unlink()  # the volume appears
    monkeypatch.setattr(store, "RETRY_SECONDS", 0.0)
    assert client.post("/v1/scenarios", json={"name": "now", "request": REQUEST}).status_code == 201
