"""The engine imports numpy, scipy and the standard library only (STYLE.md, 'a fenced engine')."""

import ast
import sys
from pathlib import Path

ENGINE = Path(__file__).resolve().parents[2] / "service" / "engine"
ALLOWED = {"numba", "numpy", "scipy", "__future__"} | set(sys.stdlib_module_names)


def _imports(path: Path):
    tree = ast.parse(path.read_text(encoding="utf-8"))
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            for alias in node.names:
                yield alias.name.split(".")[0]
        elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
            yield node.module.split(".")[0]


def test_engine_imports_only_numpy_scipy_and_the_standard_library():
    files = sorted(ENGINE.glob("*.py"))
    assert len(files) >= 10
    outside = {(f.name, name) for f in files for name in _imports(f) if name not in ALLOWED}
    assert outside == set()


def test_engine_reads_no_environment():
    for f in ENGINE.glob("*.py"):
        text = f.read_text(encoding="utf-8")
        assert "os.environ" not in text and "getenv" not in text, f.name
