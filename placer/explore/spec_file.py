"""The explored target written back as a spec file (TOML).

:func:`toml_text` writes the plain data that :mod:`tomllib` reads (tables,
arrays, strings, numbers, booleans, dates) back as TOML; :func:`edited_spec_data`
puts an edited ``[target]`` (the ``sections = [{f0, q, zero_f0}]`` form)
into a spec's own tables, with the paths in ``[candidates]`` made absolute
so the saved file means the same wherever it is put.
"""

from __future__ import annotations

import datetime as _dt
import math
import re
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

__all__ = ["toml_text", "toml_value", "edited_spec_data", "edited_spec_text"]

_BARE_KEY = re.compile(r"[A-Za-z0-9_-]+")
_ESCAPES = {'"': '\\"', "\\": "\\\\", "\b": "\\b", "\t": "\\t", "\n": "\\n", "\f": "\\f",
            "\r": "\\r"}


def _string(text: str) -> str:
    """A TOML basic string: quotes, backslashes and control characters escaped."""
    out = ['"']
    for ch in text:
        if ch in _ESCAPES:
            out.append(_ESCAPES[ch])
        elif ord(ch) < 0x20 or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04x}")
        else:
            out.append(ch)
    out.append('"')
    return "".join(out)


def _key(key: str) -> str:
    if not isinstance(key, str):
        raise TypeError(f"TOML keys are strings, not {key!r}")
    return key if _BARE_KEY.fullmatch(key) else _string(key)


def toml_value(value: Any) -> str:
    """One value in TOML's inline syntax (tables as inline tables).

    Parameters
    ----------
    value : bool, int, float, str, datetime, date, time, list or mapping

    Returns
    -------
    str

    Raises
    ------
    TypeError
        For a value TOML cannot hold (None, an object).

    Examples
    --------
    >>> toml_value({"f0": 5000.0, "q": 0.7071, "kind": "lowpass"})
    '{ f0 = 5000.0, q = 0.7071, kind = "lowpass" }'
    >>> toml_value([1, "2n2", float("inf"), True])
    '[1, "2n2", inf, true]'
    """
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        return _string(value)
    if isinstance(value, (_dt.datetime, _dt.date, _dt.time)):
        return value.isoformat()
    if isinstance(value, Mapping):
        if not value:
            return "{}"
        return "{ " + ", ".join(f"{_key(k)} = {toml_value(v)}" for k, v in value.items()) + " }"
    if isinstance(value, Sequence):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    raise TypeError(f"TOML has no form for {value!r}")


def toml_text(data: Mapping, *, header: str = "") -> str:
    """A document of top-level keys and one ``[table]`` per mapping.

    Top-level values come first (TOML puts every key after a header into
    that table); inside a table every value is inline, so the document is
    flat and reads back as the same data.

    Parameters
    ----------
    data : mapping
        What :func:`tomllib.loads` gives (or any data of the same kinds).
    header : str, optional
        Comment lines for the top of the file (without the ``#``).

    Returns
    -------
    str

    Examples
    --------
    >>> print(toml_text({"title": "x", "parts": {"fixed": {"R3": "10k"}}}), end="")
    title = "x"
    <BLANKLINE>
    [parts]
    fixed = { R3 = "10k" }
    """
    lines = [f"# {line}".rstrip() for line in header.splitlines()]
    tables = [(k, v) for k, v in data.items() if isinstance(v, Mapping)]
    for key, value in data.items():
        if not isinstance(value, Mapping):
            lines.append(f"{_key(key)} = {toml_value(value)}")
    for key, table in tables:
        lines.append("")
        lines.append(f"[{_key(key)}]")
        lines.extend(f"{_key(k)} = {toml_value(v)}" for k, v in table.items())
    return "\n".join(lines).lstrip("\n") + "\n"


def _absolute_candidates(table: Mapping, base: Path) -> dict:
    """``[candidates]`` with its file and folder paths resolved from `base`."""
    out = dict(table)
    topologies = out.get("topologies")
    if isinstance(topologies, list):
        out["topologies"] = [
            str((base / item).resolve()) if isinstance(item, str) and item.endswith(".toml")
            and not Path(item).is_absolute() else item for item in topologies]
    folder = out.get("folder")
    if isinstance(folder, str) and not Path(folder).is_absolute():
        out["folder"] = str((base / folder).resolve())
    return out


def edited_spec_data(raw: Mapping, target_table: Mapping, *, title: str, source: str) -> dict:
    """A spec's tables with ``[target]`` replaced.

    Parameters
    ----------
    raw : mapping
        The spec file's data as read (:attr:`placer.spec.reader.Spec.raw`).
    target_table : mapping
        The new ``[target]`` table.
    title : str
        The spec's title (written out, so a file saved under another name
        keeps it).
    source : str
        The spec file's path: relative paths in ``[candidates]`` are
        resolved from its folder.

    Returns
    -------
    dict
        The tables in the spec's own order, ``title`` first.
    """
    out: dict = {"title": title}
    for key, value in raw.items():
        if key == "title":
            continue
        if key == "target":
            out["target"] = dict(target_table)
        elif key == "candidates" and isinstance(value, Mapping):
            out["candidates"] = _absolute_candidates(value, Path(source).parent)
        else:
            out[key] = value
    if "target" not in out:
        out["target"] = dict(target_table)
    return out


def edited_spec_text(raw: Mapping, target_table: Mapping, *, title: str, source: str) -> str:
    """The edited spec as TOML text (see :func:`edited_spec_data`)."""
    data = edited_spec_data(raw, target_table, title=title, source=source)
    header = (f"{Path(source).name} with its target placed by hand in `placer explore`.\n"
              "Design it with: placer design THIS_FILE")
    return toml_text(data, header=header)
