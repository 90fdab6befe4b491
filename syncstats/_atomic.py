"""All-or-nothing creation of an output folder.

The folder is built under a hidden temporary name next to the target (same parent, so
the final step is a rename on one file system) and renamed into place only when every
file has been written. A failure at any step removes the temporary folder and any parent
folders this call created, so no half-written output is ever left behind.
"""
from __future__ import annotations

import os
import shutil
import uuid
from pathlib import Path
from typing import Callable, Iterable

from ._errors import SyncstatsInputError

__all__ = ["write_folder_atomically"]


def _is_inside(path: Path, folder: Path) -> bool:
    try:
        path.resolve().relative_to(folder.resolve())
    except ValueError:
        return False
    return True


def _check_target(out: Path, *, overwrite: bool, protected: Iterable) -> None:
    if out.exists() and not out.is_dir():
        raise SyncstatsInputError(
            f"The output path {str(out)!r} is a file, not a folder; choose a new folder "
            "name for the results."
        )
    if out.is_dir() and any(out.iterdir()):
        if not overwrite:
            raise SyncstatsInputError(
                f"The output folder {str(out)!r} already exists and is not empty; choose a "
                "new folder or pass overwrite=True to replace its contents."
            )
        for p in protected:
            if p and _is_inside(Path(p), out):
                raise SyncstatsInputError(
                    f"The output folder {str(out)!r} contains the input file {str(p)!r}, so "
                    "overwriting it would delete your data; choose a new output folder."
                )


def _make_parents(parent: Path) -> list[Path]:
    """Create ``parent`` (and ancestors) if missing; return the folders created, deepest first."""
    missing = []
    p = parent
    while not p.exists():
        missing.append(p)
        if p.parent == p:
            break
        p = p.parent
    for d in reversed(missing):
        d.mkdir()
    return missing


def write_folder_atomically(
    out_dir,
    build: Callable[[Path], None],
    *,
    overwrite: bool = False,
    protected: Iterable = (),
) -> Path:
    """Create ``out_dir`` with everything ``build(tmp_folder)`` writes, or nothing at all.

    Parameters
    ----------
    out_dir : str or path-like
        Target folder. It may be missing or empty; a non-empty folder is replaced only
        with ``overwrite=True``.
    build : callable
        ``build(path)`` writes the files into the (empty) temporary folder ``path``.
    overwrite : bool, default False
        Replace a non-empty ``out_dir``: the old folder is renamed away, the new one
        renamed in, then the old one deleted (if the swap fails the old folder is put back).
    protected : iterable of path-like
        Input files; overwriting a folder that contains one of them is refused.

    Returns
    -------
    pathlib.Path
        The absolute path of the finished folder.
    """
    out = Path(os.path.abspath(os.fspath(out_dir)))
    if out.name in ("", ".", ".."):
        raise SyncstatsInputError(
            f"The output folder {str(out_dir)!r} has no name of its own; give a folder such "
            "as 'results/run1'."
        )
    protected = [os.fspath(p) for p in protected if p]
    _check_target(out, overwrite=overwrite, protected=protected)
    created = _make_parents(out.parent)
    tag = uuid.uuid4().hex[:12]
    tmp = out.parent / f".{out.name}.partial-{tag}"
    old = out.parent / f".{out.name}.old-{tag}"
    try:
        os.mkdir(tmp)  # honours the umask, unlike mkdtemp's 0o700
        build(tmp)
        if out.is_dir() and not any(out.iterdir()):
            os.rmdir(out)
            try:
                os.rename(tmp, out)
            except BaseException:
                os.mkdir(out)  # give the user's empty folder back
                raise
        elif out.exists():
            os.rename(out, old)
            try:
                os.rename(tmp, out)
            except BaseException:
                os.rename(old, out)
                raise
            shutil.rmtree(old, ignore_errors=True)
        else:
            os.rename(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        for d in created:  # deepest first; only if still empty
            try:
                d.rmdir()
            except OSError:
                break
        raise
    return out


def write_file_atomically(path, write: Callable[[Path], None]) -> Path:
    """Create the file ``path`` with what ``write(tmp_path)`` writes, or nothing at all.

    An existing ``path`` is never replaced (choose a new name); the file is written under
    a hidden temporary name in the same folder and renamed into place.
    """
    out = Path(os.path.abspath(os.fspath(path)))
    if out.exists() or out.is_symlink():
        raise SyncstatsInputError(f"output file '{path}' already exists; choose a new name.")
    if not out.parent.is_dir():
        raise SyncstatsInputError(f"the folder of output file '{path}' does not exist; create it first.")
    tmp = out.parent / f".{out.name}.partial-{uuid.uuid4().hex[:8]}"
    try:
        write(tmp)
        os.link(tmp, out)  # fails if out appeared meanwhile: never replaces a file
    except FileExistsError:
        raise SyncstatsInputError(f"output file '{path}' appeared while writing; choose a new name.") from None
    except OSError as err:
        raise SyncstatsInputError(f"cannot write output file '{path}' ({err.strerror}); choose another place.") from None
    finally:
        tmp.unlink(missing_ok=True)
    return out
