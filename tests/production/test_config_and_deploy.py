"""Settings from the environment, and the deployment files validated offline."""

import subprocess
import sys
import tomllib
from pathlib import Path

import pytest

from cohop.config import ConfigError, Settings, cgroup_cpus, from_env

ROOT = Path(__file__).resolve().parents[2]


def test_defaults_size_workers_by_cores():
    s = from_env({"COHOP_CPUS": "8", "COHOP_SOLVER_THREADS": "2"})
    assert s.gunicorn_workers == 4 and s.gunicorn_workers * s.solver_threads <= s.cpus
    assert s.request_timeout_s > s.max_solve_s


@pytest.mark.parametrize("env, words", [
    ({"COHOP_CPUS": "two"}, "COHOP_CPUS must be an integer"),
    ({"COHOP_CPUS": "2", "COHOP_WORKERS": "2", "COHOP_SOLVER_THREADS": "2"}, "exceeds the 2 CPU"),
    ({"COHOP_CPUS": "1", "COHOP_SOLVER_THREADS": "2"}, "exceeds the 1 CPU"),
    ({"COHOP_MAX_SOLVE_S": "100", "COHOP_GRACEFUL_TIMEOUT_S": "50"}, "GRACEFUL_TIMEOUT_S"),
    ({"COHOP_DETERMINISTIC": "maybe"}, "true or false"),
    ({"COHOP_TOKENS": "short"}, "at least 16"),
    ({"COHOP_MAX_SOLVE_SECONDS": "5"}, "unknown setting"),
    ({"COHOP_LOG_LEVEL": "LOUD"}, "LOG_LEVEL"),
    ({"COHOP_CPUS": "0"}, "must be positive"),
    ({"COHOP_DRAIN_S": "-1"}, "COHOP_DRAIN_S must be between 0 and 300"),
    ({"COHOP_DRAIN_S": "nan"}, "COHOP_DRAIN_S"),
    ({"COHOP_CLIENT_TIMEOUT_S": "0"}, "COHOP_CLIENT_TIMEOUT_S must be above 0"),
    ({"COHOP_CLIENT_TIMEOUT_S": "inf"}, "COHOP_CLIENT_TIMEOUT_S"),
])
def test_bad_settings_are_named(env, words):
    with pytest.raises(ConfigError, match=words):
        from_env(env)


def test_tokens_from_variable_and_file(tmp_path):
    path = tmp_path / "tokens"
    path.write_text("# rotated 2026-11\nbbbbbbbbbbbbbbbbbbbbbbbb\n\ncccccccccccccccccccccccc\n")
    s = from_env({"COHOP_TOKENS": "aaaaaaaaaaaaaaaaaaaaaaaa", "COHOP_TOKENS_FILE": str(path)})
    assert s.tokens == ("aaaaaaaaaaaaaaaaaaaaaaaa", "bbbbbbbbbbbbbbbbbbbbbbbb", "cccccccccccccccccccccccc")
    assert "aaaa" not in str(s.public())
    with pytest.raises(ConfigError, match="TOKENS_FILE"):
        from_env({"COHOP_TOKENS_FILE": str(tmp_path / "missing")})


def test_cgroup_limits(tmp_path):
    (tmp_path / "cpu.max").write_text("150000 100000\n")
    assert cgroup_cpus(tmp_path) == 1.5
    (tmp_path / "cpu.max").write_text("max 100000\n")
    assert cgroup_cpus(tmp_path) is None
    v1 = tmp_path / "v1"
    (v1 / "cpu").mkdir(parents=True)
    (v1 / "cpu" / "cpu.cfs_quota_us").write_text("200000")
    (v1 / "cpu" / "cpu.cfs_period_us").write_text("100000")
    assert cgroup_cpus(v1) == 2.0


def test_gunicorn_config_refuses_bad_settings():
    done = subprocess.run([sys.executable, "-c", "import cohop.gunicorn_conf"], env={"COHOP_CPUS": "x", "PATH": ""},
                          capture_output=True, text=True)
    assert done.returncode != 0 and "COHOP_CPUS must be an integer" in done.stderr


