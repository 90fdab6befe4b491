"""Safe output folders: reserve the target at the start, publish it whole at the end.

The rules (README, "When it refuses your data", says them to users):

* The target must not be a symbolic link (its parents may be): a link is refused, so a
  run can never write, move or delete anything through one.
* One run per target. A lock file ``.NAME.syncstats-lock`` beside the target carries a
  POSIX record lock (``fcntl.lockf``), which the operating system drops when the process
  ends, even by SIGKILL; a second run to the same target is refused.
* A missing target is created empty at once (``os.mkdir``, which fails if anything is
  there), so write errors show before any analysis and nothing else can take the name
  during the run. Its identity (device, inode, change time) is remembered.
* Files are built in ``.NAME.partial-PID-TAG`` beside the target and renamed into place
  only when complete. Publication checks that the target is still the one reserved and
  refuses rather than deletes: a folder that appeared or changed meanwhile is left as it
  is (POSIX ``rename`` replaces an empty folder and fails on a non-empty one).
* Replacing a non-empty target needs ``overwrite``: the old folder is renamed to
  ``.NAME.old-PID-TAG`` only after the new one is complete, checked to be the folder
  reserved, and deleted after the new one is in place (put back if that fails).
* Leftovers of killed runs are found at the next reservation: a ``.partial`` folder whose
  process is gone is removed; an ``.old`` folder (it may hold the only copy of earlier
  results) is never deleted but named in a warning.
"""
from __future__ import annotations

import errno
import os
import shutil
import uuid
import warnings
from pathlib import Path
from typing import Callable, Iterable

from ._errors import SyncstatsInputError, SyncstatsWarning

try:  # POSIX; elsewhere runs are not locked against each other
    import fcntl
except ImportError:  # pragma: no cover
    fcntl = None

__all__ = ["OutputFolder", "write_folder_atomically", "write_file_atomically"]


#: lock files held by this process
_HELD: set = set()


def _is_inside(path: Path, folder: Path) -> bool:
    try:
        path.resolve().relative_to(folder.resolve())
    except ValueError:
        return False
    return True


def _ident(path: Path):
    """(device, inode, change time) of ``path`` itself (links not followed), or None if
    nothing is there; a folder removed and made again differs even if its inode is reused."""
    try:
        st = os.lstat(path)
    except OSError:
        return None
    return st.st_dev, st.st_ino, st.st_ctime_ns


def _same_file(path: Path, fd: int) -> bool:
    try:
        a, b = os.lstat(path), os.fstat(fd)
    except OSError:
        return False
    return (a.st_dev, a.st_ino) == (b.st_dev, b.st_ino)


def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # exists but belongs to someone else
        return True
    return True


