"""Result folders as transactions: one folder is one complete run.

Every verb that writes a folder (``actsim run``/``demo``, ``check``, ``fit``,
``sweep``) writes through :func:`result_folder`::

    with result_folder(out, kind="run", overwrite=args.overwrite) as stage:
        ...write every file into stage...

and every reader (``actsim report``, :func:`actsim.results.read_result_folder`)
calls :func:`verify_folder` first.

What :func:`result_folder` does, in order:

1. **Lock.** ``fcntl.flock`` on ``.NAME.lock`` beside the target ``NAME``. A
   second run into the same folder is refused at once (one line naming the
   lock file, exit status 2); it does not wait. The kernel drops the lock when
   its process dies, so a lock left by a killed run never blocks the next one.
2. **Policy.** A rerun replaces the folder whole. The target may be missing,
   empty, or a folder holding an actsim ``manifest.json`` (a folder actsim
   wrote: it is ours to replace). A non-empty folder without one (a user's
   folder, or a result folder of an actsim older than the manifest) is refused
   unless ``overwrite=True`` (``--overwrite``), so a folder actsim did not
   write is never deleted by accident. A file in place of the folder is
   always refused.
3. **Clean-up.** Leftovers of killed runs into the same target (staging
   folders ``.NAME.staging-*``, and ``.NAME.old-*`` of an interrupted swap)
   are removed; an old folder whose target is missing is first put back.
4. **Staging.** The block receives the path of a fresh staging folder beside
   the target (``.NAME.staging-PID-XXXX``, same parent, so the final rename
   stays on one file system). It is created on the first write (the writers
   of :mod:`actsim.io` make missing parents), so a run refused before it
   writes anything leaves nothing.
5. **Commit.** When the block succeeds, ``manifest.json`` is written (every
   file, its size in bytes and SHA-256, the actsim version, the kind of folder
   and its parts) and the staging folder is swapped in: on Linux one atomic
   ``renameat2(RENAME_EXCHANGE)``, elsewhere the old folder is renamed aside,
   the staging folder renamed in and the old one removed. Either way a reader
   finds the old complete folder or the new complete one, never a mixture.
6. **Failure.** Any exception (bad input found late, a failed run, Ctrl-C)
   removes the staging folder and any parent folder the call created; the
   previous folder, if any, is untouched. A ``kill -9`` leaves the previous
   folder untouched and a hidden staging folder that the next run removes.

The lock is POSIX (``fcntl``); on a system without it the folder is written
without one.
"""

from __future__ import annotations

import datetime as _dt
import errno
import hashlib
import json
import os
import secrets
import shutil
import sys
from contextlib import contextmanager
from pathlib import Path

from .errors import ActsimInputError

try:
    import fcntl
except ImportError:  # pragma: no cover - not POSIX
    fcntl = None

__all__ = ["MANIFEST_FILE", "MANIFEST_FORMAT", "KINDS", "PARTS", "DERIVED_FILES", "result_folder", "verify_folder",
           "write_manifest", "read_manifest", "work_folder", "link_files", "remove_part_files", "lock_path"]

#: Name of the manifest inside a result folder.
MANIFEST_FILE = "manifest.json"
#: ``format`` entry of every manifest actsim writes (how a folder is recognised as actsim's).
MANIFEST_FORMAT = "actsim result folder"
#: Version of the manifest layout.
MANIFEST_VERSION = 1
#: Kinds of folder: the verb that wrote it.
KINDS = ("run", "check", "sweep", "fit")
#: Optional parts of a folder, listed in the manifest: ``uncertainty`` (``actsim run --uncertainty``),
#: ``mask`` (a scenario with ``[mask]``: ``patterned.nc``), ``inverse`` (``actsim sweep --optimise``).
PARTS = ("uncertainty", "mask", "inverse", "along_strip")
#: Files a reader may add to a finished folder without making it invalid (``actsim report`` writes
#: ``report.html`` into the folder it reports on); anything else not in the manifest is refused.
DERIVED_FILES = ("report.html",)

