"""What input files may say: every table's keys and types, and value bounds.

One table in code holds the accepted keys of every table of a spec file
(:data:`SPEC_TABLES`), of a topology file (:data:`TOPOLOGY_KEYS`), of a
circuit file (:data:`CIRCUIT_KEYS`) and of an element (:data:`ELEMENT_KEYS`);
the readers check against it (:func:`check_table`), so a key the readers
accept is a key listed here. Each entry names the value's type and says
what it means, for people and for generated documentation.

:data:`LIMITS` holds the bounds of the figures a person types (frequencies,
Q, ripple, attenuation, gains); part values have theirs beside the part
kinds in :mod:`placer.circuit.elements`. :func:`read_toml` reads an input file with
one-line errors for every way a file can be bad (missing, a directory, a
path too long, not UTF-8, not TOML, nested too deeply).

Examples
--------
>>> check_table({"ordering": "as-given"}, "cascade", source="spec.toml")
>>> check_table({"response": ["lowpass"]}, "target", source="s.toml")
Traceback (most recent call last):
...
placer.errors.SpecError: s.toml: target.response = ['lowpass'] must be a string naming one of the accepted choices (lowpass, highpass, bandpass, bandstop, allpass or custom)
"""

from __future__ import annotations

import difflib
import errno
import math
import numbers
import tomllib
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from .errors import SpecError, brief, brief_path

__all__ = [
    "Key",
    "Limit",
    "TYPES",
    "SPEC_TABLES",
    "PLANT_TABLES",
    "TOPOLOGY_KEYS",
    "CIRCUIT_KEYS",
    "ELEMENT_KEYS",
    "LIMITS",
    "check_table",
    "check_type",
    "unknown_key",
    "check_limit",
    "read_toml",
    "check_path",
]


@dataclass(frozen=True)
class Key:
    """One key of a table: its type (a name in :data:`TYPES`) and meaning.

    Parameters
    ----------
    type : str
        One of :data:`TYPES`.
    description : str
        What the key means, with its unit where it has one.
    unit : str
        The unit a number of this key carries (``""``: none or several).
    """

    type: str
    description: str
    unit: str = ""


#: Type name → the words a message uses for it.
TYPES = {
    "string": "a string",
    "name": "a string naming one of the accepted choices",
    "integer": "a whole number",
    "boolean": "true or false",
    "number": "a number or an engineering string such as '10k'",
    "pair": "a list of two numbers [low, high]",
    "numbers": "a list of numbers",
    "strings": "a list of strings",
    "roots": "a list of numbers or [re, im] pairs",
    "table": "a table",
    "tables": "a list of tables",
    "values": "a table of part = number",
    "ranges": "a table of part = [low, high]",
}

_SERIES = "IEC 60063 series name (E3, E6, E12, E24, E48, E96, E192)"

