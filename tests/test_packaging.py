"""Every package directory is listed in pyproject.toml, and the examples ship."""

from __future__ import annotations

import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def test_every_package_is_listed():
    listed = set(tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["setuptools"]
                 ["packages"])
    found = {".".join(p.parent.relative_to(ROOT).parts)
             for p in (ROOT / "winder").rglob("__init__.py")}
    assert found <= listed, f"add to pyproject packages: {sorted(found - listed)}"
    assert "winder.examples" in listed


def test_ci_runs_exactly_the_readme_test_command():
    readme = (ROOT / "README.md").read_text()
    ci = (ROOT / ".ci" / "run").read_text()
    blocks = readme.split("```sh\n")[1:]
    commands = [b.split("\n```")[0].strip() for b in blocks[:2]]
    test_command = commands[1]
    assert "pytest" in test_command
    assert test_command in ci.splitlines()
