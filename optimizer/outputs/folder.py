"""An output folder written as one unit: the whole set, or the previous set, never a mix.

``strainline solve`` and ``strainline report`` write front.json, front.csv, report.html and
handoff/ into one folder. :func:`replace_folder` writes the new set into a fresh sibling folder
(``.<name>.strainline-new-*``), marks it complete with :data:`MANIFEST` (written last), and then
swaps it in:

* on Linux with one atomic ``renameat2(RENAME_EXCHANGE)`` of the two folders, so the folder's
  path holds the complete old set or the complete new set at every moment;
* elsewhere with two renames (old folder aside to ``.<name>.strainline-old-*``, new folder in);
  a kill between the two leaves both complete sets beside the path, and :func:`recover` (run at
  the start of every later write) moves the complete one back.

Leftovers of killed runs (sibling folders with those prefixes) are removed by :func:`recover`.
A folder is ours when it holds :data:`MANIFEST` and nothing outside the files it lists, or (an
output set from before manifests) only our file names around a strainline ``front.json``;
anything else is refused unless ``force`` is given. :func:`check_out` does all the checks
without writing anything, so the command line can run it before a long search.

Operating-system errors (disk full, permission, read-only file system) become
:class:`OutputError` naming the path; the previous set is left as it was.
"""
from __future__ import annotations

import ctypes
import errno
import json
import os
import shutil
import sys
import tempfile
from collections.abc import Callable, Iterable
from pathlib import Path

from strainline.optimizer.errors import StrainlineError

#: The marker of a complete strainline output folder: JSON listing every file of the set.
MANIFEST = "strainline-output.json"
#: The top-level names an output set may hold.
OUR_NAMES = frozenset({"front.json", "front.csv", "report.html", "handoff", MANIFEST})
#: Operating-system errors of writing that are the folder's, not a bug: exit 2 naming the path.
WRITE_ERRNOS = frozenset({errno.ENOSPC, errno.EDQUOT, errno.EACCES, errno.EPERM, errno.EROFS, errno.EFBIG,
                          errno.ENAMETOOLONG, errno.ENOTDIR, errno.EISDIR, errno.EIO, errno.EEXIST})
_NEW, _OLD, _PROBE = ".strainline-new-", ".strainline-old-", ".strainline-probe-"


class OutputError(StrainlineError):
    """An output folder that cannot be written (a file in the way, not ours, no space, no permission)."""


