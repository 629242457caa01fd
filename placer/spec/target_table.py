"""The ``[target]`` table of a spec file, read into a Target and back.

:func:`target_from_table` reads the table a person writes (frequencies in
hertz, levels in dB, engineering strings through :mod:`placer.units`)
into a :class:`placer.target.targets.Target`, naming the key and value at fault
in every error; :func:`target_to_dict` gives a target and its sections
the JSON shape the ``target`` command and the reports write.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import replace
from typing import Any, NoReturn, cast

import numpy as np

from placer.target.approximations import (
    APPROXIMATIONS,
    BESSEL_NORMS,
    MAX_ORDER,
    band_from_edges,
    check_order,
    estimate_order,
    suggest,
)
from placer.errors import SpecError, brief
from placer.schema import LIMITS, SPEC_TABLES, check_limit, check_type
from placer.target.mask import Mask, approximation_mask, grid_figures, headroom_design, mask_grid
from placer.target.sections import split_sections
from placer.target.targets import (
    NOTCH_KINDS,
    RESPONSES,
    ROOT_UNITS,
    SECTION_KINDS,
    Section,
    Target,
    design_target,
    make_section,
    target_from_roots,
    target_from_sections,
)
from placer.units import parse_value

__all__ = [
    "TARGET_KEYS",
    "SECTION_KEYS",
    "target_from_table",
    "target_to_dict",
]

TARGET_KEYS = tuple(SPEC_TABLES["target"])
SECTION_KEYS = tuple(SPEC_TABLES["target.sections"])

_TWO_PI = 2.0 * math.pi


class _TableReader:
    """Reads a table's keys, naming source, key and value in every error."""

    def __init__(self, table: Any, source: str, where: str, schema: Mapping) -> None:
        if not isinstance(table, Mapping):
            raise SpecError(f"{source}: {where} must be a table, not {brief(table)}")
        for key, value in table.items():
            if key not in schema:
                hint = suggest(key, schema) if len(str(key)) <= 100 else ""
                raise SpecError(f"{source}: unknown key {where}.{brief(key, quote=False)} = "
                                f"{brief(value)}{hint} (accepted: {', '.join(schema)})")
            check_type(value, schema[key].type, f"{source}: {where}.{key}",
                       schema[key].description)
        self.table, self.source, self.where = table, source, where
        self.used: set[str] = set()

    def __contains__(self, key: object) -> bool:
        return key in self.table

    def fail(self, key: str, detail: str) -> NoReturn:
        raise SpecError(f"{self.source}: {self.where}.{key} = "
                        f"{brief(self.table.get(key))} {detail}")

    def raw(self, key: str, default: Any = None) -> Any:
        self.used.add(key)
        return self.table.get(key, default)

    def number(self, key: str, unit: str | None, limit: str, *,
               positive: bool = True) -> float | None:
        """The key's number in `unit`, within ``LIMITS[limit]``; None if absent."""
        if key not in self.table:
            return None
        where = f"{self.source}: {self.where}.{key}"
        value = parse_value(self.raw(key), unit=unit, field=where)
        if positive and not value > 0:
            self.fail(key, "must be positive")
        return check_limit(value, limit, where, shown=self.table[key])

    def flag(self, key: str) -> bool:
        value = self.raw(key, False)
        if not isinstance(value, bool):
            self.fail(key, "must be true or false")
        return value

    def choice(self, key: str, valid: Sequence[str], default: str | None = None, *,
               fold: bool = False) -> str:
        value = self.raw(key, default)
        lookup = {v.lower(): v for v in valid} if fold else {v: v for v in valid}
        found = lookup.get(value.lower() if fold and isinstance(value, str) else value)
        if found is None:
            hint = suggest(value, valid) if len(str(value)) <= 100 else ""
            self.fail(key, f"is not one of {', '.join(valid)}" + hint)
        return found

    def check_all_used(self, context: str) -> None:
        for key in self.table:
            if key not in self.used:
                self.fail(key, f"has no meaning for {context}; remove it")


_SECTION_DEFAULT_KIND = {"lowpass": "lowpass", "highpass": "highpass",
                         "bandpass": "bandpass", "bandstop": "notch",
                         "allpass": "allpass", "custom": "lowpass"}