class OutputFolder:
    """A reserved output folder: checked and claimed now, written by :meth:`publish`.

    Parameters
    ----------
    out_dir : str or path-like
        Target folder: missing, empty, or (with ``overwrite``) a folder to replace.
    overwrite : bool
        Allow replacing a non-empty folder.
    protected : iterable of path-like
        Input files; replacing a folder that contains one is refused.
    cli : bool
        Word messages for the command line (``--out``, ``--overwrite``) instead of Python.
    record_paths : bool
        Carried for the writer: record absolute paths in provenance.json.

    Raises
    ------
    SyncstatsInputError
        The target cannot be used; nothing was created.

    Use as a context manager (or call :meth:`release`): leaving without a successful
    :meth:`publish` removes everything the reservation created.
    """

    def __init__(self, out_dir, *, overwrite: bool = False, protected: Iterable = (), cli: bool = False,
                 record_paths: bool = False):
        self.given = os.fspath(out_dir)
        self.path = Path(os.path.abspath(self.given))
        self.overwrite = bool(overwrite)
        self.cli = bool(cli)
        self.record_paths = bool(record_paths)
        self.committing = False  # True from the final rename on (a late interrupt is then ignored)
        self._created: list[Path] = []
        self._lock = None
        self._made = False
        self._ident = None
        self._replace = False
        self._done = False
        try:
            self._reserve([os.fspath(p) for p in protected if p])
        except OSError as err:  # e.g. a name too long even to look up
            self.release()
            raise self._os_error(err, self.path.parent) from None
        except BaseException:
            self.release()
            raise

    # ------------------------------------------------------------------ wording
    def _where(self) -> str:
        return f"--out '{self.given}'" if self.cli else f"the output folder '{self.given}'"

    def _choose(self) -> str:
        return "choose another folder for --out" if self.cli else "choose another output folder"

    def _fail(self, what: str, fix: str | None = None) -> SyncstatsInputError:
        return SyncstatsInputError(f"{self._where()} {what}; {fix or self._choose()}.")

    def _os_error(self, err: OSError, folder: Path) -> SyncstatsInputError:
        e = err.errno
        if e == errno.ENAMETOOLONG:
            return self._fail(f"has a name too long for the file system ({len(self.path.name)} characters)",
                              "choose a shorter name (under 200 characters)")
        if e == errno.ENOTDIR:
            return self._fail("lies under a file, not a folder", "choose a path made of folders")
        if e in (errno.EACCES, errno.EPERM, errno.EROFS):
            return self._fail(f"cannot be written: the folder '{folder}' is read-only or not yours",
                              "choose a folder you can write to")
        if e == errno.ENOENT:
            return self._fail(f"cannot be created: '{folder}' does not accept new files (a system or virtual "
                              "folder)", "choose an ordinary folder")
        return self._fail(f"cannot be written ({err.strerror})")

    # ------------------------------------------------------------------ reservation
    def _reserve(self, protected: list[str]) -> None:
        out = self.path
        if out.name in ("", ".", "..") or Path(self.given).name in ("", ".", ".."):
            raise self._fail("has no folder name of its own", "give a folder such as 'results/run1'")
        if out.is_symlink():
            raise self._fail(f"is a symbolic link (to '{os.readlink(out)}'); syncstats writes only to a real folder "
                             "path, so nothing is ever replaced through a link",
                             "give the folder it points to, or a new name")
        self._make_parents(out.parent)
        self._take_lock()
        self._clean_stale()
        if not out.exists():
            try:
                os.mkdir(out)
                self._made = True
            except FileExistsError:
                pass  # appeared just now: judged below like any existing folder
            except OSError as err:
                raise self._os_error(err, out.parent) from None
        if out.is_symlink():
            raise self._fail("became a symbolic link just now", self._choose())
        if not out.is_dir():
            raise self._fail("is a file, not a folder", "choose a new folder name for the results")
        if not self._made and any(out.iterdir()):
            if not self.overwrite:
                raise self._fail("already exists and is not empty",
                                 "choose a new or empty folder for --out, or add --overwrite to replace it"
                                 if self.cli else "choose a new or empty folder, or pass overwrite=True to "
                                 "replace it")
            self._replace = True
            self.check_protected(protected)
        self._ident = _ident(out)

    def check_protected(self, paths: Iterable) -> None:
        """Refuse to replace a folder holding one of ``paths`` (the inputs)."""
        if not self._replace:
            return
        for p in paths:
            if p and _is_inside(Path(os.fspath(p)), self.path):
                raise self._fail(f"contains the input file '{os.fspath(p)}', so replacing it would delete your data",
                                 "choose a new output folder")

    def _make_parents(self, parent: Path) -> None:
        missing = []
        p = parent
        while not p.exists() and not p.is_symlink():
            missing.append(p)
            if p.parent == p:
                break
            p = p.parent
        if p.exists() and not p.is_dir():
            raise self._fail(f"lies under '{p}', which is a file, not a folder", "choose a path made of folders")
        for d in reversed(missing):
            try:
                d.mkdir()
            except OSError as err:
                raise self._os_error(err, d.parent) from None
            self._created.insert(0, d)  # deepest first

    def _lock_path(self) -> Path:
        return self.path.parent / f".{self.path.name}.syncstats-lock"

    def _take_lock(self) -> None:
        if fcntl is None:  # pragma: no cover
            return
        path = self._lock_path()
        if path in _HELD:  # record locks are per process: a second claim here would succeed
            raise self._fail(f"is being written by another syncstats run (process {os.getpid()})",
                             "wait for it to finish or " + self._choose())
        for _ in range(10):
            try:
                fd = os.open(path, os.O_RDWR | os.O_CREAT, 0o644)
            except OSError as err:
                raise self._os_error(err, path.parent) from None
            try:
                fcntl.lockf(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
            except OSError:
                holder = os.read(fd, 32).decode("ascii", "replace").strip() or "unknown"
                os.close(fd)
                raise self._fail(f"is being written by another syncstats run (process {holder})",
                                 "wait for it to finish or " + self._choose()) from None
            if _same_file(path, fd):
                os.ftruncate(fd, 0)
                os.write(fd, f"{os.getpid()}\n".encode())
                self._lock = fd
                _HELD.add(path)
                return
            os.close(fd)  # the file was removed by the run that just finished: take the new one
        raise self._fail("is locked by runs starting and ending very fast", "try again")

    def _clean_stale(self) -> None:
        """Remove ``.partial`` folders of ended runs; name ``.old`` folders in a warning."""
        keep = []
        for kind in ("partial", "old"):
            prefix = f".{self.path.name}.{kind}-"
            try:
                names = [n for n in os.listdir(self.path.parent) if n.startswith(prefix)]
            except OSError:
                return
            for n in names:
                pid = n[len(prefix):].split("-", 1)[0]
                gone = pid.isdigit() and not _pid_alive(int(pid))
                if kind == "partial" and gone:
                    shutil.rmtree(self.path.parent / n, ignore_errors=True)
                else:
                    keep.append(n)
        if keep:
            warnings.warn(
                f"the folder '{self.path.parent}' holds {', '.join(keep)}, left by an earlier syncstats run that "
                "was stopped; an '.old' folder holds the contents that run was replacing: look inside, then move "
                "it back or delete it.", SyncstatsWarning, stacklevel=3)

    # ------------------------------------------------------------------ publication
    def publish(self, build: Callable[[Path], None]) -> Path:
        """Run ``build(tmp_folder)`` and rename the result into place; return the folder."""
        if self._done:
            raise SyncstatsInputError(f"{self._where()} was already written or released; reserve it again.")
        out = self.path
        tag = f"{os.getpid()}-{uuid.uuid4().hex[:8]}"
        tmp = out.parent / f".{out.name}.partial-{tag}"
        try:
            os.mkdir(tmp)  # honours the umask, unlike mkdtemp's 0o700
            build(tmp)
            self.committing = True
            if _ident(out) != self._ident:
                raise self._fail("was removed or replaced by something else while syncstats was running, so it "
                                 "was left as it is", "run again with a new folder")
            if self._replace:
                self._swap(tmp, out.parent / f".{out.name}.old-{tag}")
            else:
                try:
                    os.rename(tmp, out)  # replaces the empty folder reserved; fails if it is not empty
                except OSError as err:
                    if err.errno in (errno.ENOTEMPTY, errno.EEXIST):
                        raise self._fail("received files from elsewhere while syncstats was running; they were "
                                         "left untouched", "run again with a new folder") from None
                    raise
        except BaseException:
            self.committing = False
            shutil.rmtree(tmp, ignore_errors=True)
            self.release()
            raise
        self._done = True
        self._unlock()
        return out

    def _swap(self, tmp: Path, old: Path) -> None:
        out = self.path
        os.rename(out, old)
        moved = _ident(old)  # a rename updates the change time: compare device and inode
        if moved is None or moved[:2] != self._ident[:2]:  # swapped since the check: give it back
            os.rename(old, out)
            raise self._fail("was replaced by something else while syncstats was running, so it was left as it is",
                             "run again")
        try:
            os.rename(tmp, out)
        except BaseException:
            os.rename(old, out)
            raise
        shutil.rmtree(old, ignore_errors=True)

    def release(self) -> None:
        """Undo the reservation (nothing published): remove what it created, unlock."""
        if self._done:
            return
        self._done = True
        if self._made and self._ident is not None and _ident(self.path) == self._ident:
            try:
                os.rmdir(self.path)  # only while empty: files put there by others stay
            except OSError:
                pass
        self._unlock()
        for d in self._created:  # deepest first; only if still empty
            try:
                d.rmdir()
            except OSError:
                break

    def _unlock(self) -> None:
        if self._lock is None:
            return
        try:
            if _same_file(self._lock_path(), self._lock):
                os.unlink(self._lock_path())
        except OSError:
            pass
        os.close(self._lock)
        self._lock = None
        _HELD.discard(self._lock_path())

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.release()
        return False

    def __fspath__(self) -> str:
        return str(self.path)


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
    out_dir : str, path-like or OutputFolder
        Target folder (rules in this module's docstring), or a folder reserved earlier.
    build : callable
        ``build(path)`` writes the files into the (empty) temporary folder ``path``.
    overwrite : bool, default False
        Replace a non-empty ``out_dir`` (ignored for a reserved folder, which carries its own).
    protected : iterable of path-like
        Input files; replacing a folder that contains one of them is refused.

    Returns
    -------
    pathlib.Path
        The absolute path of the finished folder.
    """
    if isinstance(out_dir, OutputFolder):
        try:
            out_dir.check_protected(protected)
        except BaseException:
            out_dir.release()
            raise
        return out_dir.publish(build)
    with OutputFolder(out_dir, overwrite=overwrite, protected=protected) as res:
        return res.publish(build)


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
