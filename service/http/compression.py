"""gzip for large answers (flask-compress), when the caller sends Accept-Encoding: gzip.

Only gzip: every HTTP client and browser decodes it. Answers under GZIP_MIN_BYTES go as they
are (the bytes saved would not pay for the time). The level was measured on a 500-scenario
batch (openapi/API.md, "Formats and negotiation"): level 1 takes about a quarter of the
default level 6's time for a body about a sixth larger. A compressed answer's strong ETag
gains ":gzip" (it is a different representation); conditional.py matches either form.
"""

from __future__ import annotations

from flask import Flask, request
from flask_compress import Compress

__all__ = ["GZIP_LEVEL", "GZIP_MIN_BYTES", "enable_gzip"]

GZIP_LEVEL = 1
GZIP_MIN_BYTES = 2048
_TYPES = [
    "application/json",
    "application/problem+json",
    "text/csv",
    "image/svg+xml",
    "text/html",
    "text/css",
    "text/javascript",
]


def enable_gzip(app: Flask) -> None:
    app.config.update(
        COMPRESS_ALGORITHM=["gzip"],
        COMPRESS_ALGORITHM_STREAMING=["gzip"],  # streamed answers (batch CSV) too, chunk by chunk
        COMPRESS_LEVEL=GZIP_LEVEL,
        COMPRESS_MIN_SIZE=GZIP_MIN_BYTES,
        COMPRESS_MIMETYPES=_TYPES,
        COMPRESS_EVALUATE_CONDITIONAL_REQUEST=False,  # conditional.py decides 304s, before any work
        COMPRESS_REGISTER=False,
    )
    compress = Compress(app)

    @app.after_request
    def _gzip(response):
        # flask-compress 1.25 still picks gzip for "gzip;q=0"; q=0 means "not acceptable"
        # (RFC 9110, 12.4.2), which werkzeug's parser honours.
        if request.accept_encodings.quality("gzip") <= 0:
            response.vary.add("Accept-Encoding")
            return response
        return compress.after_request(response)