def _read_roots(reader: _TableReader, key: str, units: str) -> list[complex]:
    raw = reader.raw(key, [])
    if not isinstance(raw, Sequence) or isinstance(raw, str):
        reader.fail(key, "must be a list of numbers or [re, im] pairs")
    roots = []
    # A root's size in Hz must lie in the frequency bounds (or be 0).
    to_hz = 1.0 / _TWO_PI if units == "rad/s" else 1.0
    frequency = LIMITS["frequency"]
    for i, item in enumerate(raw):
        field = f"{reader.source}: {reader.where}.{key}[{i}]"
        if isinstance(item, Sequence) and not isinstance(item, str):
            if len(item) != 2:
                raise SpecError(f"{field} = {brief(item)} must be a number or an [re, im] pair")
            root = complex(*(parse_value(x, unit=units, field=field) for x in item))
        else:
            root = complex(parse_value(item, unit=units, field=field))
        size = abs(root) * to_hz
        if root != 0 and not frequency.low <= size <= frequency.high:
            raise SpecError(f"{field} = {brief(item)}: a root of size {size:g} Hz lies outside "
                            f"{frequency.low:g} to {frequency.high:g} Hz (or give 0)")
        roots.append(root)
    return roots


def _read_sections(reader: _TableReader, response: str) -> list[Section]:
    raw = reader.raw("sections")
    if not isinstance(raw, Sequence) or isinstance(raw, str) or not raw:
        reader.fail("sections", "must be a non-empty list of tables with f0, q, zero_f0")
    sections = []
    for i, table in enumerate(raw):
        entry = _TableReader(table, reader.source, f"{reader.where}.sections[{i}]",
                             SPEC_TABLES["target.sections"])
        if "f0" not in entry:
            raise SpecError(f"{reader.source}: {entry.where} needs f0 (Hz)")
        f0 = cast(float, entry.number("f0", "Hz", "frequency"))  # present: checked above
        q = entry.number("q", None, "q")
        zero_f0 = entry.number("zero_f0", "Hz", "frequency")
        default = "notch" if zero_f0 is not None else _SECTION_DEFAULT_KIND[response]
        kind = entry.choice("kind", SECTION_KINDS, default)
        if kind in NOTCH_KINDS and zero_f0 is None:
            if kind != "notch":
                raise SpecError(f"{reader.source}: {entry.where} is a {kind} section "
                                "and needs zero_f0 (Hz)")
            zero_f0 = f0
        if kind not in NOTCH_KINDS and zero_f0 is not None:
            entry.fail("zero_f0", f"applies to notch sections only, not kind = {kind!r}")
        if kind in ("bandpass",) + NOTCH_KINDS and q is None:
            raise SpecError(f"{reader.source}: {entry.where} is a {kind} section "
                            "and needs q")
        try:
            sections.append(make_section(kind, _TWO_PI * f0, q, zero_omega=(
                None if zero_f0 is None else _TWO_PI * zero_f0)))
        except SpecError as exc:
            raise SpecError(f"{reader.source}: {entry.where}: {exc}") from None
    return sections


def _crossover(reader: _TableReader, response: str, approximation: str | None,
               edges: tuple[str, ...]) -> tuple[dict[str, Any], tuple[float, float] | None]:
    """``crossover``: a Linkwitz–Riley low- or high-pass's −6 dB frequency.

    A Linkwitz–Riley response of order n is two Butterworths of order n/2
    in cascade; at the crossover each is −3 dB, so the pair is −6.02 dB
    and the low- and high-pass branches sum flat. That is the prototype's
    natural scale (``normalisation="natural"``), as ``cutoff`` is the −3 dB
    point of the whole response, (√2 + 1)^(1/n) times lower.
    """
    if approximation != "linkwitz-riley":
        reader.fail("crossover", f"applies to a linkwitz-riley target only (the -6 dB point of "
                                 f"the pair); a {approximation} target takes cutoff (-3 dB)")
    if response not in ("lowpass", "highpass"):
        reader.fail("crossover", f"applies to a lowpass or highpass target, not {response}")
    given = [k for k in edges if k in reader]
    if given:
        reader.fail("crossover", f"and {given[0]} both set the frequency: give crossover "
                                 f"(-6 dB) or {given[0]}, not both")
    return dict(frequency_hz=reader.number("crossover", "Hz", "frequency"),
                normalisation="natural"), None


