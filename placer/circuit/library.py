"""The topology library: bundled files, generated families and user paths.

Bundled topologies are TOML files shipped inside the package
(``placer/circuit/topologies/*.toml``); generated families (doubly terminated LC
ladders of any order) come from :mod:`placer.circuit.ladders`. A user may load a
topology file from any path, or name a folder of their own.

Examples
--------
>>> topology = get_topology("rc-lowpass")
>>> topology.response, topology.order
('lowpass', 1)
"""

from __future__ import annotations

import difflib
from functools import lru_cache
from pathlib import Path

from ..errors import SpecError
from .ladders import generated_topologies
from .topology import load_topology

__all__ = [
    "LIBRARY_DIR",
    "library_topologies",
    "get_topology",
    "resolve_topology",
    "load_folder",
    "find_topologies",
]

LIBRARY_DIR = Path(__file__).resolve().parent / "topologies"


@lru_cache(maxsize=1)
def _bundled():
    found = {}
    for path in sorted(LIBRARY_DIR.glob("*.toml")):
        topology = load_topology(path)
        if topology.id in found:
            raise SpecError(f"topology id {topology.id!r} is used by two library files")
        found[topology.id] = topology
    return found


def library_topologies():
    """Every library topology, id → Topology, bundled files then generated."""
    found = dict(_bundled())
    for topology in generated_topologies():
        found.setdefault(topology.id, topology)
    return found


def get_topology(topology_id):
    """The library topology with this id; SpecError suggests the nearest."""
    topologies = library_topologies()
    if topology_id in topologies:
        return topologies[topology_id]
    close = difflib.get_close_matches(str(topology_id), list(topologies), n=3, cutoff=0.4)
    hint = f"; did you mean {', '.join(repr(c) for c in close)}?" if close else ""
    raise SpecError(
        f"unknown topology id {topology_id!r}{hint} (`placer topologies` lists them)"
    )


def resolve_topology(name_or_path):
    """A library id, or a path to a topology file (ends in .toml or exists)."""
    text = str(name_or_path)
    if text.endswith(".toml") or "/" in text or Path(text).is_file():
        return load_topology(text)
    return get_topology(text)


def load_folder(folder):
    """Load every ``*.toml`` in a folder of the user's.

    Returns
    -------
    dict
        ``{"topologies": {id: Topology}, "errors": {path: message}}`` — one bad
        file does not stop the others.
    """
    folder = Path(folder)
    if not folder.is_dir():
        raise SpecError(f"topology folder {str(folder)!r} does not exist")
    topologies, errors = {}, {}
    for path in sorted(folder.glob("*.toml")):
        try:
            topology = load_topology(path)
        except SpecError as error:
            errors[str(path)] = str(error)
            continue
        topologies[topology.id] = topology
    return {"topologies": topologies, "errors": errors}


def find_topologies(*, response=None, order=None, family=None, topologies=None):
    """Library topologies filtered by response kind, order and family."""
    pool = library_topologies() if topologies is None else topologies
    out = []
    for topology in pool.values():
        if response is not None and topology.response != response:
            continue
        if order is not None and topology.order != order:
            continue
        if family is not None and topology.family != family:
            continue
        out.append(topology)
    return out
