"""The explorer's state: one spec, its edited target, cached placements.

An :class:`ExploreSession` holds the spec the server was started with and
nothing the page can change. Each request names the whole edited target
(every section's f0, Q and notch zero frequency); the session reads it
through the spec file's own validation (:func:`placer.spec.target_table.target_from_table`),
then designs it by the path ``placer design`` takes (:func:`placer.design.design`,
same spec, same seed) with a memo of placements: a section whose target
did not change is not solved again, so a drag re-places only the section
that moved. What does not change between drags (the symbolic network
functions, their evaluators, the schematics and curves of unchanged
sections) is cached too.

Downloads build the spec file that the edited target makes, and the
design files from that spec exactly as the command line writes them.
"""

from __future__ import annotations

import json
import math
import re
import threading
import time
import tomllib
from collections import OrderedDict
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import TYPE_CHECKING, Any, Callable, cast

from ..design import Design, PlaceCandidate, SectionDesign, design, place_candidate
from ..errors import SpecError, UnreachableTarget
from ..evidence.gather import gather_evidence
from ..report.bom import bom_csv, bom_rows
from ..report.data import design_to_dict
from ..evidence.prelayout import check_design
from ..report.html import write_design_report
from ..report.schematic import circuit_svg
from ..target.sections import split_sections
from ..spec.reader import Spec, spec_from_dict
from ..spec.target_table import SECTION_KEYS, target_from_table
from ..target.targets import Section, Target, make_section
from ..units import parse_value
from .curves import section_curves
from .spec_file import edited_spec_text

if TYPE_CHECKING:
    from ..circuit.topology import Topology
    from ..place.level import LevelRule
    from ..place.opamp import AmplifierSpec
    from ..place.placement import Candidate
    from ..spec.reader import PartsSpec

__all__ = ["SectionEdit", "EditedTarget", "FieldError", "Download", "DOWNLOADS",
           "ExploreSession"]

#: Download kinds → (file suffix, media type).
DOWNLOADS = {
    "spec": (".toml", "application/toml; charset=utf-8"),
    "json": (".json", "application/json"),
    "bom": (".csv", "text/csv; charset=utf-8"),
    "html": (".html", "text/html; charset=utf-8"),
}
_MAX_TEXT = 64
_CACHE_SIZE = 4096
_TWO_PI = 2 * math.pi
_FIELD_IN_MESSAGE = re.compile(r"sections\[(\d+)\](?:\.(\w+))?")


class FieldError(SpecError):
    """Bad input in one field of the page: the message and where it belongs.

    Parameters
    ----------
    message : str
    section : int, optional
        The section (0-based, in the page's order) at fault.
    field : str, optional
        ``"f0"``, ``"q"``, ``"zero_f0"`` or ``"kind"``.
    """

    def __init__(self, message: str, *, section: int | None = None, field: str | None = None):
        super().__init__(message)
        self.section = section
        self.field = field

    def to_dict(self) -> dict:
        return {"error": str(self), "section": self.section, "field": self.field}


@dataclass(frozen=True)
class SectionEdit:
    """One section as the page edits it (hertz)."""

    kind: str
    f0_hz: float
    q: float | None = None
    zero_f0_hz: float | None = None

    @property
    def order(self) -> int:
        return 1 if self.q is None else 2

    def table_entry(self) -> dict:
        """The ``sections`` entry of a spec's ``[target]`` table."""
        entry: dict = {"f0": self.f0_hz}
        if self.q is not None:
            entry["q"] = self.q
        if self.zero_f0_hz is not None:
            entry["zero_f0"] = self.zero_f0_hz
        entry["kind"] = self.kind
        return entry

    def section(self) -> Section:
        """The section it asks for, as the spec reader makes it (rad/s)."""
        return make_section(self.kind, _TWO_PI * self.f0_hz, self.q, zero_omega=(
            None if self.zero_f0_hz is None else _TWO_PI * self.zero_f0_hz))

    def to_dict(self) -> dict:
        return {"kind": self.kind, "order": self.order, "f0_hz": self.f0_hz, "q": self.q,
                "zero_f0_hz": self.zero_f0_hz}


