"""The distribution lists every package of the source tree (a non-editable install needs it)."""

import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def test_every_package_is_listed_in_pyproject():
    config = tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["setuptools"]
    listed = set(config["packages"])
    found = set()
    for root_name, folder in config["package-dir"].items():
        base = ROOT / folder
        for init in base.rglob("__init__.py"):
            rel = init.parent.relative_to(base).parts
            found.add(".".join((root_name,) + rel))
    assert found == listed


def test_the_image_lock_pins_every_runtime_dependency():
    """deploy/requirements.lock installs the image's packages, then the wheel with --no-deps: every requirement
    of cohop[service,plot] must be pinned there, and so must theirs. A package's own requirements are walked
    where the installed version is the pinned one (another version may need other packages: then only its name
    is checked)."""
    import re
    from importlib.metadata import PackageNotFoundError, requires, version
    from pathlib import Path

    from packaging.requirements import Requirement

    def norm(name: str) -> str:
        return re.sub(r"[-_.]+", "-", name).lower()

    lock = Path(__file__).resolve().parents[1] / "deploy" / "requirements.lock"
    pins = dict(line.strip().split("==") for line in lock.read_text().splitlines() if "==" in line)
    pinned = {norm(name): v for name, v in pins.items()}
    wanted = [Requirement(r) for r in requires("cohop") or []]
    todo = [norm(r.name) for r in wanted if r.marker and any(
        r.marker.evaluate({"extra": extra}) for extra in ("service", "plot"))]
    assert {"numba", "matplotlib", "ortools"} <= set(todo)
    seen, missing = set(), []
    while todo:
        name = todo.pop()
        if name in seen:
            continue
        seen.add(name)
        if name not in pinned:
            missing.append(name)
            continue
        try:
            if version(name) != pinned[name]:
                continue
            deps = [Requirement(d) for d in requires(name) or []]
        except PackageNotFoundError:
            continue
        todo += [norm(d.name) for d in deps if d.marker is None or d.marker.evaluate({"extra": ""})]
    assert not missing, missing
