"""The import contract (pyproject.toml, checked in CI by lint-imports) covers every module."""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[2] / "deviation"
PYPROJECT = PACKAGE.parent / "pyproject.toml"

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    tomllib = pytest.importorskip("tomli")


def _layered():
    config = tomllib.loads(PYPROJECT.read_text())["tool"]["importlinter"]["contracts"]
    layers = next(c for c in config if c["type"] == "layers")["layers"]
    return {name.strip() for layer in layers for name in layer.split("|")}


def test_every_module_of_the_package_has_a_layer():
    named = _layered()
    top = {("deviation." + p.stem) for p in PACKAGE.glob("*.py") if p.stem != "__init__"}
    top |= {("deviation." + p.parent.name) for p in PACKAGE.glob("*/__init__.py")}
    assert top - named == set(), "give these modules a layer in pyproject.toml"
    assert named - top == set(), "these layers name no module"