#: Every table of a spec file: table name → {key: Key}. ``""`` is the top level.
SPEC_TABLES: dict[str, dict[str, Key]] = {
    "": {
        "title": Key("string", "one line naming the design"),
        "description": Key("string", "free text for people"),
        "target": Key("table", "what to realise"),
        "cascade": Key("table", "section order and gain distribution"),
        "parts": Key("table", "part series, ranges, fixed parts, constraints"),
        "candidates": Key("table", "the topologies to try"),
        "tolerance": Key("table", "part tolerances, Monte Carlo and yield windows"),
        "amplifier": Key("table", "a real op-amp model (absent: ideal)"),
        "loop": Key("table", "a control loop to compensate"),
        "noise": Key("table", "noise band, temperature and target (pre-layout checks)"),
        "signal": Key("table", "the full-scale input (pre-layout checks)"),
    },
    "target": {
        "response": Key("name", "lowpass, highpass, bandpass, bandstop, allpass or custom"),
        "approximation": Key("name", "butterworth, chebyshev1, chebyshev2, bessel, "
                                     "elliptic or linkwitz-riley"),
        "order": Key("integer", "prototype order, 1-12"),
        "cutoff": Key("number", "the -3 dB frequency, Hz", "Hz"),
        "crossover": Key("number", "linkwitz-riley only: the -6 dB frequency, where each of "
                                   "the two Butterworth halves is -3 dB, Hz", "Hz"),
        "center": Key("number", "band centre (geometric), Hz", "Hz"),
        "bandwidth": Key("number", "-3 dB band width, Hz", "Hz"),
        "passband_edge": Key("number", "where the loss reaches the ripple, Hz", "Hz"),
        "stopband_edge": Key("number", "where the loss reaches the attenuation, Hz", "Hz"),
        "low_edge": Key("number", "lower -3 dB band edge, Hz", "Hz"),
        "high_edge": Key("number", "upper -3 dB band edge, Hz", "Hz"),
        "ripple": Key("number", "pass-band ripple, dB", "dB"),
        "attenuation": Key("number", "stop-band attenuation, dB", "dB"),
        "gain": Key("number", "pass-band level, dB", "dB"),
        "bessel_norm": Key("name", "mag, delay or phase"),
        "poles": Key("roots", "poles, in units"),
        "zeros": Key("roots", "zeros, in units"),
        "units": Key("name", "Hz or rad/s, for poles and zeros"),
        "sections": Key("tables", "sections given by f0, q, zero_f0, kind"),
        "complete_conjugates": Key("boolean", "add the missing partner of each complex root"),
        "allow_unstable": Key("boolean", "accept right-half-plane poles"),
        "margin": Key("number", "design headroom in ripple and attenuation, dB", "dB"),
    },
    "target.sections": {
        "kind": Key("name", "lowpass, highpass, bandpass, notch or allpass"),
        "f0": Key("number", "natural frequency, Hz", "Hz"),
        "q": Key("number", "quality factor (absent: first order)"),
        "zero_f0": Key("number", "a notch's zero frequency, Hz", "Hz"),
    },
    "cascade": {
        "ordering": Key("name", "ascending-q, descending-q or as-given"),
        "gain_distribution": Key("name", "headroom, first or equal"),
    },
    "parts": {
        "resistor_series": Key("name", _SERIES),
        "capacitor_series": Key("name", _SERIES),
        "inductor_series": Key("name", _SERIES),
        "resistor_range": Key("pair", "[low, high] of a free resistor, ohm", "ohm"),
        "capacitor_range": Key("pair", "[low, high] of a free capacitor, F", "F"),
        "inductor_range": Key("pair", "[low, high] of a free inductor, H", "H"),
        "fixed": Key("values", "parts held at a value, such as { R3 = \"10k\" }"),
        "constraints": Key("strings", "ties such as \"C1 = C2\" or \"R2 = 4*R1\""),
    },
    "candidates": {
        "topologies": Key("strings", "library ids, ids of the folder's files, or .toml paths"),
        "folder": Key("string", "a folder of your own topology files"),
    },
    "tolerance": {
        "resistor": Key("number", "resistor tolerance, such as \"1%\"", "%"),
        "capacitor": Key("number", "capacitor tolerance, such as \"5%\"", "%"),
        "inductor": Key("number", "inductor tolerance, such as \"10%\"", "%"),
        "distribution": Key("name", "uniform or gaussian"),
        "samples": Key("integer", "Monte Carlo builds"),
        "seed": Key("integer", "random seed, >= 0"),
        "f0": Key("number", "yield window on f0, such as \"2%\"", "%"),
        "q": Key("number", "yield window on Q, such as \"5%\"", "%"),
        "gain": Key("number", "yield window on the gain, dB", "dB"),
        "rejection": Key("number", "a notch's least rejection at its zero frequency, dB", "dB"),
    },
    "amplifier": {
        "gbw": Key("number", "gain-bandwidth product, Hz", "Hz"),
        "gain": Key("number", "DC open-loop gain, dB (\"100 dB\") or V/V (a number)"),
        "output_resistance": Key("number", "open-loop output resistance, ohm", "ohm"),
        "preset": Key("name", "a named generic op-amp model"),
        "noise_voltage": Key("number", "input voltage noise density, V/rtHz (\"8 nV/rtHz\")"),
        "noise_current": Key("number", "input current noise density, A/rtHz (\"0.5 pA/rtHz\")"),
        "output_swing": Key("number", "peak output swing, V", "V"),
        "slew_rate": Key("number", "slew rate, V/s (\"0.5 V/us\")"),
        "load_capacitance": Key("number", "capacitance at each op-amp output, F", "F"),
        "min_load": Key("number", "least load an op-amp may drive, ohm (default 2k)", "ohm"),
    },
    "noise": {
        "band": Key("pair", "[low, high] band of the integrated noise, Hz (default: a decade "
                            "below the lowest pole to a decade above the highest)", "Hz"),
        "temperature": Key("number", "temperature, K (default 300 K; \"27 degC\" also works)"),
        "target": Key("number", "integrated output noise to meet, V rms (\"5 uV\")", "V"),
    },
    "signal": {
        "amplitude": Key("number", "full-scale input, V peak (default 1 V)", "V"),
    },
    "loop": {
        "plant": Key("table", "the plant (see loop.plant)"),
        "crossover": Key("number", "loop crossover frequency, Hz", "Hz"),
        "phase_margin": Key("number", "phase margin, degrees", "deg"),
        "compensator": Key("name", "type2 or type3"),
        "margin_floor": Key("number", "least phase margin a Monte Carlo build may have, deg",
                            "deg"),
        "r1": Key("number", "upper feedback resistor, ohm", "ohm"),
        "resistor_series": Key("name", _SERIES + "; or [parts] resistor_series"),
        "capacitor_series": Key("name", _SERIES + "; or [parts] capacitor_series"),
    },
}