# ------------------------------------------------------------------------------------------------
# checks
# ------------------------------------------------------------------------------------------------
def _manifest(folder: Path) -> list[str] | None:
    """The relative file paths listed by ``folder``'s manifest, or None (no manifest or not valid)."""
    try:
        data = json.loads((folder / MANIFEST).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    files = data.get("files") if isinstance(data, dict) and data.get("strainline_output") == 1 else None
    if not isinstance(files, list) or not all(isinstance(f, str) for f in files):
        return None
    return files


def _complete(folder: Path) -> bool:
    """True when ``folder`` holds a manifest and every file it lists."""
    files = _manifest(folder)
    return files is not None and all((folder / f).is_file() for f in files)


def _looks_like_front(path: Path) -> bool:
    """True when ``path`` is a JSON object with the keys a strainline front.json always has."""
    try:
        if path.stat().st_size > 2**30:
            return False
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return False
    return isinstance(data, dict) and "candidates" in data


def foreign_entries(folder: Path) -> list[str]:
    """The names in ``folder`` that are not strainline output (empty for an output folder of ours)."""
    names = sorted(p.name for p in folder.iterdir())
    listed = _manifest(folder)
    if listed is not None:
        ours = {f.split("/", 1)[0] for f in listed} | {MANIFEST}
        return [n for n in names if n not in ours]
    foreign = [n for n in names if n not in OUR_NAMES]
    if not foreign and names and not _looks_like_front(folder / "front.json"):
        foreign = [n for n in names if n != "front.json"] or names
    return foreign


def _nearest_existing(path: Path) -> Path:
    p = path
    while not os.path.lexists(p):
        if p.parent == p:
            break
        p = p.parent
    return p


def _error(exc: OSError, path: Path | str, what: str = "cannot write") -> OutputError:
    reason = exc.strerror or exc.__class__.__name__
    if exc.errno in (errno.ENOSPC, errno.EDQUOT):
        reason += " (free some space or choose another --out folder; nothing was replaced)"
    return OutputError(f"{what}: {reason}", str(path))


def resolve_out(out_dir: str | os.PathLike[str]) -> Path:
    """The absolute path the output set goes to (a symlink to a folder is followed)."""
    out = Path(os.path.abspath(out_dir))
    return out.resolve() if out.is_symlink() and out.is_dir() else out


def check_out(out_dir: str | os.PathLike[str], force: bool = False, option: str = "--out") -> Path:
    """Check that ``out_dir`` can receive an output set; return it (absolute, symlink resolved).

    Raises :class:`OutputError` naming the path when it is a file, lies under a file, cannot be
    created or written (probed by creating and removing an empty folder beside it), or holds
    something other than strainline output (unless ``force``). Writes nothing that stays.
    """
    given = Path(out_dir)
    out = resolve_out(given)
    if out.parent == out:
        raise OutputError("is a file-system root; give a folder inside it", f"{option} {given}")
    if os.path.lexists(out) and not out.is_dir():
        raise OutputError("is a file, not a folder; give a folder (new or an earlier output folder)",
                          f"{option} {given}")
    anchor = _nearest_existing(out.parent)
    if not anchor.is_dir():
        raise OutputError(f"lies under {anchor}, which is a file, not a folder", f"{option} {given}")
    try:
        probe = tempfile.mkdtemp(prefix=f".{out.name}{_PROBE}", dir=anchor)
        os.rmdir(probe)
    except OSError as exc:
        raise _error(exc, f"{option} {given}", f"cannot create or write folders in {anchor}") from None
    if out.is_dir():
        try:
            foreign = foreign_entries(out)
        except OSError as exc:
            raise _error(exc, f"{option} {given}", "cannot read the folder") from None
        if foreign and not force:
            shown = ", ".join(foreign[:3]) + (f" and {len(foreign) - 3} more" if len(foreign) > 3 else "")
            raise OutputError(f"holds files that are not strainline output ({shown}); choose another folder, "
                              "or give --force to replace the whole folder", f"{option} {given}")
    return out


# ------------------------------------------------------------------------------------------------
# recovery and the swap
# ------------------------------------------------------------------------------------------------
def _leftovers(out: Path) -> list[Path]:
    try:
        entries = list(out.parent.iterdir())
    except OSError:
        return []
    head = f".{out.name}"
    return sorted(p for p in entries if p.name.startswith(head)
                  and any(p.name[len(head):].startswith(t) for t in (_NEW, _OLD, _PROBE)))


def _remove(path: Path) -> None:
    if path.is_dir() and not path.is_symlink():
        shutil.rmtree(path, ignore_errors=True)
    else:
        try:
            path.unlink()
        except OSError:
            pass


def recover(out_dir: str | os.PathLike[str]) -> None:
    """Finish or undo what a killed run left beside ``out_dir``, then remove the leftovers.

    When ``out_dir`` is missing but a complete set lies beside it (a kill between the two renames
    of the portable swap), that set is moved back: the newer complete one if there is one, else the
    older. Every other leftover sibling of ours is deleted.
    """
    out = Path(os.path.abspath(out_dir))
    left = _leftovers(out)
    if not os.path.lexists(out):
        complete = [p for p in left if _NEW in p.name and _complete(p)] or \
                   [p for p in left if _OLD in p.name and _complete(p)]
        if complete:
            os.rename(complete[0], out)
            left.remove(complete[0])
    for p in left:
        _remove(p)


_RENAME_EXCHANGE = 2


def _exchange(a: Path, b: Path) -> bool:
    """Atomically swap the folders ``a`` and ``b`` (Linux ``renameat2``); False where not supported."""
    if not sys.platform.startswith("linux"):
        return False
    try:
        libc = ctypes.CDLL(None, use_errno=True)
        fn = libc.renameat2
    except (OSError, AttributeError):
        return False
    sys.audit("strainline.exchange", str(a), str(b))
    at_fdcwd = -100
    rc = fn(at_fdcwd, os.fsencode(a), at_fdcwd, os.fsencode(b), _RENAME_EXCHANGE)
    if rc == 0:
        return True
    err = ctypes.get_errno()
    if err in (errno.EINVAL, errno.ENOSYS, errno.ENOTSUP, errno.EOPNOTSUPP):
        return False
    raise OSError(err, os.strerror(err), str(b))


def _swap_in(stage: Path, out: Path) -> None:
    """Put the complete folder ``stage`` at ``out``; the previous ``out`` (if any) is deleted."""
    if not os.path.lexists(out):
        os.rename(stage, out)
        return
    if _exchange(stage, out):
        _remove(stage)            # now holds the previous set
        return
    old = out.parent / (f".{out.name}{_OLD}" + stage.name.rsplit("-", 1)[-1])
    os.rename(out, old)
    os.rename(stage, out)
    _remove(old)


def _lock(folder: Path) -> int | None:
    """Hold an exclusive ``flock`` on ``folder`` (released when the returned descriptor is closed, or
    by the kernel when the process dies); None where folders cannot be locked."""
    try:
        import fcntl

        fd = os.open(folder, os.O_RDONLY)
    except (ImportError, OSError):
        return None
    try:
        fcntl.flock(fd, fcntl.LOCK_EX)
    except OSError:
        os.close(fd)
        return None
    return fd


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def _write_manifest(stage: Path) -> None:
    files = sorted(p.relative_to(stage).as_posix() for p in stage.rglob("*") if p.is_file())
    from strainline.optimizer import __version__

    text = json.dumps({"strainline_output": 1, "version": __version__, "files": files}, indent=1) + "\n"
    with open(stage / MANIFEST, "w", encoding="utf-8") as fh:
        fh.write(text)
        fh.flush()
        os.fsync(fh.fileno())


def replace_folder(out_dir: str | os.PathLike[str], fill: Callable[[Path], Iterable[os.PathLike[str] | str]],
                   *, force: bool = False, keep: Iterable[str] = (), option: str = "--out") -> list[Path]:
    """Write a whole output set with ``fill(folder)`` and put it at ``out_dir`` as one unit.

    Parameters
    ----------
    out_dir : path
        The output folder (new, or an earlier output folder of ours).
    fill : callable
        ``fill(stage)`` writes every file of the set into the empty folder ``stage`` and returns
        the paths it wrote.
    force : bool
        Replace a folder that holds something other than strainline output.
    keep : names
        Files of the current set copied unchanged into the new one (``strainline report`` keeps
        front.json and front.csv).
    option : str
        How the folder was given, for messages.

    Returns
    -------
    list of Path
        The written paths, as they are inside ``out_dir`` after the swap.
    """
    out = check_out(out_dir, force, option)
    stage: Path | None = None
    lock: int | None = None
    try:
        out.parent.mkdir(parents=True, exist_ok=True)
        lock = _lock(out.parent)          # one writer at a time: a second run cannot take our stage for a leftover
        recover(out)
        stage = staged = Path(tempfile.mkdtemp(prefix=f".{out.name}{_NEW}", dir=out.parent))
        os.chmod(stage, 0o777 & ~_umask())
        for name in keep:
            if (out / name).is_file():
                shutil.copyfile(out / name, stage / name)
        written = [Path(p) for p in fill(stage)]
        _write_manifest(stage)
        _swap_in(stage, out)
        stage = None
    except OSError as exc:
        if exc.errno not in WRITE_ERRNOS:
            raise
        where = exc.filename if exc.filename else out
        if stage is not None:
            where = str(where).replace(str(stage), str(out))
        raise _error(exc, where) from None
    finally:
        if stage is not None:
            _remove(stage)
        if lock is not None:
            os.close(lock)
    return [out / p.relative_to(staged) if p.is_relative_to(staged) else p for p in written]


__all__ = ["MANIFEST", "OutputError", "check_out", "resolve_out", "foreign_entries", "recover", "replace_folder"]