def _read_frequencies(reader: _TableReader, response: str, approximation: str | None = None,
                      ) -> tuple[dict[str, Any], tuple[float, float] | None]:
    """Frequency keys → keyword arguments of design_target, plus a mask."""
    if response in ("bandpass", "bandstop"):
        present = {k for k in ("center", "bandwidth", "low_edge", "high_edge") if k in reader}
        if present == {"center", "bandwidth"}:
            return dict(center_hz=reader.number("center", "Hz", "frequency"),
                        bandwidth_hz=reader.number("bandwidth", "Hz", "frequency")), None
        if present == {"low_edge", "high_edge"}:
            # both present (`present` says so), so neither is None
            low = cast(float, reader.number("low_edge", "Hz", "frequency"))
            high = cast(float, reader.number("high_edge", "Hz", "frequency"))
            if not low < high:
                reader.fail("high_edge", f"must lie above low_edge = {low:g} Hz")
            center, width = band_from_edges(low, high)
            return dict(center_hz=center, bandwidth_hz=width), None
        raise SpecError(f"{reader.source}: a {response} target needs center and "
                        "bandwidth, or low_edge and high_edge (Hz, -3 dB); got "
                        f"{sorted(present) or 'none'}")
    edges = ("cutoff",) if response == "allpass" else ("cutoff", "passband_edge", "stopband_edge")
    if "crossover" in reader:
        return _crossover(reader, response, approximation, edges)
    present = {k for k in edges if k in reader}
    if present == {"passband_edge", "stopband_edge"}:
        mask = cast(tuple[float, float], (reader.number("passband_edge", "Hz", "frequency"),
                                          reader.number("stopband_edge", "Hz", "frequency")))
        return dict(frequency_hz=mask[0], normalisation="passband_edge"), mask
    if len(present) != 1:
        raise SpecError(f"{reader.source}: a {response} target needs one of "
                        f"{', '.join(edges)}"
                        + ("" if response == "allpass" else
                           " (or passband_edge and stopband_edge as a mask)")
                        + f"; got {sorted(present) or 'none'}")
    (key,) = present
    return dict(frequency_hz=reader.number(key, "Hz", "frequency"),
                normalisation="cutoff" if key == "cutoff" else key), None


def _approximation_target(reader: _TableReader, response: str, gain_db: float) -> Target:
    approximation = reader.choice("approximation", APPROXIMATIONS)
    options, mask = _read_frequencies(reader, response, approximation)
    needs_ripple = approximation in ("chebyshev1", "elliptic") or mask or \
        options.get("normalisation") == "passband_edge"
    needs_attenuation = approximation in ("chebyshev2", "elliptic") or mask or \
        options.get("normalisation") == "stopband_edge"
    if mask:
        for key in ("ripple", "attenuation"):
            if key not in reader:
                raise SpecError(
                    f"{reader.source}: target.{key} is missing: passband_edge and stopband_edge "
                    "set a mask, which needs ripple and attenuation (dB, for example "
                    "ripple = \"1 dB\", attenuation = \"40 dB\")")
    ripple = reader.number("ripple", "dB", "ripple") if needs_ripple else None
    attenuation = reader.number("attenuation", "dB", "attenuation") if needs_attenuation else None
    if approximation == "bessel" and options.get("normalisation", "cutoff") == "cutoff":
        norm = reader.choice("bessel_norm", BESSEL_NORMS, "mag")
        options["bessel_norm"] = norm
        if norm != "mag":
            options["normalisation"] = "natural"
    margin = cast(float, reader.number("margin", "dB", "margin_db", positive=False)
                  if "margin" in reader else 0.0)
    if margin and ripple is not None and margin >= ripple:
        reader.fail("margin", f"leaves no ripple to design with: it must be below ripple = "
                              f"{ripple:g} dB")
    order = reader.raw("order")
    try:
        if order is not None:
            check_order(order, approximation)
        if mask:
            estimate = estimate_order(approximation, mask[0], cast(float, ripple) - margin,
                                      mask[1], cast(float, attenuation) + margin,
                                      response=response)
            needed = estimate.order
            if needed is None or needed > MAX_ORDER:
                raise SpecError(f"no {approximation} response of order 1–{MAX_ORDER} meets "
                                f"the mask (passband_edge = {mask[0]:g} Hz, "
                                f"stopband_edge = {mask[1]:g} Hz"
                                + (f", with a {margin:g} dB margin" if margin else "") + ")")
            if order is not None and order < needed:
                raise SpecError(f"order = {order} does not meet the mask"
                                + (f" with a {margin:g} dB margin" if margin else "")
                                + f"; {approximation} needs order {needed}")
            order = needed if order is None else order
        elif order is None:
            raise SpecError("order is required (or give passband_edge and "
                            "stopband_edge, with ripple and attenuation, to "
                            "estimate it)")
        requirement = approximation_mask(
            approximation, order, response=response, ripple_db=ripple,
            attenuation_db=attenuation, level_db=gain_db, margin_db=margin, given=mask,
            **options)
        if margin:
            target = _headroom_target(approximation, order, requirement, margin, response,
                                      gain_db)
        else:
            target = design_target(approximation, order, response=response,
                                   ripple_db=ripple, attenuation_db=attenuation,
                                   gain_db=gain_db, **options)
    except SpecError as exc:
        raise SpecError(f"{reader.source}: [target] {exc}") from None
    target = replace(target, mask=requirement)
    reader.check_all_used(f"a {approximation} {response} target as given")
    return target