_CONVERTER = {
    "type": Key("name", "buck or boost"),
    "vin": Key("number", "input voltage, V", "V"),
    "inductance": Key("number", "inductance, H", "H"),
    "capacitance": Key("number", "output capacitance, F", "F"),
    "esr": Key("number", "output capacitor ESR, ohm (default 0)", "ohm"),
    "load": Key("number", "load resistance, ohm", "ohm"),
    "ramp": Key("number", "peak-to-peak PWM ramp, V", "V"),
}

#: The keys of ``[loop.plant]`` for each plant ``type``.
PLANT_TABLES: dict[str, dict[str, Key]] = {
    "roots": {
        "type": Key("name", "roots"),
        "poles": Key("roots", "poles, in units"),
        "zeros": Key("roots", "zeros, in units"),
        "units": Key("name", "Hz (default) or rad/s"),
        "gain": Key("number", "the constant k of k*prod(s - z)/prod(s - p)"),
        "dc_gain": Key("number", "the low-frequency gain"),
        "description": Key("string", "one line for people"),
    },
    "coefficients": {
        "type": Key("name", "coefficients"),
        "numerator": Key("numbers", "N(s) coefficients, highest power first, s in rad/s"),
        "denominator": Key("numbers", "D(s) coefficients, highest power first"),
        "description": Key("string", "one line for people"),
    },
    "buck": dict(_CONVERTER),
    "boost": {
        **_CONVERTER,
        "vout": Key("number", "output voltage, V (or duty)", "V"),
        "duty": Key("number", "duty cycle, 0-1 (or vout)"),
    },
}

#: Top-level keys of a topology file (docs/topology-format.md).
TOPOLOGY_KEYS: dict[str, Key] = {
    "id": Key("string", "unique id, lowercase letters, digits and '-'"),
    "title": Key("string", "one line for people"),
    "response": Key("name", "lowpass, highpass, bandpass, notch, allpass or compensator"),
    "order": Key("integer", "denominator order with ideal op-amps"),
    "family": Key("string", "sub-kind of a compensator"),
    "inverting": Key("boolean", "true when the pass-band gain is negative"),
    "reference": Key("string", "reference node (default gnd)"),
    "input": Key("string", "input node (default vin)"),
    "output": Key("string", "output node (default vout)"),
    "free": Key("strings", "symbols the solver may move"),
    "constraints": Key("strings", "ties such as \"C1 = C2\""),
    "description": Key("string", "a sentence or two"),
    "formula": Key("string", "the published formula, with its source"),
    "ranges": Key("ranges", "per-symbol [low, high]"),
    "values": Key("values", "default values of symbols that are not free"),
    "elements": Key("tables", "the circuit's elements"),
    "drawing": Key("table", "how the schematic is laid out (see the drawing description)"),
    "notch_kinds": Key("strings", "the notch sections a notch topology realises: notch, "
                                  "lowpass-notch, highpass-notch"),
    "capacitor_ratio_per_q2": Key("number", "k of the capacitor ratio C1/C2 >= k*Q^2 the stage "
                                            "needs (4 for a unity-gain Sallen-Key)"),
    "gbw_rule": Key("boolean", "true when GBW >= 100*f0*Q is stated for this stage "
                               "(Sallen-Key, multiple feedback)"),
}

