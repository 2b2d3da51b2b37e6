"""The layers import one way: engine <- schemas <- the Python API <- http (DEVELOPERS.md, "The
layer map").

Each module's imports are read with ast (nothing is imported to check them), and a fresh
interpreter shows that the numeric core and the Python API load without the web stack.
"""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

import pytest

SERVICE = Path(__file__).resolve().parents[1] / "service"
STDLIB = set(sys.stdlib_module_names) | {"__future__"}


def _module_name(path: Path) -> str:
    parts = path.relative_to(SERVICE.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def _imports(path: Path, source: str | None = None) -> set[str]:
    """Every module `path` (or `source` placed there) imports, relative imports resolved."""
    package = _module_name(path).split(".")
    if path.name != "__init__.py":
        package = package[:-1]
    out: set[str] = set()
    text = path.read_text(encoding="utf-8") if source is None else source
    for node in ast.walk(ast.parse(text)):
        if isinstance(node, ast.Import):
            out |= {alias.name for alias in node.names}
        elif isinstance(node, ast.ImportFrom):
            base = package[: len(package) - node.level + 1] if node.level else []
            module = ".".join([*base, *([node.module] if node.module else [])])
            if node.module is None:  # from . import x: x is a module of the package
                out |= {f"{module}.{alias.name}" for alias in node.names}
            else:
                out.add(module)
    return out


def _layer(module: str) -> str:
    for prefix in ("service.engine", "service.schemas", "service.http"):
        if module == prefix or module.startswith(prefix + "."):
            return prefix.split(".")[1]
    if module == "service.limits":
        return "limits"
    return "python_api"


#: What each layer may import besides the standard library and itself.
ALLOWED = {
    "limits": set(),
    "engine": {"numba", "numpy", "scipy", "limits"},
    "schemas": {"engine", "limits", "marshmallow"},
    "python_api": {"engine", "schemas", "limits", "marshmallow", "numpy", "orjson", "matplotlib", "openpyxl"}
    | {"sqlalchemy", "alembic"},
    "http": {"python_api", "engine", "schemas", "limits", "flask", "werkzeug", "orjson", "apispec", "numpy"}
    | {"prometheus_client", "marshmallow", "flask_cors", "flask_compress"},
}


def _upward(path: Path, source: str | None = None) -> set[str]:
    mine = _layer(_module_name(path))
    bad = set()
    for name in _imports(path, source):
        top = name.split(".")[0]
        if top in STDLIB:
            continue
        if top == "service":
            if name == "service":  # the package itself: its names are the Python API
                target = "python_api"
            else:
                target = _layer(name)
            if target != mine and target not in ALLOWED[mine]:
                bad.add(name)
        elif top not in ALLOWED[mine]:
            bad.add(name)
    return bad


FILES = sorted(p for p in SERVICE.rglob("*.py"))


@pytest.mark.parametrize("path", FILES, ids=[str(p.relative_to(SERVICE)) for p in FILES])
def test_no_module_imports_a_layer_above_its_own(path):
    assert _upward(path) == set()


def test_the_check_sees_every_layer_and_catches_upward_imports():
    assert {_layer(_module_name(p)) for p in FILES} == set(ALLOWED)
    engine = SERVICE / "engine" / "example.py"  # a place only: nothing is written there
    source = "import numpy\nfrom flask import request\nfrom ..schemas import fields\nfrom .. import limits\n"
    assert _upward(engine, source) == {"flask", "service.schemas"}
    api = SERVICE / "example.py"
    assert _upward(api, "from .http.app import create_app\nfrom .schemas import paths\n") == {
        "service.http.app"
    }
    schemas = SERVICE / "schemas" / "example.py"
    assert _upward(schemas, "from ..simulation import compute\nfrom ..engine import Market\n") == {
        "service.simulation"
    }


def test_the_engine_reads_no_environment():
    for f in (SERVICE / "engine").glob("*.py"):
        text = f.read_text(encoding="utf-8")
        assert "os.environ" not in text and "getenv" not in text, f.name


def test_limits_is_a_leaf_of_constants():
    assert _imports(SERVICE / "limits.py") == set()


def _loaded_after(statement: str) -> set[str]:
    code = f"import sys\n{statement}\nprint(' '.join(sorted(m.split('.')[0] for m in sys.modules)))"
    result = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    return set(result.stdout.split())


def test_the_engine_loads_without_flask_marshmallow_or_prometheus():
    loaded = _loaded_after("import service.engine")
    assert "numpy" in loaded
    assert loaded.isdisjoint({"flask", "werkzeug", "marshmallow", "prometheus_client"})


def test_the_python_api_loads_without_flask_or_prometheus():
    loaded = _loaded_after("from service import simulate, simulate_many, bands, sensitivity, ProblemError")
    assert "marshmallow" in loaded
    assert loaded.isdisjoint({"flask", "werkzeug", "prometheus_client"})


def test_create_app_is_still_a_name_of_the_package():
    loaded = _loaded_after("from service import create_app; create_app")
    assert "flask" in loaded
