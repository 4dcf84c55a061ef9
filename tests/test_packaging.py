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
    """deploy/requirements.lock installs the image's packages with --no-deps for the wheel: every requirement of
    cohop[service,plot], and theirs, must be pinned there (the server draws the report's charts)."""
    import re
    from importlib.metadata import PackageNotFoundError, requires
    from pathlib import Path

    from packaging.requirements import Requirement

    def norm(name: str) -> str:
        return re.sub(r"[-_.]+", "-", name).lower()

    lock = Path(__file__).resolve().parents[1] / "deploy" / "requirements.lock"
    pinned = {norm(line.split("==")[0]) for line in lock.read_text().splitlines() if "==" in line}
    wanted = [Requirement(r) for r in requires("cohop") or []]
    todo = [norm(r.name) for r in wanted if r.marker and any(
        r.marker.evaluate({"extra": extra}) for extra in ("service", "plot"))]
    seen, missing = set(), []
    while todo:
        name = todo.pop()
        if name in seen:
            continue
        seen.add(name)
        if name not in pinned:
            missing.append(name)
        try:
            deps = requires(name) or []
        except PackageNotFoundError:
            continue
        todo += [norm(Requirement(d).name) for d in deps
                 if Requirement(d).marker is None or Requirement(d).marker.evaluate({"extra": ""})]
    assert not missing, missing
