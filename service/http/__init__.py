"""The HTTP layer (Flask): a short app factory, one blueprint per endpoint group with its
OpenAPI operation data beside each view, JSON I/O, content negotiation, keys, the answer cache,
logs, metrics, settings and the page.

It may import everything below it (the Python API, schemas, engine, limits); nothing below
imports it (tests/test_layers.py). This package's __init__ imports nothing, so that
`service.http.logs` (named in deploy/gunicorn.conf.py) loads without the app.

    python -m service.http [--write | --check]    the OpenAPI document (openapi.py)
"""