@dataclass(frozen=True)
class EditedTarget:
    """An edited target, validated: its sections, its table and the Target."""

    edits: tuple[SectionEdit, ...]
    table: dict = field(hash=False)
    target: Target = field(hash=False)


@dataclass(frozen=True)
class Download:
    """A file for the page to save."""

    filename: str
    media_type: str
    body: bytes


class _LRU:
    """A small least-recently-used memo, safe to share between threads."""

    def __init__(self, size: int) -> None:
        self.size = size
        self.items: OrderedDict[Any, Any] = OrderedDict()
        self.lock = threading.Lock()

    def get(self, key: Any, make: Callable[[], Any]) -> tuple[Any, bool]:
        """The value for `key` (made on a miss) and whether it was made."""
        with self.lock:
            if key in self.items:
                self.items.move_to_end(key)
                return self.items[key], False
        value = make()
        with self.lock:
            self.items[key] = value
            while len(self.items) > self.size:
                self.items.popitem(last=False)
        return value, True


@dataclass
class _Tracker:
    """What one design run placed afresh, and the section it placed last."""

    last: Section | None = None
    placed: set = field(default_factory=set)


def _scalar(value: Any, where: str) -> Any:
    """A JSON field's value: a short string, or a finite number."""
    if isinstance(value, bool) or value is None:
        raise SpecError(f"{where}: expected a number or a string such as '5 kHz', not {value!r}")
    if isinstance(value, str):
        if len(value) > _MAX_TEXT:
            raise SpecError(f"{where}: {len(value)} characters is too long for a number")
        return value
    if isinstance(value, (int, float)):
        try:
            number = float(value)
        except OverflowError:
            number = math.inf
        if not math.isfinite(number):
            raise SpecError(f"{where}: {value!r} is not a finite number")
        return number
    raise SpecError(f"{where}: expected a number or a string such as '5 kHz', not {value!r}")


def _located(error: SpecError) -> FieldError:
    """The spec reader's message, placed at the section and key it names."""
    found = _FIELD_IN_MESSAGE.search(str(error))
    if found is None:
        return FieldError(str(error))
    key = found.group(2)
    return FieldError(str(error), section=int(found.group(1)),
                      field=key if key in SECTION_KEYS else None)


def _distance(a: Section, b: Section) -> float:
    if a.kind != b.kind or a.order != b.order:
        return math.inf
    d = abs(math.log(a.omega0 / b.omega0))
    if a.q is not None and b.q is not None:
        d += abs(math.log(a.q / b.q))
    if a.zero_omega is not None and b.zero_omega is not None:
        d += abs(math.log(a.zero_omega / b.zero_omega))
    return d


def match_slots(placed: tuple, wanted: tuple) -> list[int | None]:
    """For each placed section, the edited section it came from (nearest).

    The cascade may order the sections otherwise than the page lists
    them (``[cascade] ordering``); this maps them back.
    """
    pairs = sorted((_distance(a, b), i, j) for i, a in enumerate(placed)
                   for j, b in enumerate(wanted))
    out: list[int | None] = [None] * len(placed)
    used: set = set()
    for d, i, j in pairs:
        if math.isfinite(d) and out[i] is None and j not in used:
            out[i] = j
            used.add(j)
    return out