def test_gunicorn_config_values():
    import importlib

    import cohop.gunicorn_conf as conf

    conf = importlib.reload(conf)
    s = Settings()
    assert conf.workers * s.solver_threads <= s.cpus
    assert conf.timeout > s.max_solve_s and conf.graceful_timeout > s.max_solve_s
    assert conf.max_requests > 0 and conf.max_requests_jitter > 0 and conf.worker_class == "cohop.server.CohopWorker"
    assert conf.threads == s.threads == 16 and conf.control_socket_disable
    # gunicorn's own limits, set on purpose (and what `cohop.server` loads is the same)
    assert (conf.limit_request_line, conf.limit_request_fields, conf.limit_request_field_size) == (4094, 100, 8190)
    assert conf.options(s)["limit_request_field_size"] == conf.limit_request_field_size


def test_the_server_application_loads_the_same_settings():
    from cohop.server import CohopServer

    cfg = CohopServer(from_env({"COHOP_CPUS": "4", "COHOP_DRAIN_S": "7", "COHOP_BIND": "127.0.0.1:9"})).cfg
    assert cfg.workers == 2 and cfg.threads == 16 and cfg.address == [("127.0.0.1", 9)]
    assert cfg.worker_class_str == "cohop.server.CohopWorker" and cfg.limit_request_fields == 100


def test_kubernetes_manifests_validate_offline():
    # kubernetes-validate checks each resource against the Kubernetes OpenAPI schemas it bundles.
    files = sorted(str(p) for p in (ROOT / "deploy" / "k8s").glob("*.yaml"))
    assert len(files) == 5
    done = subprocess.run([sys.executable, "-m", "kubernetes_validate", "--strict", *files], capture_output=True,
                          text=True)
    assert done.returncode == 0, done.stdout + done.stderr


def test_deployment_requests_equal_limits_and_probes():
    import yaml

    dep = yaml.safe_load((ROOT / "deploy" / "k8s" / "deployment.yaml").read_text())
    c = dep["spec"]["template"]["spec"]["containers"][0]
    assert c["resources"]["requests"] == c["resources"]["limits"]
    assert {"startupProbe", "livenessProbe", "readinessProbe"} <= set(c)
    assert c["readinessProbe"]["httpGet"]["path"] == "/v1/ready"
    env = {e["name"]: e.get("value") for e in c["env"]}
    assert int(env["COHOP_CPUS"]) == int(c["resources"]["limits"]["cpu"])


def test_deployment_grace_period_covers_prestop_drain_and_graceful_stop():
    import yaml

    pod = yaml.safe_load((ROOT / "deploy" / "k8s" / "deployment.yaml").read_text())["spec"]["template"]["spec"]
    c = pod["containers"][0]
    command = c["lifecycle"]["preStop"]["exec"]["command"]
    assert command[0] == "sleep"
    env = {e["name"]: e["value"] for e in c["env"] if e["name"] != "COHOP_TOKENS_FILE"}
    s = from_env(env)  # the manifest's settings are valid ones (graceful timeout above the longest solve)
    assert s.drain_s > 0
    assert pod["terminationGracePeriodSeconds"] >= float(command[1]) + s.drain_s + s.graceful_timeout_s


def test_dockerfile_lints_clean_and_matches_the_version():
    from shutil import which

    hadolint = which("hadolint") or str(Path(sys.executable).parent / "hadolint")
    done = subprocess.run([hadolint, str(ROOT / "deploy" / "Dockerfile")], capture_output=True, text=True)
    assert done.returncode == 0, done.stdout + done.stderr
    text = (ROOT / "deploy" / "Dockerfile").read_text()
    version = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]["version"]
    assert f"cohop-{version}-py3-none-any.whl" in text
    assert "USER 10001" in text and "HEALTHCHECK" in text and text.count("FROM ") == 2
    assert 'ENTRYPOINT ["python", "-m", "cohop.server"]' in text  # the draining server, not plain gunicorn
