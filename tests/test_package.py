"""The package surface: every public name resolves, the data ships."""

import importlib
import pathlib

import placer


def test_every_public_name_resolves():
    # `import placer` loads lazily; each name in __all__ must exist in its module
    for name in placer.__all__:
        assert getattr(placer, name) is not None, name


def test_topology_files_are_package_data():
    # a plain `pip install .` ships placer/circuit/topologies/*.toml (declared package data)
    folder = pathlib.Path(importlib.import_module("placer.circuit.library").LIBRARY_DIR)
    files = sorted(folder.glob("*.toml"))
    assert len(files) >= 24
    text = pathlib.Path(__file__).resolve().parents[1].joinpath("pyproject.toml").read_text()
    assert '"placer.circuit.topologies" = ["*.toml"]' in text
