"""python -m service.http [--write | --check]: the OpenAPI document (see openapi.py)."""

import sys

from .openapi import main

raise SystemExit(main(sys.argv[1:]))
