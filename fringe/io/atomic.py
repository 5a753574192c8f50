"""Atomic outputs: nothing half-written is ever left under a user's name.

Files are written to a temporary sibling and renamed into place (``os.replace`` is
atomic on POSIX within one file system). Output folders are built in a temporary
sibling folder and swapped in only when complete; the previous folder survives any
interruption before the swap.
"""

from __future__ import annotations

import contextlib
import os
import shutil
import tempfile
from collections.abc import Iterator
from pathlib import Path

from fringe.model.errors import FringeIOError

__all__ = ["atomic_file", "atomic_directory", "write_text_atomic", "write_bytes_atomic",
           "check_output_folder", "check_output_file", "usual_mode", "set_usual_mode"]


def usual_mode(*, folder: bool = False) -> int:
    """The mode a plain ``open(path, "w")`` (0o666) or ``mkdir`` (``folder``: 0o777) gives
    under the process umask (read without changing it for good)."""
    mask = os.umask(0)
    os.umask(mask)
    return (0o777 if folder else 0o666) & ~mask


def set_usual_mode(path: str | Path, *, with_files: bool = False) -> None:
    """Give ``path`` the mode of :func:`usual_mode` (temporary names are created private,
    0600 files and 0700 folders); for a folder with ``with_files``, also every file in it."""
    path = Path(path)
    is_dir = path.is_dir()
    os.chmod(path, usual_mode(folder=is_dir))
    if is_dir and with_files:
        mode = usual_mode()
        for p in path.iterdir():
            if p.is_file():
                os.chmod(p, mode)


@contextlib.contextmanager
def atomic_file(path: str | Path, suffix: str | None = None) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; rename it onto ``path`` on success.

    The temporary name keeps the final suffix (so libraries that pick a format from
    the extension still work). On any exception the temporary file is removed and
    ``path`` is untouched.
    """
    path = Path(path)
    parent = path.parent if str(path.parent) else Path(".")
    if not parent.is_dir():
        raise FringeIOError(f"{path}: the folder {parent} does not exist")
    if path.is_dir():
        raise FringeIOError(f"{path}: exists and is a folder, not a file")
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=suffix or path.suffix,
                                   dir=parent)
    except OSError as e:
        raise FringeIOError(f"{path}: cannot write in {parent} ({e.strerror or e})") from None
    os.close(fd)
    tmp_path = Path(tmp)
    try:
        yield tmp_path
        set_usual_mode(tmp_path)
        try:
            os.replace(tmp_path, path)
        except OSError as e:
            raise FringeIOError(f"{path}: cannot replace it ({e.strerror or e})") from None
    except BaseException:
        with contextlib.suppress(OSError):
            tmp_path.unlink()
        raise


def write_bytes_atomic(path: str | Path, data: bytes) -> None:
    """Write ``data`` to ``path`` atomically."""
    with atomic_file(path) as tmp:
        tmp.write_bytes(data)


def write_text_atomic(path: str | Path, text: str) -> None:
    """Write UTF-8 ``text`` to ``path`` atomically."""
    write_bytes_atomic(path, text.encode("utf-8"))


@contextlib.contextmanager
def atomic_directory(path: str | Path) -> Iterator[Path]:
    """Yield an empty temporary folder; on success it replaces ``path`` whole.

    If ``path`` exists it is moved aside, the new folder renamed in, then the old one
    removed; a failure before the swap leaves ``path`` exactly as it was.
    """
    path = Path(path)
    parent = path.parent if str(path.parent) else Path(".")
    try:
        parent.mkdir(parents=True, exist_ok=True)
    except OSError as e:
        raise FringeIOError(f"{path}: cannot create the output folder ({e.strerror})") from None
    if path.exists() and not path.is_dir():
        raise FringeIOError(f"{path}: exists and is not a folder")
    try:
        tmp = Path(tempfile.mkdtemp(prefix=f".{path.name}.partial.", dir=parent))
    except OSError as e:
        raise FringeIOError(f"{path}: cannot write in {parent} ({e.strerror or e})") from None
    try:
        yield tmp
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    set_usual_mode(tmp)
    old = None
    if path.exists():
        old = Path(tempfile.mkdtemp(prefix=f".{path.name}.old.", dir=parent))
        os.rmdir(old)
        os.replace(path, old)
    try:
        os.replace(tmp, path)
    except OSError as e:  # put the previous results back before reporting
        if old is not None:
            os.replace(old, path)
        shutil.rmtree(tmp, ignore_errors=True)
        raise FringeIOError(f"{path}: cannot replace it ({e.strerror or e})") from None
    if old is not None:
        shutil.rmtree(old, ignore_errors=True)


def check_output_folder(out_dir: str | Path, *, scenario_file: str = "", marker: str,
                        name: str = "out_dir") -> None:
    """Refuse an output folder that :func:`atomic_directory` must not replace.

    An output folder is replaced whole, so it must be new, empty, or a previous output of
    the same command (recognised by the file ``marker`` in it). It must not hold the
    scenario file, nor be the current folder or one above it.

    Parameters
    ----------
    out_dir : str or Path
    scenario_file : str
        The scenario the output comes from (the folder must not hold it).
    marker : str
        A file that every previous output of the command holds.
    name : str
        Name of the argument in the message (a command passes its option, ``--out``).

    Raises
    ------
    FringeIOError
        Naming ``name`` and what the folder holds.
    """
    out = Path(out_dir)
    if not out.exists():
        return
    if not out.is_dir():
        raise FringeIOError(f"`{name}` must be a folder; {out} is a file")
    res = out.resolve()
    if scenario_file and Path(scenario_file).resolve().is_relative_to(res):
        raise FringeIOError(f"`{name}` must not hold the scenario file; got {out}")
    cwd = Path.cwd().resolve()
    if res == cwd or res in cwd.parents:
        raise FringeIOError(f"`{name}` must not be the current folder or one above it; got {out}")
    if any(out.iterdir()) and not (out / marker).is_file():
        raise FringeIOError(f"`{name}` must be a new or empty folder or a previous output "
                            f"(it is replaced whole); {out} holds other files")


def check_output_file(path: str | Path, *, suffixes: tuple[str, ...] = (),
                      name: str = "path") -> None:
    """Refuse an output file :func:`atomic_file` could not write, before any computation.

    Parameters
    ----------
    path : str or Path
        The output file.
    suffixes : tuple of str
        Accepted endings (lower case, with the dot); empty accepts any.
    name : str
        Name of the argument in the message (a command passes its option).

    Raises
    ------
    FringeIOError
        When ``path`` is a folder (e.g. ``.``), ends otherwise than ``suffixes``, or its
        folder does not exist or cannot be written.
    """
    p = Path(path)
    if p.is_dir() or str(path).endswith(("/", os.sep)) or p.name in ("", ".", ".."):
        raise FringeIOError(f"`{name}` must be a file name; {path} is a folder")
    if suffixes and p.suffix.lower() not in suffixes:
        raise FringeIOError(f"`{name}` must be a file name ending in "
                            f"{' or '.join(suffixes)}; got {p.name!r}")
    parent = p.parent if str(p.parent) else Path(".")
    if not parent.is_dir():
        raise FringeIOError(f"`{name}` must be in an existing folder; {parent} does not exist "
                            f"(got {path})")
    if not os.access(parent, os.W_OK | os.X_OK):
        raise FringeIOError(f"`{name}` must be in a folder that can be written; {parent} "
                            f"cannot (got {path})")
