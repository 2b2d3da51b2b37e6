"""What a scenario record holds, checked before anything is stored: the write body loaded by
ScenarioWriteSchema, its `request` validated exactly as /v1/paths or /v1/bands validates it
(the same schemas, through problems.load_request, with pointers under /request), normalised,
and the scenario id of its answer.

Which endpoint a request is for follows the page's rule: a request with draws, seed,
percentiles or supply_correlation, or with a distribution object anywhere, is a bands
request; any other is a paths request.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass
from typing import Any

import orjson

from .. import engine
from ..problems import ProblemError, is_problem, load_request
from ..schemas.library import ScenarioWriteSchema
from ..schemas.paths import PathsRequestSchema
from ..schemas.uncertainty import BandsRequestSchema
from ..simulation import compute, scenario_id
from ..uncertainty import BAND_KEYS, is_bands_request
from ..uncertainty import _answer_id as bands_answer_id

__all__ = ["BAND_KEYS", "Written", "kind_of", "normalise", "owner_hash", "validate_write"]

_WRITE = ScenarioWriteSchema()
_PATHS = PathsRequestSchema()
_BANDS = BandsRequestSchema()

#: Domain separation of the owner hashes from any other use of a key.
_OWNER_PREFIX = b"shockpath scenario library owner\x00"


def owner_hash(key: str) -> str:
    """Hex sha-256 of a bearer key: the owner column holds this, never the key.

    Keys have at least 16 characters (settings), so the hash cannot be reversed by trying
    short keys. The empty key is the one owner of an install without keys.
    """
    return hashlib.sha256(_OWNER_PREFIX + key.encode()).hexdigest()


def kind_of(request: dict[str, Any]) -> str:
    """ "bands" or "paths": the endpoint the request is for (uncertainty.is_bands_request)."""
    return "bands" if is_bands_request(request) else "paths"


def normalise(request: dict[str, Any]) -> str:
    """The request as canonical JSON text: keys sorted, numbers as orjson writes them."""
    return orjson.dumps(request, option=orjson.OPT_SORT_KEYS).decode()


@dataclass(frozen=True)
class Written:
    """A valid write: what a new revision stores."""

    name: str
    notes: str
    tags: tuple[str, ...]
    shared: bool
    #: The display units as JSON text (keys sorted); "{}" for none.
    units: str
    kind: str
    request: str
    scenario_id: str
    model_version: str


def validate_write(body: Any) -> Written:
    """The revision `body` asks for, or ProblemError 422 with pointers (under /request for
    the request itself, as /v1/paths or /v1/bands would point at its fields)."""
    data = load_request(_WRITE, body)
    request = data["request"]
    kind = kind_of(request)
    if kind == "bands":
        uncertain = load_request(_BANDS, request, "/request")
        scenario, sid = uncertain.scenario, bands_answer_id("bands", uncertain)
    else:
        scenario = load_request(_PATHS, request, "/request")
        sid = scenario_id(scenario)
    # What the engine refuses (a tax past the choke price, ...) is refused here as that
    # endpoint would refuse it; for bands, at the central values, as /v1/bands checks first.
    (answer,) = compute([scenario], ["/request"], lists=False)
    if is_problem(answer):
        raise ProblemError(answer)
    return Written(
        name=data["name"],
        notes=data["notes"],
        tags=tuple(dict.fromkeys(data["tags"])),
        shared=data["shared"],
        units=normalise(data["units"]),
        kind=kind,
        request=normalise(request),
        scenario_id=sid,
        model_version=engine.MODEL_VERSION,
    )