#: Top-level keys of a circuit file (``placer analyze FILE``).
CIRCUIT_KEYS: dict[str, Key] = {
    "reference": Key("string", "reference node (default gnd)"),
    "input": Key("string", "input node (default vin)"),
    "output": Key("string", "output node (default vout)"),
    "elements": Key("tables", "the circuit's elements"),
}

#: Keys of one element table, in a topology or a circuit file.
ELEMENT_KEYS: dict[str, Key] = {
    "name": Key("string", "unique name in the circuit"),
    "kind": Key("name", "resistor, capacitor, inductor, vsource, isource, vcvs, vccs, "
                        "cccs, ccvs or opamp"),
    "nodes": Key("strings", "node names in the kind's order"),
    "value": Key("number", "the part's value, in its kind's unit"),
    "symbol": Key("string", "symbolic name of the value (or a source's gain)"),
    "gain": Key("number", "a controlled source's gain; an op-amp's DC gain, V/V"),
    "gbw": Key("number", "an op-amp's gain-bandwidth product, Hz", "Hz"),
    "control": Key("string", "the vsource whose current controls a cccs or ccvs"),
}


@dataclass(frozen=True)
class Limit:
    """Sane bounds of a figure: ``low <= value <= high``, in ``unit``."""

    low: float
    high: float
    unit: str
    what: str


#: Bounds of the figures a person types. Past them the numerics lose
#: meaning (a 4000 dB ripple overflows a double) long before any real
#: filter needs them (common practice, no source).
LIMITS: dict[str, Limit] = {
    "frequency": Limit(1e-3, 1e10, "Hz", "a frequency"),
    "q": Limit(0.01, 1000.0, "", "a Q"),
    "ripple": Limit(1e-4, 20.0, "dB", "a pass-band ripple"),
    "attenuation": Limit(1e-4, 200.0, "dB", "a stop-band attenuation"),
    "gain_db": Limit(-200.0, 200.0, "dB", "a gain"),
    "window_db": Limit(1e-6, 100.0, "dB", "a gain window"),
    "rejection_db": Limit(1e-6, 300.0, "dB", "a rejection"),
    "samples": Limit(1, 10_000_000, "", "a number of Monte Carlo samples"),
    "opamp_gbw": Limit(100.0, 1e11, "Hz", "an op-amp gain-bandwidth product"),
    "opamp_gain": Limit(1.0, 1e10, "V/V", "an op-amp DC gain"),
    "opamp_output_resistance": Limit(1e-3, 1e6, "ohm", "an op-amp output resistance"),
    "voltage": Limit(1e-6, 1e6, "V", "a voltage"),
    "plant_gain": Limit(1e-12, 1e12, "", "a plant gain"),
    "margin_deg": Limit(-180.0, 180.0, "deg", "a phase margin"),
    "margin_db": Limit(0.0, 20.0, "dB", "a design margin"),
}


def check_limit(value: float, name: str, where: str, *, shown: Any = None) -> float:
    """Return `value` if it lies within ``LIMITS[name]``, else raise.

    Parameters
    ----------
    value : float
        The number read (in the limit's unit).
    name : str
        A key of :data:`LIMITS`.
    where : str
        File and field, for the message.
    shown : object, optional
        What the person wrote (default: `value`).

    Raises
    ------
    SpecError
        Naming the field, the value and the accepted span.

    Examples
    --------
    >>> check_limit(4000.0, "ripple", "s.toml: target.ripple", shown="4000 dB")
    Traceback (most recent call last):
    ...
    placer.errors.SpecError: s.toml: target.ripple = '4000 dB' is outside the accepted span of a pass-band ripple, 0.0001 to 20 dB
    """
    limit = LIMITS[name]
    if not (math.isfinite(value) and limit.low <= value <= limit.high):
        unit = f" {limit.unit}" if limit.unit else ""
        raise SpecError(
            f"{where} = {brief(value if shown is None else shown)} is outside the accepted "
            f"span of {limit.what}, {limit.low:g} to {limit.high:g}{unit}"
        )
    return value