_STAGING = "staging"
_OLD = "old"


def lock_path(target) -> Path:
    """The lock file of a result folder: ``.NAME.lock`` beside it."""
    target = Path(target)
    return target.parent / f".{target.name}.lock"


def work_folder(target, what: str) -> Path:
    """A work folder that survives an interrupted run, beside the target: ``.NAME.WHAT-work``.

    ``actsim sweep`` keeps its resumable chunk store there (``what="sweep"``);
    :func:`result_folder` never removes it on failure.
    """
    target = Path(target)
    return target.parent / f".{target.name}.{what}-work"


def link_files(src, dst) -> None:
    """Put every file below ``src`` at the same place below ``dst`` (hard links; copies where links fail).

    ``src`` is left as it is, so a run cut after this call loses nothing of it.
    """
    src, dst = Path(src), Path(dst)
    for rel in _files(src):
        if _is_part(rel):
            continue  # a temporary file of a write that never finished
        a, b = src / rel, dst / rel
        b.parent.mkdir(parents=True, exist_ok=True)
        try:
            os.link(a, b)
        except OSError:
            shutil.copy2(a, b)


def _is_part(rel: str) -> bool:
    name = Path(rel).name
    return name.startswith(".") and name.endswith(".part")


def remove_part_files(folder) -> None:
    """Remove the temporary ``.*.part`` files of writes cut by a killed process below ``folder``."""
    folder = Path(folder)
    if folder.is_dir():
        for rel in _files(folder):
            if _is_part(rel):
                (folder / rel).unlink(missing_ok=True)


def _sibling(target: Path, tag: str) -> Path:
    return target.parent / f".{target.name}.{tag}-{os.getpid()}-{secrets.token_hex(4)}"


def _leftovers(target: Path, tag: str) -> list[Path]:
    prefix = f".{target.name}.{tag}-"
    try:
        return sorted(p for p in target.parent.iterdir() if p.name.startswith(prefix))
    except FileNotFoundError:
        return []


def _remove(path: Path) -> None:
    if path.is_symlink() or path.is_file():
        path.unlink(missing_ok=True)
    elif path.is_dir():
        shutil.rmtree(path, ignore_errors=True)


