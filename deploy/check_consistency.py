#!/usr/bin/env python3
"""Cross-checks the values that the Dockerfile and the Kubernetes manifests must agree on.

Each manifest is valid on its own; these are the couplings between them that no schema sees:
the job slots against the CPU limit, the grace period against the longest request, one port
everywhere, one user id, the Secret's name and file path, and the replica bounds against the
disruption budget.

Usage: check_consistency.py RENDERED.yaml SECRET_EXAMPLE.yaml DOCKERFILE
(RENDERED is the output of `kubectl kustomize deploy/k8s`). Needs PyYAML. Exits 1 on a finding.
"""

import re
import sys

import yaml

# Seconds the service keeps draining past the request timeout after SIGTERM (`drain_deadline`
# in service/src/main.rs).
DRAIN_SLACK_S = 5


def cpu_cores(quantity: str) -> float:
    """A Kubernetes CPU quantity ("2", "1500m") in cores."""
    text = str(quantity)
    return int(text[:-1]) / 1000 if text.endswith("m") else float(text)


def main() -> int:
    rendered_path, secret_path, dockerfile_path = sys.argv[1:4]
    with open(rendered_path, encoding="utf-8") as f:
        docs = [d for d in yaml.safe_load_all(f) if d]
    with open(secret_path, encoding="utf-8") as f:
        secret = yaml.safe_load(f)
    with open(dockerfile_path, encoding="utf-8") as f:
        dockerfile = f.read()

    by_kind = {}
    for doc in docs:
        by_kind.setdefault(doc["kind"], []).append(doc)
    findings = []

    def check(ok: bool, message: str) -> None:
        if not ok:
            findings.append(message)

    for kind in ("ConfigMap", "Deployment", "Service", "HorizontalPodAutoscaler",
                 "PodDisruptionBudget"):
        check(len(by_kind.get(kind, [])) == 1, f"expected exactly one {kind}")
    if findings:
        print("\n".join(findings))
        return 1

    config = by_kind["ConfigMap"][0]["data"]
    deployment = by_kind["Deployment"][0]
    service = by_kind["Service"][0]
    hpa = by_kind["HorizontalPodAutoscaler"][0]
    pdb = by_kind["PodDisruptionBudget"][0]
    pod = deployment["spec"]["template"]
    pod_spec = pod["spec"]
    container = pod_spec["containers"][0]

    # One job slot per core of the CPU limit.
    jobs = int(config["RINGDRAG_MAX_CONCURRENT_JOBS"])
    cpu_limit = cpu_cores(container["resources"]["limits"]["cpu"])
    check(jobs == cpu_limit,
          f"RINGDRAG_MAX_CONCURRENT_JOBS={jobs} differs from the CPU limit {cpu_limit}")

    # A rollout must not cut the longest request short. After SIGTERM the service drains for
    # the request timeout plus DRAIN_SLACK_S before giving up; the preStop delay comes first.
    timeout_s = int(config["RINGDRAG_REQUEST_TIMEOUT_S"]) + DRAIN_SLACK_S
    pre_stop = container.get("lifecycle", {}).get("preStop", {}).get("exec", {})
    pre_stop_s = int(pre_stop["command"][1]) if pre_stop.get("command", [""])[0] == "sleep" else 0
    grace_s = int(pod_spec["terminationGracePeriodSeconds"])
    check(grace_s > timeout_s + pre_stop_s,
          f"terminationGracePeriodSeconds={grace_s} does not exceed the service's drain "
          f"(request timeout + {DRAIN_SLACK_S} s = {timeout_s} s) plus the preStop delay "
          f"{pre_stop_s} s")

    # One port: the listen address, the container port, the scrape annotation, the Service's
    # target, the Dockerfile's EXPOSE and ENV.
    listen_port = int(config["RINGDRAG_LISTEN"].rsplit(":", 1)[1])
    ports = {p["name"]: p["containerPort"] for p in container["ports"]}
    check(ports.get("http") == listen_port,
          f"container port 'http' {ports.get('http')} differs from RINGDRAG_LISTEN {listen_port}")
    annotations = pod["metadata"].get("annotations", {})
    check(annotations.get("prometheus.io/port") == str(listen_port),
          "prometheus.io/port annotation differs from the listen port")
    check(service["spec"]["ports"][0]["targetPort"] in ("http", listen_port),
          "the Service's targetPort is not the container's http port")
    check(re.search(rf"^EXPOSE {listen_port}$", dockerfile, re.M) is not None,
          f"Dockerfile does not EXPOSE {listen_port}")
    check(re.search(rf"RINGDRAG_LISTEN=0\.0\.0\.0:{listen_port}\b", dockerfile) is not None,
          f"Dockerfile does not set RINGDRAG_LISTEN=0.0.0.0:{listen_port}")
    for probe in ("startupProbe", "readinessProbe", "livenessProbe"):
        check(container.get(probe, {}).get("httpGet", {}).get("port") in ("http", listen_port),
              f"{probe} does not target the http port")

    # The image's user is the pod's user.
    user = re.search(r"^USER (\d+)(?::(\d+))?$", dockerfile, re.M)
    security = pod_spec.get("securityContext", {})
    check(user is not None and int(user.group(1)) == security.get("runAsUser"),
          "the Dockerfile's numeric USER differs from runAsUser")

    # The Secret the pod mounts is the one the example describes, at the path the service reads.
    volumes = {v["name"]: v for v in pod_spec.get("volumes", [])}
    mounts = {m["name"]: m for m in container.get("volumeMounts", [])}
    env = {e["name"]: e.get("value") for e in container.get("env", [])}
    secret_volume = volumes.get("api-keys", {}).get("secret", {})
    check(secret_volume.get("secretName") == secret["metadata"]["name"],
          "the mounted Secret's name differs from secret.example.yaml")
    key_file = env.get("RINGDRAG_API_KEYS_FILE", "")
    mount_path = mounts.get("api-keys", {}).get("mountPath", "")
    keys = set(secret.get("stringData", {})) | set(secret.get("data", {}))
    check(any(key_file == f"{mount_path}/{key}" for key in keys),
          f"RINGDRAG_API_KEYS_FILE={key_file} is not a key of the Secret mounted at {mount_path}")

    # Replica count: the HPA owns it, and the budget must leave a pod to evict.
    min_replicas = hpa["spec"]["minReplicas"]
    check(hpa["spec"]["scaleTargetRef"]["name"] == deployment["metadata"]["name"],
          "the HPA does not target the Deployment")
    check("replicas" not in deployment["spec"],
          "the Deployment sets replicas while an HPA owns the count: each apply would reset it")
    check(min_replicas >= 2, "minReplicas below 2 leaves no replica during a pod's restart")
    check(pdb["spec"]["minAvailable"] < min_replicas,
          "minAvailable of the PodDisruptionBudget leaves no pod to evict at minReplicas")
    selector = deployment["spec"]["selector"]["matchLabels"]
    for name, sel in (("Service", service["spec"]["selector"]),
                      ("PodDisruptionBudget", pdb["spec"]["selector"]["matchLabels"])):
        check(sel == selector, f"the {name}'s selector differs from the Deployment's")

    if findings:
        print("\n".join(findings))
        return 1
    print("consistent: jobs = CPU limit, grace > timeout + preStop, one port, one user, "
          "Secret path, HPA owns replicas, budget, selectors")
    return 0


if __name__ == "__main__":
    sys.exit(main())