def unknown_key(key: Any, accepted: Mapping[str, Any] | tuple, where: str, *,
                noun: str = "key") -> SpecError:
    """The error for a key a table does not accept: the nearest and the list.

    Examples
    --------
    >>> print(unknown_key("cutof", SPEC_TABLES["cascade"], "s.toml: [cascade]"))
    s.toml: [cascade]: unknown key 'cutof' (accepted: ordering, gain_distribution)
    """
    names = list(accepted)
    text = str(key)
    close = difflib.get_close_matches(text, names, n=1) if len(text) <= 100 else []
    hint = f"; did you mean {close[0]!r}?" if close else ""
    return SpecError(f"{where}: unknown {noun} {brief(key)}{hint} (accepted: {', '.join(names)})")


def _is_number(value: Any) -> bool:
    return isinstance(value, (numbers.Real, str)) and not isinstance(value, bool)


def _list_ok(value: Any, item_ok: Callable[[Any], bool]) -> int | None:
    """Index of the first bad item of a list (None when all are good)."""
    for i, item in enumerate(value):
        if not item_ok(item):
            return i
    return None


def _root_ok(item: Any) -> bool:
    if isinstance(item, list):
        return len(item) == 2 and all(_is_number(x) for x in item)
    return _is_number(item)


_ITEM_CHECKS = {
    "numbers": (_is_number, "a number"),
    "strings": (lambda item: isinstance(item, str), "a string"),
    "roots": (_root_ok, "a number or an [re, im] pair"),
    "tables": (lambda item: isinstance(item, dict), "a table"),
}


def _pair_ok(value: Any) -> bool:
    return isinstance(value, list) and len(value) == 2 and all(map(_is_number, value))


def _check_entries(value: dict, type_name: str, where: str) -> None:
    """Each entry of a ``values`` or ``ranges`` table."""
    check, words = (_is_number, "a number") if type_name == "values" else (_pair_ok, TYPES["pair"])
    for name, item in value.items():
        if not check(item):
            raise SpecError(f"{where}.{brief(name, quote=False)} = {brief(item)} must be {words}")


def check_type(value: Any, type_name: str, where: str, meaning: str = "") -> None:
    """Raise SpecError unless `value` has the type `type_name` names.

    Parameters
    ----------
    value : object
        The value as TOML gave it.
    type_name : str
        A key of :data:`TYPES`.
    where : str
        File and field (``"s.toml: [target] order"``), for the message.
    meaning : str, optional
        What the field is, added to the message in parentheses.

    Examples
    --------
    >>> check_type(["lowpass"], "name", "s.toml: [target] response")
    Traceback (most recent call last):
    ...
    placer.errors.SpecError: s.toml: [target] response = ['lowpass'] must be a string naming one of the accepted choices
    """
    expected = TYPES[type_name]
    if type_name in ("string", "name"):
        good = isinstance(value, str)
    elif type_name == "integer":
        good = isinstance(value, int) and not isinstance(value, bool)
    elif type_name == "boolean":
        good = isinstance(value, bool)
    elif type_name == "number":
        good = _is_number(value)
    elif type_name == "pair":
        good = _pair_ok(value)
    elif type_name in ("table", "values", "ranges"):
        good = isinstance(value, dict)
        if good and type_name != "table":
            _check_entries(value, type_name, where)
    else:
        good = isinstance(value, list)
        check, words = _ITEM_CHECKS[type_name]
        bad = _list_ok(value, check) if good else None
        if bad is not None:
            raise SpecError(f"{where}[{bad}] = {brief(value[bad])} must be {words}")
    if not good:
        about = f" ({meaning})" if meaning else ""
        raise SpecError(f"{where} = {brief(value)} must be {expected}{about}")


