"""Byte-for-byte check of POST /v1/paths answers between two trees (for changes that must not
move an answer: speed work around the engine, refactors).

    cd TREE_A && PYTHONPATH=$PWD python THIS_FILE dump /tmp/a.pickle    (THIS_FILE from either tree:
    cd TREE_B && PYTHONPATH=$PWD python THIS_FILE dump /tmp/b.pickle     it answers with the tree in $PWD)
    python THIS_FILE compare /tmp/a.pickle /tmp/b.pickle

About 200 varied requests through the test client: typical requests of 20 and 40 periods (the
benchmark's), some without welfare, every demo as JSON, summary, CSV and gzip, a wide CSV, a
workbook, and refused ones (422 with pointers, 400, 406, 415). For each it keeps the status,
the body and the headers callers rely on, of the first answer, of the same request again (the
answer cache) and of the request with If-None-Match set to the ETag (304). A gzip body is kept
inflated and a workbook as its parts without docProps/core.xml (both carry the time they were
made). Prints what differs; exits 1 if anything does.
"""

from __future__ import annotations

import copy
import gzip
import io
import pickle
import sys
import zipfile

import orjson

HEADERS = (
    "Content-Type",
    "ETag",
    "Vary",
    "Content-Disposition",
    "Content-Length",
    "Content-Encoding",
    "Access-Control-Allow-Origin",
    "Access-Control-Expose-Headers",
    "WWW-Authenticate",
    "Allow",
)
XLSX = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet"


def cases() -> list[tuple[str, str, bytes, dict[str, str]]]:
    """(name, url, body, extra headers) of every request compared."""
    from service.examples import example_request, examples
    from tests.benchmarks.bench_service import engine_scenarios

    out = []
    for i, r in enumerate(engine_scenarios(120, seed=11, horizon=20)):
        out.append((f"typical-20-{i}", "/v1/paths", orjson.dumps(r), {}))
    for i, r in enumerate(engine_scenarios(20, seed=12, horizon=40)):
        out.append((f"typical-40-{i}", "/v1/paths", orjson.dumps(r), {}))
    for i, r in enumerate(engine_scenarios(10, seed=14, horizon=20)):
        r.pop("welfare")
        out.append((f"no-welfare-{i}", "/v1/paths", orjson.dumps(r), {}))
    for name in sorted(examples()):
        r = example_request(name)
        body = orjson.dumps(r)
        out.append((f"demo-{name}", "/v1/paths", body, {}))
        out.append((f"demo-{name}-summary", "/v1/paths", orjson.dumps({**r, "output": "summary"}), {}))
        out.append((f"demo-{name}-csv", "/v1/paths", body, {"Accept": "text/csv"}))
        out.append((f"demo-{name}-gzip", "/v1/paths", body, {"Accept-Encoding": "gzip"}))
    base = engine_scenarios(1, seed=13, horizon=20)[0]
    body = orjson.dumps(base)
    bad = copy.deepcopy(base)
    bad["market"]["price"] = -5
    two_bad = copy.deepcopy(base)
    two_bad["policies"][1]["growth"] = "x"
    two_bad["horizon"] = 0
    out += [
        ("wide-csv", "/v1/paths?layout=wide", body, {"Accept": "text/csv"}),
        ("bad-layout", "/v1/paths?layout=tall", body, {"Accept": "text/csv"}),
        ("workbook", "/v1/paths", body, {"Accept": XLSX}),
        ("not-acceptable", "/v1/paths", body, {"Accept": "image/png"}),
        ("invalid-price", "/v1/paths", orjson.dumps(bad), {}),
        ("invalid-two", "/v1/paths", orjson.dumps(two_bad), {}),
        ("malformed", "/v1/paths", b'{"market": ', {}),
        ("nan", "/v1/paths", b'{"market": NaN}', {}),
        ("not-an-object", "/v1/paths", b"[1, 2]", {}),
        ("not-json", "/v1/paths", body, {"Content-Type": "text/plain"}),
        ("unknown-field", "/v1/paths", orjson.dumps({**base, "colour": "red"}), {}),
    ]
    return out


def _kept(response) -> tuple[int, bytes, tuple]:
    """Status, body and headers, with what carries a clock taken out."""
    data = response.get_data()
    headers = HEADERS
    if response.headers.get("Content-Encoding") == "gzip":
        data = b"gzip:" + gzip.decompress(data)
    if response.headers.get("Content-Type", "").startswith(XLSX):
        with zipfile.ZipFile(io.BytesIO(data)) as book:
            parts = sorted((n, book.read(n)) for n in book.namelist() if n != "docProps/core.xml")
        data = repr(parts).encode()
        headers = tuple(h for h in HEADERS if h != "Content-Length")
    return response.status_code, data, tuple((h, response.headers.get(h)) for h in headers)


def dump(path: str) -> None:
    from service import create_app

    client = create_app({"cache_bytes": 1 << 20, "TESTING": True}).test_client()
    rows = {}
    for name, url, body, extra in cases():
        headers = {"Content-Type": "application/json", **extra}
        first = client.post(url, data=body, headers=headers)
        answers = [_kept(first)]
        if first.headers.get("ETag"):
            answers.append(_kept(client.post(url, data=body, headers=headers)))
            conditional = {**headers, "If-None-Match": first.headers["ETag"]}
            answers.append(_kept(client.post(url, data=body, headers=conditional)))
        rows[name] = answers
    with open(path, "wb") as f:
        pickle.dump(rows, f)
    print(f"{len(rows)} requests, {sum(len(v) for v in rows.values())} answers written to {path}")


def compare(first: str, second: str) -> bool:
    with open(first, "rb") as f:
        a = pickle.load(f)
    with open(second, "rb") as f:
        b = pickle.load(f)
    if a.keys() != b.keys():
        print("the two dumps hold different requests")
        return False
    differing = [name for name in a if a[name] != b[name]]
    print(
        f"{len(a)} requests, {sum(len(v) for v in a.values())} answers compared "
        f"(bodies and {', '.join(HEADERS)}): {len(differing)} differ {differing[:10]}"
    )
    return not differing


if __name__ == "__main__":
    if len(sys.argv) == 3 and sys.argv[1] == "dump":
        dump(sys.argv[2])
    elif len(sys.argv) == 4 and sys.argv[1] == "compare":
        sys.exit(0 if compare(sys.argv[2], sys.argv[3]) else 1)
    else:
        sys.exit(__doc__)
