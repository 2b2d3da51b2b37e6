"""The README's two commands are the ones CI and the deploy files actually use."""

from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _ci_test_command() -> str:
    for line in (ROOT / ".ci" / "run").read_text().splitlines():
        if line.startswith("README_TEST_COMMAND="):
            return line.split("=", 1)[1].strip('"')
    raise AssertionError("no README_TEST_COMMAND in .ci/run")


def test_the_readme_test_command_is_what_ci_runs():
    assert _ci_test_command() in (ROOT / "README.md").read_text()


def test_the_readme_serve_command_uses_the_deploy_configuration():
    readme = (ROOT / "README.md").read_text()
    assert "gunicorn --config deploy/gunicorn.conf.py 'service:create_app()'" in readme
    assert (ROOT / "deploy" / "gunicorn.conf.py").exists()


def test_the_readme_opens_with_the_job_and_the_caution():
    readme = (ROOT / "README.md").read_text()
    first = next(p for p in readme.split("\n\n") if p.strip() and not p.startswith("#"))
    assert "analysts" in first and "year by year" in first
    assert "do not replace" in readme
