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