def _headroom_target(approximation: str, order: int, mask: Mask | None, margin: float,
                     response: str, gain_db: float) -> Target:
    """The approximation designed `margin` dB inside its mask, or why it cannot be."""
    if mask is None:
        raise SpecError(f"margin = {margin:g} dB needs a mask to keep headroom against: give "
                        "ripple (and passband_edge) or attenuation (and stopband_edge), or an "
                        "approximation that has them")
    options = headroom_design(mask, margin)
    for name in ("ripple_db", "attenuation_db"):
        if options[name] is None:
            options.pop(name)
    target = design_target(approximation, order, response=response, gain_db=gain_db, **options)
    grid = mask_grid(mask)
    response_values = target.frequency_response(2 * math.pi * grid.frequency_hz)
    magnitude = 20 * np.log10(np.maximum(np.abs(response_values), 1e-300))
    figures = grid_figures(mask, grid, magnitude)
    short = [(name, float(value)) for name, value in (
        ("pass band", figures.passband_margin_db), ("stop band", figures.stopband_margin_db))
        if value is not None and value < margin - 1e-3]
    if short:
        name, value = min(short, key=lambda item: item[1])
        hint = "raise the order"
        if response in ("lowpass", "highpass") and mask.passbands_hz and mask.stopbands_hz:
            (pass_band,), (stop_band,) = mask.passbands_hz, mask.stopbands_hz
            edges = [b[1] if b[0] == 0 else b[0] for b in (pass_band, stop_band)]
            # a low-/high-pass mask with both bands has both levels
            needed = estimate_order(approximation, edges[0],
                                    cast(float, mask.ripple_db) - margin, edges[1],
                                    cast(float, mask.attenuation_db) + margin,
                                    response=response).order
            if needed is not None:
                hint = f"{approximation} needs order {needed} for it"
        raise SpecError(
            f"margin = {margin:g} dB: the {approximation} of order {order} has no room for it "
            f"inside its mask ({mask.describe()}; {mask.source}): designed for the margin, its "
            f"{name} would keep {value:+.3f} dB; {hint}, or give the mask as passband_edge and "
            "stopband_edge without order")
    return target


