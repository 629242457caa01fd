"""Writing output files safely: never over an input, always atomically.

An output is written to a temporary file in the destination folder and
renamed into place, so a failed run leaves no half-written file and an
existing file is replaced in one step. A path that names one of the run's
input files (the spec, a topology file) is refused.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from ..errors import SpecError

__all__ = ["check_output_path", "write_text", "write_bytes"]


def check_output_path(path, *, inputs=(), option="output"):
    """Refuse an output path whose folder is missing or that is an input.

    Raises
    ------
    SpecError
        Naming the option and the path.
    """
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise SpecError(f"{option}: folder {str(folder)!r} of {str(path)!r} does not exist")
    if target.is_dir():
        raise SpecError(f"{option}: {str(path)!r} is a folder, not a file")
    resolved = target.resolve()
    for item in inputs:
        if item and Path(item).exists() and Path(item).resolve() == resolved:
            raise SpecError(f"{option}: {str(path)!r} is an input file; refusing to overwrite it")
    return target


def write_bytes(path, data, *, inputs=(), option="output"):
    """Write `data` to `path` atomically (temporary file, then rename)."""
    target = check_output_path(path, inputs=inputs, option=option)
    folder = target.parent if str(target.parent) else Path(".")
    handle, temporary = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(handle, "wb") as stream:
            stream.write(data)
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(temporary, 0o666 & ~umask)  # mkstemp makes 0600; outputs are ordinary files
        os.replace(temporary, target)
    except BaseException:
        if os.path.exists(temporary):
            os.unlink(temporary)
        raise
    return target


def write_text(path, text, *, inputs=(), option="output"):
    """Write `text` (UTF-8) to `path` atomically."""
    return write_bytes(path, text.encode("utf-8"), inputs=inputs, option=option)