class ExploreSession:
    """The spec being explored, and the memo of its placements.

    Parameters
    ----------
    spec : placer.spec.reader.Spec
        A spec with a ``[target]`` table.

    Raises
    ------
    SpecError
        When the spec has no target.
    """

    def __init__(self, spec: Spec) -> None:
        target = spec.target
        if not isinstance(target, Target):     # None: the spec has no [target] table
            raise SpecError(f"{spec.path}: exploring a filter needs a [target] table")
        self.spec = spec
        self.source = spec.path
        self.name = Path(spec.path).name
        self.saved_stem = re.sub(r"[^A-Za-z0-9._-]+", "-", Path(spec.path).stem) + "-explored"
        sections = split_sections(target, ordering=spec.ordering, gain=spec.gain_distribution)
        self.initial = tuple(SectionEdit(s.kind, float(s.f0_hz), None if s.q is None else float(s.q),
                                         None if s.zero_f0_hz is None else float(s.zero_f0_hz))
                             for s in sections)
        self.response = target.response
        self.gain_db = float(target.gain_db)
        self._placements = _LRU(_CACHE_SIZE)
        self._drawings = _LRU(256)
        self._work = threading.Lock()
        self._latest: OrderedDict = OrderedDict()
        self._latest_lock = threading.Lock()

    # -- the page's view ---------------------------------------------------------

    def initial_state(self) -> dict:
        """What the page starts from: the spec's title and its sections."""
        return {
            "title": self.spec.title, "spec": self.name, "response": self.response,
            "gain_db": self.gain_db, "ordering": self.spec.ordering,
            "edits": [e.to_dict() for e in self.initial],
            "downloads": {kind: self.saved_stem + suffix for kind, (suffix, _) in DOWNLOADS.items()},
        }

    def read_edits(self, payload: Any) -> EditedTarget:
        """Validate the page's sections as a spec's ``[target]`` table.

        Parameters
        ----------
        payload : object
            The request's JSON: ``{"sections": [{"f0", "q", "zero_f0"}...]}``,
            one entry per section of the spec, values numbers (Hz) or
            engineering strings ("5.2 kHz").

        Returns
        -------
        EditedTarget

        Raises
        ------
        FieldError
            Naming the section and field, with the spec reader's message.
        """
        if not isinstance(payload, dict) or not isinstance(payload.get("sections"), list):
            raise FieldError('the request must be a JSON object {"sections": [...]}')
        items = payload["sections"]
        if len(items) != len(self.initial):
            raise FieldError(f"sections: give {len(self.initial)} section(s), as "
                             f"{self.name} has, not {len(items)}")
        entries = []
        for i, (item, base) in enumerate(zip(items, self.initial)):
            entries.append(self._entry(i, item, base))
        table = {"response": self.response, "gain": self.gain_db, "sections": entries}
        try:
            target_from_table(table, source=self.name)
        except SpecError as error:
            raise _located(error) from None
        edits = tuple(self._edit(i, entry, base) for i, (entry, base)
                      in enumerate(zip(entries, self.initial)))
        table = {"response": self.response, "gain": self.gain_db,
                 "sections": [e.table_entry() for e in edits]}
        target = target_from_table(table, source=self.name)
        self._check_structure(target, edits)
        return EditedTarget(edits=edits, table=table, target=target)

    def _check_structure(self, target: Target, edits: tuple) -> None:
        """The cascade must keep the spec's sections (kinds and orders).

        A second-order section with Q at or below 0.5 has two real poles,
        which the cascade may build as two first-order sections: the page
        could no longer say which section is which.
        """
        split = split_sections(target, ordering=self.spec.ordering,
                               gain=self.spec.gain_distribution)
        got = sorted((s.kind, s.order) for s in split)
        if got == sorted((e.kind, e.order) for e in self.initial):
            return
        for i, edit in enumerate(edits):
            if edit.q is not None and edit.q <= 0.5:
                raise FieldError(
                    f"{self.name}: target.sections[{i}].q = {edit.q:g}: at Q <= 0.5 the poles "
                    "are real and the cascade builds them as first-order sections; the "
                    "explorer keeps each section as the spec has it, so give Q above 0.5",
                    section=i, field="q")
        raise FieldError(f"{self.name}: the edited target factors into other sections than "
                         "the spec's; the explorer keeps each section as the spec has it")

    def _entry(self, i: int, item: Any, base: SectionEdit) -> dict:
        where = f"{self.name}: target.sections[{i}]"
        if not isinstance(item, dict):
            raise FieldError(f"{where} must be an object with f0, q, zero_f0", section=i)
        entry = {}
        for key, value in item.items():
            if key not in SECTION_KEYS:
                raise FieldError(f"{where}: unknown key {key!r} (accepted: "
                                 f"{', '.join(SECTION_KEYS)})", section=i)
            if value is None and key != "kind":
                continue  # an empty field: the key is absent
            try:
                entry[key] = _scalar(value, f"{where}.{key}")
            except SpecError as error:
                raise FieldError(str(error), section=i, field=key) from None
        kind = entry.setdefault("kind", base.kind)
        if kind != base.kind:
            raise FieldError(f"{where}.kind = {kind!r}: the spec makes this a {base.kind} "
                             "section, and the explorer keeps each section's kind",
                             section=i, field="kind")
        if base.order == 1 and "q" in entry:
            raise FieldError(f"{where}.q: a first-order section has no Q", section=i, field="q")
        if base.order == 2 and "q" not in entry:
            raise FieldError(f"{where}.q: a second-order section needs q", section=i, field="q")
        return entry

    def _edit(self, i: int, entry: dict, base: SectionEdit) -> SectionEdit:
        where = f"{self.name}: target.sections[{i}]"
        f0 = parse_value(entry["f0"], unit="Hz", field=f"{where}.f0")
        q = parse_value(entry["q"], field=f"{where}.q") if "q" in entry else None
        zero = (parse_value(entry["zero_f0"], unit="Hz", field=f"{where}.zero_f0")
                if "zero_f0" in entry else None)
        if base.kind == "notch" and zero is None:
            zero = f0  # as the spec reader does
        return SectionEdit(base.kind, f0, q, zero)

    # -- placing -------------------------------------------------------------------

    def note_request(self, client: str, seq: int) -> None:
        """Remember the newest request of a page (older ones are superseded)."""
        with self._latest_lock:
            if seq > self._latest.get(client, -1):
                self._latest[client] = seq
            self._latest.move_to_end(client)
            while len(self._latest) > 64:
                self._latest.popitem(last=False)

    def _superseded(self, client: str | None, seq: int | None) -> bool:
        if client is None or seq is None:
            return False
        with self._latest_lock:
            return seq < self._latest.get(client, seq)

    def _placer(self, tracker: _Tracker) -> PlaceCandidate:
        """design()'s `place`, memoised on (section, topology, seed)."""
        def place(section: Section, topology: Topology, *, index: int,
                  parts: PartsSpec | None = None, amplifier: AmplifierSpec | None = None,
                  seed: int = 0, level: LevelRule | None = None) -> Candidate:
            tracker.last = section
            key = (section, topology.id, topology.path, index, seed, level)
            candidate, made = self._placements.get(
                key, lambda: place_candidate(section, topology, index=index, parts=parts,
                                             amplifier=amplifier, seed=seed, level=level))
            if made:
                tracker.placed.add(section)
            return cast("Candidate", candidate)
        return place

    def _design(self, spec: Spec, tracker: _Tracker) -> Design:
        return design(spec, place=self._placer(tracker))

    def place(self, edited: EditedTarget, *, client: str | None = None,
              seq: int | None = None) -> dict:
        """Design the edited target; the reply the page draws.

        Parameters
        ----------
        edited : EditedTarget
        client, seq : optional
            The page's id and the request's number: a request older than
            the page's newest is answered ``{"superseded": true}`` unplaced.

        Returns
        -------
        dict
            ``ok`` True with ``sections`` (each as in the design JSON, plus
            ``slot``, ``schematic_svg``, ``curves``, ``replaced``), or
            ``ok`` False with ``unreachable`` (``slot``, ``reason``).

        Raises
        ------
        SpecError
            When the spec's op-amp cannot serve the edited sections.
        """
        with self._work:
            if self._superseded(client, seq):
                return {"ok": False, "superseded": True, "seq": seq}
            started = time.perf_counter()
            spec = replace(self.spec, target=edited.target)
            tracker = _Tracker()
            wanted = tuple(e.section() for e in edited.edits)
            try:
                result = self._design(spec, tracker)
            except UnreachableTarget as error:
                slot = None
                if tracker.last is not None:
                    slot = match_slots((tracker.last,), wanted)[0]
                return {"ok": False, "seq": seq, "edits": [e.to_dict() for e in edited.edits],
                        "unreachable": {"slot": slot, "reason": str(error),
                                        "alternatives": list(error.alternatives)},
                        "elapsed_s": time.perf_counter() - started}
            reply = self._reply(result, wanted, tracker)
            reply.update(seq=seq, edits=[e.to_dict() for e in edited.edits],
                         elapsed_s=time.perf_counter() - started)
            return reply

    def _reply(self, result: Design, wanted: tuple, tracker: _Tracker) -> dict:
        data = design_to_dict(result)
        slots = match_slots(tuple(s.section for s in result.sections), wanted)
        sections = []
        for built, entry, slot in zip(result.sections, data["sections"], slots):
            entry = dict(entry)

            def draw(built: SectionDesign = built) -> tuple[str, dict]:
                return (circuit_svg(built.circuit, title=built.circuit.name),
                        section_curves(built.section, built.circuit).to_dict())
            drawing, _ = self._drawings.get((built.section, built.circuit), draw)
            entry.update(slot=slot, schematic_svg=drawing[0], curves=drawing[1],
                         replaced=built.section in tracker.placed)
            sections.append(entry)
        reply = {"ok": True, "title": data["title"], "sections": sections,
                 "target": data["target"], "achieved": data["achieved"]}
        if "mask" in data:
            reply["mask"] = data["mask"]
        return reply

    # -- downloads -----------------------------------------------------------------

    def spec_text(self, edited: EditedTarget) -> str:
        """The spec file the edited target makes (TOML)."""
        return edited_spec_text(self.spec.raw, edited.table, title=self.spec.title,
                                source=self.source)

    def download(self, kind: str, edited: EditedTarget) -> Download:
        """A file of the edited design, byte for byte what the CLI writes.

        Parameters
        ----------
        kind : {"spec", "json", "bom", "html"}
            The spec file; or, for that spec saved under its download name
            and designed with ``placer design NAME --json/--bom/--report``,
            the design JSON, the BOM CSV or the HTML report.
        edited : EditedTarget

        Returns
        -------
        Download

        Raises
        ------
        SpecError
            For an unknown kind, or a spec the design rejects.
        UnreachableTarget
            When a section cannot be reached.
        """
        if kind not in DOWNLOADS:
            raise SpecError(f"download must be one of {', '.join(DOWNLOADS)}, not {kind!r}")
        suffix, media = DOWNLOADS[kind]
        text = self.spec_text(edited)
        spec_name = self.saved_stem + DOWNLOADS["spec"][0]
        if kind == "spec":
            return Download(spec_name, media, text.encode("utf-8"))
        with self._work:
            spec = spec_from_dict(tomllib.loads(text), source=spec_name)
            result = self._design(spec, _Tracker())
            if kind == "bom":
                opamps = [(e.name, "op-amp") for e in result.circuit.elements if e.kind == "opamp"]
                rows = bom_rows(result.parts, tolerances=spec.tolerance.tolerances, opamps=opamps,
                                amplifier=spec.amplifier)
                body = bom_csv(rows)
            else:
                evidence = gather_evidence(result, workers=1)
                prelayout = check_design(result)
                data = design_to_dict(result, evidence=evidence.to_dict(),
                                      prelayout=prelayout.to_dict())
                if kind == "json":
                    body = json.dumps(data, indent=2, allow_nan=False) + "\n"
                else:
                    body = write_design_report(result, data, evidence, spec_text=text,
                                               prelayout=prelayout).html_text
        return Download(self.saved_stem + suffix, media, body.encode("utf-8"))