def target_from_table(table: Any, *, source: str = "spec") -> Target:
    """Read a spec file's ``[target]`` table into a :class:`Target`.

    Keys (numbers go through :func:`placer.units.parse_value`; bare
    numbers are Hz for frequencies and dB for levels):

    * ``response``: lowpass (default), highpass, bandpass, bandstop,
      allpass, custom (the default with explicit poles).
    * ``approximation``: butterworth, chebyshev1, chebyshev2, bessel,
      elliptic, linkwitz-riley; with ``order`` (prototype order, 1–12).
    * Low-/high-pass frequency, one of: ``cutoff`` (−3 dB, for every
      family); ``crossover`` (Linkwitz–Riley only: the −6 dB point, where
      each Butterworth half is −3 dB); ``passband_edge`` (where the loss reaches ``ripple``: the
      ripple edge of a Chebyshev I or elliptic); ``stopband_edge`` (where
      it reaches ``attenuation``); or both edges as a mask, with ``ripple``
      and ``attenuation``, which sets the lowest order that meets it when
      ``order`` is absent. Allpass: ``cutoff`` (of the low-pass whose
      poles it borrows). Band responses: ``center`` and ``bandwidth``, or
      ``low_edge`` and ``high_edge`` (−3 dB).
    * ``ripple``, ``attenuation``: dB, as the family needs.
    * ``bessel_norm``: mag (default: ``cutoff`` is −3 dB), delay
      (``cutoff`` = 1/(2π·DC group delay)), phase (``cutoff`` is where
      the Butterworth-like high-frequency asymptote crosses the gain).
    * ``gain``: pass-band level, dB (``"6 dB"`` or 6); default 0 dB.
    * ``poles``, ``zeros``: numbers or ``[re, im]`` pairs in ``units``
      ("Hz" or "rad/s", required), with ``complete_conjugates`` and
      ``allow_unstable`` (default false).
    * ``sections``: tables with ``f0`` (Hz), ``q`` (absent: first order),
      ``zero_f0`` (Hz, notch) and ``kind`` (default from ``response``;
      ``"notch"`` becomes a low-pass notch when ``zero_f0`` lies above
      ``f0``, a high-pass notch below it).

    Parameters
    ----------
    table : dict
        The ``[target]`` table as read from TOML.
    source : str
        Name of the file, for messages.

    Returns
    -------
    Target

    Raises
    ------
    SpecError
        Naming the key and its value: an unknown key (with the nearest
        valid one), an unknown name, an order outside 1–12 or odd for
        linkwitz-riley, a non-positive frequency or level, a stop-band
        edge on the wrong side, a lone complex root, a key that means
        nothing for the target given.

    Examples
    --------
    >>> t = target_from_table({"approximation": "chebyshev1", "order": 3,
    ...                        "ripple": "0.5 dB", "cutoff": "1 kHz", "gain": "6 dB"})
    >>> t.response, t.order, round(t.gain_db, 3)
    ('lowpass', 3, 6.0)
    >>> target_from_table({"approximation": "buterworth", "order": 2, "cutoff": 1e3})
    Traceback (most recent call last):
    ...
    placer.errors.SpecError: spec: target.approximation = 'buterworth' is not one of butterworth, chebyshev1, chebyshev2, bessel, elliptic, linkwitz-riley; did you mean 'butterworth'?
    """
    reader = _TableReader(table, source, "target", SPEC_TABLES["target"])
    explicit = "poles" in reader or "zeros" in reader
    default = "custom" if explicit else "lowpass"
    response = reader.choice("response", RESPONSES, default)
    gain = reader.number("gain", "dB", "gain_db", positive=False)
    gain_db = 0.0 if gain is None else gain
    if explicit:
        if "units" not in reader:
            reader.fail("units", 'is required with poles or zeros: give units = "Hz" '
                                 'or "rad/s"')
        units = reader.choice("units", ROOT_UNITS, fold=True)
        poles, zeros = _read_roots(reader, "poles", units), _read_roots(reader, "zeros", units)
        complete, unstable = reader.flag("complete_conjugates"), reader.flag("allow_unstable")
        reader.check_all_used("a target given by poles and zeros")
        try:
            return target_from_roots(poles, zeros, gain_db=gain_db, response=response,
                                     units=units, complete_conjugates=complete,
                                     allow_unstable=unstable)
        except SpecError as exc:
            raise SpecError(f"{source}: [target] {exc}") from None
    if "sections" in reader:
        sections = _read_sections(reader, response)
        reader.check_all_used("a target given by sections")
        return target_from_sections(sections, gain_db=gain_db, response=response)
    if "approximation" not in reader:
        raise SpecError(f"{source}: [target] needs an approximation, poles, or sections")
    if response == "custom":
        reader.fail("response", "needs poles or sections; an approximation "
                                "gives lowpass, highpass, bandpass, bandstop or allpass")
    return _approximation_target(reader, response, gain_db)


def target_to_dict(target: Target, sections: Sequence[Section] | None = None) -> dict[str, Any]:
    """The JSON shape of a target and its sections.

    Roots are ``[re, im]`` pairs in rad/s; ``reference_frequency_hz`` is
    where ``gain_db`` is quoted, null meaning the high-frequency gain.
    *sections* defaults to ``split_sections(target)``.

    Examples
    --------
    >>> d = target_to_dict(design_target("butterworth", 1, frequency_hz=1.0))
    >>> d["poles"], d["sections"][0]["kind"], d["sections"][0]["q"]
    ([[-6.283185307179586, 0.0]], 'lowpass', None)
    """
    if sections is None:
        sections = split_sections(target)
    reference = target.reference_omega
    return {
        "response": target.response,
        "approximation": target.approximation,
        "order": target.order,
        "poles": [[float(r.real), float(r.imag)] for r in target.poles],
        "zeros": [[float(r.real), float(r.imag)] for r in target.zeros],
        "gain_db": target.gain_db,
        "reference_frequency_hz": None if math.isinf(reference) else reference / _TWO_PI,
        "mask": None if target.mask is None else target.mask.to_dict(),
        "sections": [{
            "kind": s.kind,
            "order": s.order,
            "f0_hz": s.f0_hz,
            "q": s.q,
            "gain_db": s.gain_db,
            "zero_f0_hz": s.zero_f0_hz,
        } for s in sections],
    }
