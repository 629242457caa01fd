"""Writing output files safely: never over an input, always atomically.

An output is written to a temporary file in the destination folder and
renamed into place, so a failed run leaves no half-written file and an
existing file is replaced in one step. Before a command computes anything
it checks every output it will write (:func:`check_output_path`,
:func:`check_output_folder`): the folder exists and can be written, the
path is not a folder and is not one of the run's inputs. Inputs are
compared as files, not as names (resolved paths and ``os.path.samefile``),
so a relative path, ``..`` or a symbolic link to an input is refused too;
an input that is a folder (a folder of topology files) protects every
entry in it. A failure while writing (a full disk, say) is an
:class:`~placer.errors.OutputError` naming the path and the reason.
"""

from __future__ import annotations

import os
import tempfile
from collections.abc import Iterable
from pathlib import Path
from typing import Union


from ..errors import OutputError, brief_path

__all__ = ["check_output_path", "check_output_folder", "input_files", "write_text",
           "write_bytes"]

#: A path as the commands pass it: text or a path object.
PathLike = Union[str, "os.PathLike[str]"]
#: The run's inputs: paths, with None or "" for an input that is not a file.
Inputs = Iterable[Union[str, "os.PathLike[str]", None]]


def _shown(path: PathLike | None) -> str:
    return brief_path(path, quote=True)


def _reason(error: OSError) -> str:
    return error.strerror or str(error) or type(error).__name__


def input_files(inputs: Inputs = ()) -> list[Path]:
    """The files the inputs name: a folder stands for every entry in it."""
    files: list[Path] = []
    for item in inputs:
        if not item:
            continue
        path = Path(item)
        try:
            if path.is_dir():
                files.extend(sorted(path.iterdir()))
            elif path.exists():
                files.append(path)
        except OSError:  # an unreadable folder: nothing in it can be compared
            continue
    return files


def _same_file(a: Path, b: Path) -> bool:
    try:
        if a.resolve() == b.resolve():
            return True
        return a.exists() and b.exists() and os.path.samefile(a, b)
    except (OSError, RuntimeError):  # a symlink loop, a vanished file
        return False


def _check_not_empty(path: PathLike | None, option: str) -> None:
    if path is None or not str(path).strip():
        raise OutputError(f"{option}: give a path, not an empty one")


def _check_folder(folder: Path, option: str, path: PathLike) -> None:
    of = "" if str(folder) == str(path) else f" of {_shown(path)}"
    if not folder.exists():
        raise OutputError(f"{option}: folder {_shown(folder)}{of} does not exist")
    if not folder.is_dir():
        raise OutputError(f"{option}: {_shown(folder)}{of} is not a folder")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise OutputError(f"{option}: folder {_shown(folder)}{of} is read-only "
                          f"(no permission to write in it)")


def check_output_path(path: PathLike | None, *, inputs: Inputs = (),
                      option: str = "output") -> Path:
    """Refuse an output file that cannot be written or that is an input.

    Refused: an empty path; a folder that is missing, not a folder or
    read-only; a path that is a folder; a path that is (or links to) one
    of `inputs` or a file in an input folder.

    Raises
    ------
    OutputError
        Naming the option, the path and why.
    """
    _check_not_empty(path, option)
    assert path is not None  # refused just above
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    _check_folder(folder, option, path)
    if target.is_dir():
        raise OutputError(f"{option}: {_shown(path)} is a folder, not a file")
    if target.exists() and not os.access(target, os.W_OK) and not target.is_symlink():
        # The rename would replace it, but a read-only file says "keep me".
        raise OutputError(f"{option}: {_shown(path)} is read-only; refusing to replace it")
    for item in input_files(inputs):
        if _same_file(target, item):
            raise OutputError(f"{option}: {_shown(path)} is an input file"
                              + ("" if target.resolve() == item.resolve() and str(item) == str(path)
                                 else f" ({_shown(item)})")
                              + "; refusing to overwrite it")
    return target


def check_output_folder(path: PathLike | None, *, inputs: Inputs = (),
                        option: str = "output") -> Path:
    """Refuse an output folder that is missing, not a folder, read-only or an input.

    An input folder (a folder of topology files) is refused as a whole;
    the files written into any other are checked against `inputs` one by
    one when they are written.

    Raises
    ------
    OutputError
        Naming the option, the path and why.
    """
    _check_not_empty(path, option)
    assert path is not None  # refused just above
    folder = Path(path)
    if folder.exists() and not folder.is_dir():
        raise OutputError(f"{option}: {_shown(path)} is a file, not a folder")
    _check_folder(folder, option, path)
    for item in inputs:
        if item and Path(item).is_dir() and _same_file(folder, Path(item)):
            raise OutputError(f"{option}: {_shown(path)} is an input folder (its files are "
                              "read by this run); give another folder")
    return folder


def write_bytes(path: PathLike | None, data: bytes, *, inputs: Inputs = (),
                option: str = "output") -> Path:
    """Write `data` to `path` atomically (temporary file, then rename).

    Raises
    ------
    OutputError
        The path is refused (:func:`check_output_path`) or writing failed
        (naming the path and the system's reason).
    """
    target = check_output_path(path, inputs=inputs, option=option)
    folder = target.parent if str(target.parent) else Path(".")
    temporary: str | None = None
    try:
        handle, temporary = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp",
                                             dir=folder)
        with os.fdopen(handle, "wb") as stream:
            stream.write(data)
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(temporary, 0o666 & ~umask)  # mkstemp makes 0600; outputs are ordinary files
        os.replace(temporary, target)
    except OSError as error:
        _remove(temporary)
        raise OutputError(f"{option}: could not write {_shown(path)}: {_reason(error)}") from error
    except BaseException:
        _remove(temporary)
        raise
    return target


def _remove(temporary: str | None) -> None:
    if temporary is not None and os.path.exists(temporary):
        try:
            os.unlink(temporary)
        except OSError:
            pass


def write_text(path: PathLike | None, text: str, *, inputs: Inputs = (),
               option: str = "output") -> Path:
    """Write `text` (UTF-8) to `path` atomically."""
    return write_bytes(path, text.encode("utf-8"), inputs=inputs, option=option)
