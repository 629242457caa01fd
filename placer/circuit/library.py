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
from dataclasses import dataclass, replace
from functools import lru_cache
from collections.abc import Mapping
from pathlib import Path
from typing import NamedTuple

from .elements import Circuit, circuit_from_dict
from ..errors import SpecError, brief, brief_path
from .ladders import generated_topologies
from ..schema import check_path, read_toml
from .topology import Topology, load_topology, topology_from_dict
from ..units import parse_value

__all__ = [
    "LIBRARY_DIR",
    "library_topologies",
    "get_topology",
    "resolve_topology",
    "load_folder",
    "LoadedFolder",
    "find_topologies",
    "realises",
    "Analysable",
    "load_analysable",
]

LIBRARY_DIR = Path(__file__).resolve().parent / "topologies"


@lru_cache(maxsize=1)
def _bundled() -> dict[str, Topology]:
    found: dict[str, Topology] = {}
    for path in sorted(LIBRARY_DIR.glob("*.toml")):
        topology = load_topology(path)
        if topology.id in found:
            raise SpecError(f"topology id {topology.id!r} is used by two library files")
        found[topology.id] = topology
    return found


@lru_cache(maxsize=1)
def _generated() -> tuple[Topology, ...]:
    # the generated ladders never change in a process; building them costs
    # ~10 ms, which every design and every explorer request paid per section
    return generated_topologies()


def library_topologies() -> dict[str, Topology]:
    """Every library topology, id → Topology, bundled files then generated."""
    found = dict(_bundled())
    for topology in _generated():
        found.setdefault(topology.id, topology)
    return found


def get_topology(topology_id: str) -> Topology:
    """The library topology with this id; SpecError suggests the nearest."""
    topologies = library_topologies()
    if topology_id in topologies:
        return topologies[topology_id]
    text = str(topology_id)
    close = (difflib.get_close_matches(text, list(topologies), n=3, cutoff=0.4)
             if len(text) <= 100 else [])
    hint = f"; did you mean {', '.join(repr(c) for c in close)}?" if close else ""
    raise SpecError(
        f"unknown topology id {brief(topology_id)}{hint} (`placer topologies` lists them)"
    )


def _names_a_file(text: str) -> bool:
    """True when `text` reads as a file path rather than a library id."""
    if text.endswith(".toml") or "/" in text:
        return True
    try:
        return Path(text).is_file()
    except (OSError, ValueError):  # a name too long for the file system, a NUL byte
        return False


def resolve_topology(name_or_path: str | Path) -> Topology:
    """A library id, or a path to a topology file (ends in .toml or exists)."""
    text = str(name_or_path)
    if _names_a_file(text):
        return load_topology(text)
    return get_topology(text)


@dataclass(frozen=True)
class Analysable:
    """What ``placer analyze`` reads: a circuit, and its topology if it has one."""

    topology: Topology | None
    circuit: Circuit


def load_analysable(name: str) -> Analysable:
    """A library id, a topology file, or a plain circuit file.

    A ``.toml`` file with an ``id`` is a topology file, one without is a
    circuit file (:data:`placer.schema.CIRCUIT_KEYS`).

    Raises
    ------
    SpecError
        An unknown id, or a file that is missing, unreadable, not UTF-8,
        not TOML, or not a valid topology or circuit (naming the file).
    """
    text = str(name)
    if not _names_a_file(text):
        topology = get_topology(text)
        return Analysable(topology, topology.circuit)
    data = read_toml(text, what="topology or circuit file")
    source = brief_path(text)
    if "id" in data:
        topology = replace(topology_from_dict(data, source=source), path=text)
        return Analysable(topology, topology.circuit)
    circuit = circuit_from_dict(data, source=source, parse=parse_value)
    return Analysable(None, replace(circuit, name=source))


class LoadedFolder(NamedTuple):
    """A user's topology folder: what loaded, and why the rest did not."""

    topologies: dict[str, Topology]   # id -> Topology
    errors: dict[str, str]            # path -> message


def load_folder(folder: str | Path) -> LoadedFolder:
    """Load every ``*.toml`` in a folder of the user's.

    Returns
    -------
    LoadedFolder
        ``topologies`` (id → Topology) and ``errors`` (path → message): one
        bad file does not stop the others.
    """
    folder = check_path(folder, what="topology folder", folder=True)
    topologies: dict[str, Topology] = {}
    errors: dict[str, str] = {}
    for path in sorted(folder.glob("*.toml")):
        try:
            topology = load_topology(path)
        except SpecError as error:
            errors[str(path)] = str(error)
            continue
        topologies[topology.id] = topology
    return LoadedFolder(topologies=topologies, errors=errors)


def realises(topology: Topology, kind: str) -> bool:
    """True when a topology can realise a section (or response) of this kind.

    A topology realises its own ``response``; a notch topology also the
    notch sections its ``notch_kinds`` metadata names (a low-pass notch
    needs its zeros above the pole frequency, which a twin-T or bridged-T
    cannot give).

    Examples
    --------
    >>> realises(get_topology("khn-notch"), "lowpass-notch")
    True
    >>> realises(get_topology("fliege-notch"), "lowpass-notch")
    False
    """
    return kind == topology.response or kind in topology.notch_kinds


def find_topologies(*, response: str | None = None, order: int | None = None,
                    family: str | None = None,
                    topologies: Mapping[str, Topology] | None = None) -> list[Topology]:
    """Library topologies filtered by response or section kind, order and family.

    `response` may be a topology response (``"notch"`` finds every notch
    topology) or a section kind (``"lowpass-notch"`` finds those whose
    ``notch_kinds`` name it); see :func:`realises`.
    """
    pool = library_topologies() if topologies is None else topologies
    out = []
    for topology in pool.values():
        if response is not None and not realises(topology, response):
            continue
        if order is not None and topology.order != order:
            continue
        if family is not None and topology.family != family:
            continue
        out.append(topology)
    return out
