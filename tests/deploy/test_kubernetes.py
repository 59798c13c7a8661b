"""deploy/kubernetes: valid against the Kubernetes schemas, and consistent with the service."""

from __future__ import annotations

from pathlib import Path

import kubernetes_validate
import pytest
import yaml

from samplewright.app import create_app
from samplewright.config import Settings

REPO = Path(__file__).resolve().parents[2]
MANIFESTS = sorted((REPO / "deploy" / "kubernetes").glob("*.yaml"))
KUBERNETES_VERSION = "1.30.0"  # the oldest version still widely supported; every field exists there


def _docs() -> dict[str, dict]:
    docs = {}
    for path in MANIFESTS:
        for doc in yaml.safe_load_all(path.read_text()):
            docs[doc["kind"]] = doc
    return docs


def _container() -> dict:
    (container,) = _docs()["Deployment"]["spec"]["template"]["spec"]["containers"]
    return container


def _env() -> dict[str, str]:
    return {e["name"]: e["value"] for e in _container()["env"] if "value" in e}


def test_the_four_resources_are_there():
    """Deployment, Service, HorizontalPodAutoscaler and PodDisruptionBudget, one of each."""
    assert sorted(_docs()) == ["Deployment", "HorizontalPodAutoscaler", "PodDisruptionBudget", "Service"]


@pytest.mark.parametrize("path", MANIFESTS, ids=lambda p: p.name)
@pytest.mark.parametrize("version", [KUBERNETES_VERSION, kubernetes_validate.latest_version()])
def test_manifest_validates_strictly(path, version):
    """Each manifest validates against the Kubernetes OpenAPI schemas, unknown fields refused."""
    for doc in yaml.safe_load_all(path.read_text()):
        kubernetes_validate.validate(doc, version, strict=True)


def test_probes_hit_the_health_and_readiness_routes():
    """Liveness (and startup) on /healthz, readiness on /readyz, both on the named port, both real routes."""
    container = _container()
    assert container["livenessProbe"]["httpGet"]["path"] == "/healthz"
    assert container["startupProbe"]["httpGet"]["path"] == "/healthz"
    assert container["readinessProbe"]["httpGet"]["path"] == "/readyz"
    rules = {r.rule for r in create_app(Settings()).url_map.iter_rules()}
    assert {"/healthz", "/readyz", "/metrics"} <= rules
    port = container["ports"][0]
    assert port["name"] == "http" and str(port["containerPort"]) == _env()["SAMPLEWRIGHT_PORT"]


def test_pod_runs_non_root_read_only_with_limits():
    """Non-root, no privilege escalation, all capabilities dropped, read-only root fs, requests and limits."""
    pod = _docs()["Deployment"]["spec"]["template"]["spec"]
    container = _container()
    assert pod["securityContext"]["runAsNonRoot"] is True and pod["securityContext"]["runAsUser"] >= 1000
    ctx = container["securityContext"]
    assert ctx["readOnlyRootFilesystem"] is True and ctx["allowPrivilegeEscalation"] is False
    assert ctx["capabilities"]["drop"] == ["ALL"]
    resources = container["resources"]
    for kind in ("requests", "limits"):
        assert {"cpu", "memory"} <= set(resources[kind])
    # the writable places gunicorn needs (worker heartbeat, metrics files) are memory volumes
    mounts = {m["mountPath"] for m in container["volumeMounts"]}
    assert {"/dev/shm", "/tmp"} <= mounts
    assert _env()["SAMPLEWRIGHT_METRICS_DIR"].startswith("/dev/shm/")


def test_env_is_valid_settings_and_workers_match_the_cpu_limit():
    """The literal SAMPLEWRIGHT_* values parse as Settings; workers equal the CPU limit."""
    settings = Settings.from_environ(_env())
    assert settings.host == "0.0.0.0"
    assert str(settings.workers) == str(_container()["resources"]["limits"]["cpu"])
    readme = (REPO / "README.md").read_text()
    for name in [e["name"] for e in _container()["env"]]:
        assert f"`{name}`" in readme, f"{name} is not in the README's settings table"


def test_termination_grace_covers_drain_and_in_flight():
    """terminationGracePeriodSeconds exceeds the drain period plus the in-flight grace."""
    settings = Settings.from_environ(_env())
    grace = _docs()["Deployment"]["spec"]["template"]["spec"]["terminationGracePeriodSeconds"]
    assert grace > settings.drain_seconds + settings.graceful_timeout


def test_selectors_match_the_pods():
    """The Service and PDB select the Deployment's pods; the HPA scales that Deployment."""
    docs = _docs()
    labels = docs["Deployment"]["spec"]["template"]["metadata"]["labels"]
    for selector in (docs["Service"]["spec"]["selector"],
                     docs["PodDisruptionBudget"]["spec"]["selector"]["matchLabels"],
                     docs["Deployment"]["spec"]["selector"]["matchLabels"]):
        assert selector.items() <= labels.items()
    target = docs["HorizontalPodAutoscaler"]["spec"]["scaleTargetRef"]
    assert (target["kind"], target["name"]) == ("Deployment", docs["Deployment"]["metadata"]["name"])
    hpa = docs["HorizontalPodAutoscaler"]["spec"]
    assert hpa["minReplicas"] > docs["PodDisruptionBudget"]["spec"]["minAvailable"]
    assert docs["Service"]["spec"]["ports"][0]["targetPort"] == "http"
    strategy = docs["Deployment"]["spec"]["strategy"]["rollingUpdate"]
    assert strategy["maxUnavailable"] == 0
