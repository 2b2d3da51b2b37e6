"""Deployment files, checked without a container engine: schemas, lint, structure."""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

import pytest
import yaml

ROOT = Path(__file__).resolve().parents[2]
MANIFESTS = sorted((ROOT / "deploy" / "kubernetes").glob("*.yaml"))
BIN = Path(sys.executable).parent


def _tool(name: str) -> str:
    path = BIN / name
    found = str(path) if path.exists() else shutil.which(name)
    assert found, f"{name} is part of the test extra and must be installed"
    return found


@pytest.mark.parametrize("manifest", MANIFESTS, ids=lambda p: p.name)
def test_each_manifest_validates_strictly_against_kubernetes_1_30(manifest):
    result = subprocess.run(
        [_tool("kubernetes-validate"), "--strict", "-k", "1.30.0", str(manifest)],
        capture_output=True,
        text=True,
    )
    assert result.returncode == 0, result.stdout + result.stderr


def test_manifests_pass_yamllint():
    config = "{extends: default, rules: {line-length: {max: 120}}}"
    result = subprocess.run(
        [_tool("yamllint"), "-d", config, *map(str, MANIFESTS)], capture_output=True, text=True
    )
    assert result.returncode == 0, result.stdout


def test_every_kind_an_operator_needs_is_there():
    kinds = {yaml.safe_load(p.read_text())["kind"] for p in MANIFESTS}
    assert kinds == {
        "ConfigMap",
        "Deployment",
        "Service",
        "HorizontalPodAutoscaler",
        "PodDisruptionBudget",
        "Secret",
    }


def test_the_library_database_url_comes_from_the_secret():
    deployment = yaml.safe_load((ROOT / "deploy" / "kubernetes" / "deployment.yaml").read_text())
    secret = yaml.safe_load((ROOT / "deploy" / "kubernetes" / "secret.yaml").read_text())
    (container,) = deployment["spec"]["template"]["spec"]["containers"]
    (variable,) = [e for e in container["env"] if e["name"] == "SHOCKPATH_DATABASE_URL"]
    reference = variable["valueFrom"]["secretKeyRef"]
    assert reference["name"] == secret["metadata"]["name"] and reference["key"] in secret["stringData"]
    assert not reference.get("optional", False)
    assert secret["stringData"]["url"].startswith("postgresql://")
    config = yaml.safe_load((ROOT / "deploy" / "kubernetes" / "configmap.yaml").read_text())["data"]
    assert "SHOCKPATH_DATABASE_URL" not in config  # a password never sits in a ConfigMap


def test_the_deployment_probes_and_hardening():
    deployment = yaml.safe_load((ROOT / "deploy" / "kubernetes" / "deployment.yaml").read_text())
    pod = deployment["spec"]["template"]["spec"]
    (container,) = pod["containers"]
    assert container["readinessProbe"]["httpGet"]["path"] == "/readyz"
    assert container["livenessProbe"]["httpGet"]["path"] == "/healthz"
    assert pod["securityContext"]["runAsNonRoot"] is True
    security = container["securityContext"]
    assert security["readOnlyRootFilesystem"] is True and security["allowPrivilegeEscalation"] is False
    for kind in ("requests", "limits"):
        assert {"cpu", "memory"} <= set(container["resources"][kind])
    assert any(m["mountPath"] == "/tmp" for m in container["volumeMounts"])  # writable scratch only


def test_every_configmap_key_is_a_documented_setting():
    config = yaml.safe_load((ROOT / "deploy" / "kubernetes" / "configmap.yaml").read_text())["data"]
    settings = (ROOT / "deploy" / "OPERATIONS.md").read_text().split("## Settings", 1)[1].split("\n## ", 1)[0]
    for key in config:
        assert f"`{key}`" in settings, key


def test_the_dockerfile_passes_hadolint():
    result = subprocess.run(
        [_tool("hadolint"), str(ROOT / "deploy" / "Dockerfile")], capture_output=True, text=True
    )
    assert result.returncode == 0, result.stdout + result.stderr


def test_the_dockerfile_runs_gunicorn_as_a_non_root_user_with_a_health_check():
    text = (ROOT / "deploy" / "Dockerfile").read_text()
    lines = [line.strip() for line in text.splitlines() if line.strip() and not line.startswith("#")]
    assert lines[0].startswith("FROM python:3.11-slim")
    user = [line for line in lines if line.startswith("USER ")]
    assert user and user[-1] not in ("USER root", "USER 0")
    assert any(line.startswith("HEALTHCHECK") for line in lines)
    assert (
        lines[-1] == 'ENTRYPOINT ["gunicorn", "--config", "deploy/gunicorn.conf.py", "service:create_app()"]'
    )
    assert "pip install --no-cache-dir '.[charts]'" in text  # dependencies from pyproject.toml