def check_table(table: Any, name: str, *, source: str, label: str | None = None,
                keys: Mapping[str, Key] | None = None) -> None:
    """Check a table's keys and the type of each value against the schema.

    Parameters
    ----------
    table : object
        The table as TOML gave it.
    name : str
        A key of :data:`SPEC_TABLES` (``""``: the top level; ignored when
        `keys` is given).
    source : str
        The file, for messages.
    label : str, optional
        The table's dotted name in messages (default `name`), such as
        ``"target.sections[0]"``.
    keys : mapping, optional
        The accepted keys, instead of ``SPEC_TABLES[name]``.

    Raises
    ------
    SpecError
        A table that is not a table, an unknown key (with the nearest and
        the accepted list), or a value of the wrong type (naming the type
        and what the key means).

    Examples
    --------
    >>> check_table({"ordering": "as-given"}, "cascade", source="spec.toml")
    >>> check_table({"order": "4"}, "target", source="s.toml")
    Traceback (most recent call last):
    ...
    placer.errors.SpecError: s.toml: target.order = '4' must be a whole number (prototype order, 1-12)
    >>> check_table({"tagret": {}}, "", source="s.toml")
    Traceback (most recent call last):
    ...
    placer.errors.SpecError: s.toml: unknown key 'tagret'; did you mean 'target'? (accepted: title, description, target, cascade, parts, candidates, tolerance, amplifier, loop, noise, signal)
    """
    accepted = SPEC_TABLES[name] if keys is None else keys
    label = name if label is None else label
    if not isinstance(table, dict):
        raise SpecError(f"{source}: [{label}] must be a table, not {brief(table)}")
    where = f"{source}: [{label}]" if label else source
    prefix = f"{source}: {label}." if label else f"{source}: "
    for key, value in table.items():
        if key not in accepted:
            raise unknown_key(key, accepted, where)
        check_type(value, accepted[key].type, f"{prefix}{key}", accepted[key].description)


def check_path(path: str | Path, *, what: str, folder: bool = False) -> Path:
    """Return `path` if it names an existing file (or folder), else raise.

    Raises
    ------
    SpecError
        For a path that does not exist, is of the other sort (a folder
        where a file is wanted or the reverse), is too long, or cannot be
        looked at.

    Examples
    --------
    >>> check_path("/", what="spec file")
    Traceback (most recent call last):
    ...
    placer.errors.SpecError: spec file '/' is a directory, not a file
    """
    path = Path(path)
    shown = brief_path(path, quote=True)
    try:
        exists, is_dir = path.exists(), path.is_dir()
    except OSError as error:
        if error.errno == errno.ENAMETOOLONG:
            raise SpecError(f"{what} {shown}: the path is too long for the file system "
                            f"({len(str(path))} characters)") from None
        raise SpecError(f"{what} {shown} cannot be looked at ({error.strerror or error})") from None
    except ValueError:  # a NUL byte in the path
        raise SpecError(f"{what} {shown} is not a valid path (it holds a NUL byte)") from None
    if not exists:
        raise SpecError(f"{what} {shown} does not exist")
    if folder and not is_dir:
        raise SpecError(f"{what} {shown} is a file, not a folder")
    if not folder and is_dir:
        raise SpecError(f"{what} {shown} is a directory, not a file")
    return path


def read_toml(path: str | Path, *, what: str = "spec file") -> dict:
    """Read a TOML input file, with a one-line SpecError for every failure.

    Parameters
    ----------
    path : str or Path
    what : str
        What the file is, for messages ("spec file", "topology file").

    Returns
    -------
    dict
        The parsed file.

    Raises
    ------
    SpecError
        A missing file, a directory, a path too long, an unreadable file,
        bytes that are not UTF-8, text that is not TOML, or nesting too
        deep to parse.
    """
    path = check_path(path, what=what)
    shown = brief_path(path)
    try:
        data = path.read_bytes()
    except OSError as error:
        raise SpecError(f"{shown}: cannot be read ({error.strerror or error})") from None
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as error:
        raise SpecError(f"{shown}: not UTF-8 text (byte 0x{data[error.start]:02x} at "
                        f"offset {error.start}); save the file as UTF-8") from None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        raise SpecError(f"{shown}: not valid TOML ({brief(str(error), quote=False)})") from None
    except RecursionError:
        raise SpecError(f"{shown}: arrays or tables nested too deeply to read "
                        "(input files nest a few levels at most)") from None
