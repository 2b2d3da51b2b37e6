"""Request schemas (marshmallow): request bodies to the engine's dataclasses, shared by the
Python API and the HTTP layer, and the response schemas that document the bodies.

Imports the engine, service.limits and marshmallow only (tests/test_layers.py). The OpenAPI
document is generated from these schemas (service/http/openapi.py).

    fields.py        strict fields and the base request schema
    paths.py         /v1/paths and /v1/paths/batch requests
    uncertainty.py   /v1/bands and /v1/sensitivity requests (elasticities as distributions)
    charts.py        /v1/charts requests
    responses.py     response bodies (documentation; bodies are written with orjson)
    pointers.py      JSON Pointer escaping; marshmallow errors -> pointers
"""