def _sha256(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def _files(folder: Path) -> list[str]:
    """Relative POSIX paths of every file below ``folder`` (sorted); symbolic links count as files."""
    found = []
    for root, dirs, names in os.walk(folder):
        rel_root = Path(root).relative_to(folder)
        for d in dirs:
            if os.path.islink(os.path.join(root, d)):
                names.append(d)
        for n in names:
            found.append((rel_root / n).as_posix())
    return sorted(found)


# ----------------------------------------------------------------------------------------------
# manifest


def write_manifest(folder, *, kind: str, parts=()) -> dict:
    """Write ``manifest.json`` listing every file of ``folder`` (size and SHA-256); returns the record.

    :func:`result_folder` calls it when a run succeeds; call it yourself only on a
    folder you assembled by hand and want readers to accept as it is now.

    Parameters
    ----------
    folder : str or os.PathLike
        The folder to describe.
    kind : str
        One of :data:`KINDS`.
    parts : iterable of str
        Optional parts present (see :data:`PARTS`).
    """
    from . import __version__
    from .io import write_json

    if kind not in KINDS:
        raise ValueError(f"kind: {kind!r} is not one of {', '.join(KINDS)}")
    parts = sorted(set(parts))
    bad = [p for p in parts if p not in PARTS]
    if bad:
        raise ValueError(f"parts: {bad[0]!r} is not one of {', '.join(PARTS)}")
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    files = []
    for rel in _files(folder):
        if rel == MANIFEST_FILE:
            continue
        p = folder / rel
        if p.is_symlink():
            raise ActsimInputError(f"{p}: a symbolic link inside a result folder; result folders hold plain files")
        files.append({"path": rel, "bytes": p.stat().st_size, "sha256": _sha256(p)})
    record = {
        "format": MANIFEST_FORMAT,
        "format_version": MANIFEST_VERSION,
        "kind": kind,
        "parts": parts,
        "actsim_version": __version__,
        "written": _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ"),
        "files": files,
    }
    write_json(folder / MANIFEST_FILE, record)
    return record


def read_manifest(folder) -> dict | None:
    """The manifest of ``folder`` when it is an actsim manifest, else None (no file, not JSON, not ours)."""
    p = Path(folder) / MANIFEST_FILE
    try:
        record = json.loads(p.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if not isinstance(record, dict) or record.get("format") != MANIFEST_FORMAT or not isinstance(record.get("files"), list):
        return None
    return record


_RERUN = "re-run the command that wrote it"


def verify_folder(path, *, kinds=None, field: str = "RESULT_DIR", hint: str = _RERUN) -> dict:
    """Check that ``path`` is one complete result folder exactly as actsim wrote it; returns its manifest.

    Every reader of a result folder calls this first.

    Parameters
    ----------
    path : str or os.PathLike
        The result folder.
    kinds : iterable of str, optional
        Kinds of folder the reader accepts (default: any of :data:`KINDS`).
    field : str
        Name of the input in the error message (a command-line argument or parameter).
    hint : str
        What the user should do, appended to every error.

    Raises
    ------
    ActsimInputError
        One line: the folder does not exist; it has no actsim ``manifest.json`` (written
        by an older actsim, by hand, or by a run that did not finish); a listed file is
        missing or its size or SHA-256 differs (changed after the run); a file not in
        the manifest (other than :data:`DERIVED_FILES`) is present; or its kind is not
        one the reader accepts.
    """
    out = Path(path)
    if not out.is_dir():
        raise ActsimInputError(f"{field}: folder '{out}' does not exist; {hint}")
    record = read_manifest(out)
    if record is None:
        what = "an unreadable" if (out / MANIFEST_FILE).exists() else "no"
        raise ActsimInputError(
            f"{field}: '{out}' has {what} actsim {MANIFEST_FILE}, so it is not a complete result folder (written by "
            f"an actsim older than the manifest, by hand, or by a run that did not finish); {hint}"
        )
    if kinds is not None and record.get("kind") not in tuple(kinds):
        raise ActsimInputError(f"{field}: '{out}' holds the output of `actsim {record.get('kind')}`; this needs a "
                               f"folder written by {' or '.join(f'`actsim {k}`' for k in kinds)}")
    listed = {}
    for entry in record["files"]:
        if not isinstance(entry, dict) or not isinstance(entry.get("path"), str):
            raise ActsimInputError(f"{field}: '{out}/{MANIFEST_FILE}' has a malformed file entry; {hint}")
        listed[entry["path"]] = entry
    for rel, entry in listed.items():
        p = out / rel
        if Path(rel).is_absolute() or ".." in Path(rel).parts:
            raise ActsimInputError(f"{field}: '{out}/{MANIFEST_FILE}' lists '{rel}', outside the folder; {hint}")
        if p.is_symlink() or not p.is_file():
            raise ActsimInputError(f"{field}: '{rel}' in '{out}' is listed in its manifest but missing; {hint}")
        if p.stat().st_size != entry.get("bytes") or _sha256(p) != entry.get("sha256"):
            raise ActsimInputError(f"{field}: '{rel}' in '{out}' does not match its manifest (changed after the run); "
                                   f"{hint}")
    for rel in _files(out):
        if rel == MANIFEST_FILE or rel in listed:
            continue
        name = Path(rel).name
        if rel in DERIVED_FILES or any(name.startswith(f".{d}.") and name.endswith(".part") for d in DERIVED_FILES):
            continue
        raise ActsimInputError(f"{field}: '{rel}' in '{out}' is not in its manifest (added after the run, or left by "
                               f"another run); {hint}")
    return record


# ----------------------------------------------------------------------------------------------
# the transaction


def _acquire(target: Path, field: str):
    """Lock ``.NAME.lock`` (non-blocking); returns the open file descriptor, or None without fcntl."""
    if fcntl is None:  # pragma: no cover
        return None
    path = lock_path(target)
    while True:
        fd = os.open(path, os.O_RDWR | os.O_CREAT, 0o666)
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError as exc:
            if exc.errno not in (errno.EAGAIN, errno.EACCES, errno.EWOULDBLOCK):
                os.close(fd)
                raise
            try:
                holder = os.read(fd, 32).decode("ascii", "replace").strip()
            except OSError:
                holder = ""
            os.close(fd)
            who = f" by process {holder}" if holder.isdigit() else ""
            raise ActsimInputError(
                f"{field}: '{target}' is being written by another actsim run (lock file '{path}' held{who}); "
                "wait for it to finish or give another folder"
            ) from None
        # The holder before us may have removed the file after we opened it: lock the file on disk, not a ghost.
        try:
            same = os.stat(path).st_ino == os.fstat(fd).st_ino
        except FileNotFoundError:
            same = False
        if same:
            os.ftruncate(fd, 0)
            os.write(fd, f"{os.getpid()}\n".encode())
            return fd
        os.close(fd)


def _release(target: Path, fd) -> None:
    if fd is None:  # pragma: no cover
        return
    try:
        lock_path(target).unlink(missing_ok=True)  # still holding the lock: nobody else can be using the file
    finally:
        os.close(fd)


def _exchange(a: Path, b: Path) -> bool:
    """Swap two paths atomically (Linux ``renameat2(RENAME_EXCHANGE)``); False where it is not available."""
    if not sys.platform.startswith("linux"):
        return False
    import ctypes

    try:
        libc = ctypes.CDLL(None, use_errno=True)
        fn = libc.renameat2
    except (OSError, AttributeError):
        return False
    fn.argtypes = [ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p, ctypes.c_uint]
    fn.restype = ctypes.c_int
    at_fdcwd, rename_exchange = -100, 2
    if fn(at_fdcwd, os.fsencode(a), at_fdcwd, os.fsencode(b), rename_exchange) == 0:
        return True
    err = ctypes.get_errno()
    if err in (errno.ENOSYS, errno.EINVAL, errno.EOPNOTSUPP, getattr(errno, "ENOTSUP", errno.EOPNOTSUPP)):
        return False
    raise OSError(err, os.strerror(err), str(b))


def _swap_in(stage: Path, target: Path) -> None:
    """Put ``stage`` in place of ``target`` so that a reader sees the old or the new folder whole."""
    if not target.exists():
        os.rename(stage, target)
        return
    if _exchange(stage, target):
        shutil.rmtree(stage, ignore_errors=True)  # the old folder now has the staging name
        return
    old = _sibling(target, _OLD)
    os.rename(target, old)  # a kill here leaves .NAME.old-* complete; the next run puts it back first
    os.rename(stage, target)
    shutil.rmtree(old, ignore_errors=True)


def _check_target(target: Path, field: str, overwrite: bool) -> None:
    if target.exists() and not target.is_dir():
        raise ActsimInputError(f"{field}: '{target}' is a file, not a folder; give a folder for the results")
    if not target.is_dir() or overwrite:
        return
    if read_manifest(target) is not None:
        return  # written by actsim: replaced whole
    if any(target.iterdir()):
        raise ActsimInputError(
            f"{field}: '{target}' holds files that actsim did not write (no actsim {MANIFEST_FILE}); each run "
            "replaces its output folder whole, so give a new or empty folder, or --overwrite to replace this one"
        )


def _clean_leftovers(target: Path) -> None:
    olds = _leftovers(target, _OLD)
    if olds and not target.exists():
        os.rename(olds.pop(), target)  # a swap was cut between its two renames: the old folder comes back
    for p in olds + _leftovers(target, _STAGING):
        _remove(p)


#: Environment variable: seconds to wait, holding the lock, between the last write into the staging folder and
#: the commit (for the interruption and concurrency tests; like ``ACTSIM_SWEEP_PAUSE`` of the sweeps).
PAUSE_ENV = "ACTSIM_FOLDER_PAUSE"


def _test_pause() -> None:
    try:
        pause = float(os.environ.get(PAUSE_ENV, "0") or 0)
    except ValueError:
        pause = 0.0
    if pause > 0:
        import time

        time.sleep(pause)


def _named_for_target(exc, stage: Path, target: Path):
    """The same error naming the user's folder instead of the staging folder (None: nothing to rename)."""
    from .errors import ActsimError

    hidden, shown = str(stage), str(target)
    try:
        if isinstance(exc, ActsimError) and hidden in str(exc):
            new = type(exc)(str(exc).replace(hidden, shown))
        elif isinstance(exc, OSError) and hidden in str(exc.filename or ""):
            new = type(exc)(exc.errno, exc.strerror, str(exc.filename).replace(hidden, shown))
        else:
            return None
    except Exception:  # an exception type with another constructor: keep the original
        return None
    return new


def _make_parents(folder: Path) -> list[Path]:
    """Create the missing parents of ``folder``; returns those created (deepest last)."""
    missing = []
    p = folder
    while not p.exists():
        missing.append(p)
        if p.parent == p:
            break
        p = p.parent
    folder.mkdir(parents=True, exist_ok=True)
    return list(reversed(missing))


@contextmanager
def result_folder(target, *, kind: str, overwrite: bool = False, parts=(), field: str = "-o/--output",
                  then_remove=()):
    """Write a result folder as one transaction; yields the staging folder to write into.

    See the module docstring for the steps and the rerun policy.

    Parameters
    ----------
    target : str or os.PathLike
        The result folder the user named.
    kind : str
        The verb writing it, one of :data:`KINDS` (recorded in the manifest).
    overwrite : bool
        Replace ``target`` even when it is a non-empty folder actsim did not write.
    parts : iterable of str
        Optional parts the folder will hold (:data:`PARTS`), recorded in the manifest.
    field : str
        Name of the option in error messages.
    then_remove : iterable of path
        Paths removed after a successful swap, while the lock is still held (e.g. a
        sweep's work folder whose chunks were moved into the staging folder).

    Yields
    ------
    pathlib.Path
        The staging folder (created by the first write into it, or at the commit).

    Raises
    ------
    ActsimInputError
        ``target`` is a file, is locked by another run, or is a non-empty folder
        without an actsim manifest and ``overwrite`` is false.
    """
    if kind not in KINDS:
        raise ValueError(f"kind: {kind!r} is not one of {', '.join(KINDS)}")
    target = Path(target)
    if target.is_symlink():
        target = target.resolve()
    if target.exists() and not target.is_dir():
        raise ActsimInputError(f"{field}: '{target}' is a file, not a folder; give a folder for the results")
    created = _make_parents(target.parent)
    fd = None
    stage = None
    try:
        fd = _acquire(target, field)
        _clean_leftovers(target)
        _check_target(target, field, overwrite)
        stage = _sibling(target, _STAGING)
        yield stage
        _test_pause()
        stage.mkdir(exist_ok=True)
        write_manifest(stage, kind=kind, parts=parts)
        _swap_in(stage, target)
        stage = None
        for p in then_remove:
            _remove(Path(p))
    except BaseException as exc:
        if stage is not None:
            _remove(stage)
            renamed = _named_for_target(exc, stage, target)
            if renamed is not None:
                raise renamed from None
        raise
    finally:
        try:
            _release(target, fd)
        finally:
            if not target.exists():
                for p in reversed(created):
                    try:
                        p.rmdir()
                    except OSError:
                        break

