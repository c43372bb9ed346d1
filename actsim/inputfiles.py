"""Safe reading of the files a user names: where a data file may be, what it may be, how it is decoded.

Every text file actsim reads (scenario TOML, CSV data, fit plans, a result folder's
``scenario.toml`` and ``checks.json``) goes through :func:`read_text_file`: it must be a
regular file (never a folder, device, FIFO or socket, never under ``/proc``, ``/sys`` or
``/dev``), at most :data:`MAX_TEXT_FILE_BYTES` long (checked before reading), and UTF-8 text
(strict; a leading byte-order mark is dropped). A FIFO is opened with ``O_NONBLOCK`` and
refused after ``fstat``, so it cannot hang the reader.

A data file named inside a scenario, fit plan or sweep value resolves against the folder of
that file (:func:`resolve_data_path`) and must stay inside it: ``../``, absolute paths and
symbolic links that lead out of the folder are refused unless the user running actsim allows
it with the environment variable :data:`ALLOW_OUTSIDE_ENV` (``ACTSIM_ALLOW_OUTSIDE_FILES=1``).
The switch belongs to the person running the command, not to the file: a scenario received
from someone else cannot open files elsewhere on this machine by itself.

Every problem is one :class:`~actsim.errors.ActsimInputError` line naming the field and the
file, never the file's contents.
"""

from __future__ import annotations

import os
import stat
from pathlib import Path

from .errors import ActsimInputError
from .sentfiles import sent_file

__all__ = ["MAX_TEXT_FILE_BYTES", "ALLOW_OUTSIDE_ENV", "outside_allowed", "resolve_data_path", "check_data_file",
           "read_file_bytes", "read_text_file"]

#: Largest text or data file read [bytes] (50 MiB); checked with ``stat`` before reading.
MAX_TEXT_FILE_BYTES = 50 * 2**20

#: Environment variable that, set to 1 (or true/yes), lets data files lie outside the scenario's folder.
ALLOW_OUTSIDE_ENV = "ACTSIM_ALLOW_OUTSIDE_FILES"

#: Folders whose files are never data (kernel interfaces and devices).
_SYSTEM_FOLDERS = ("/proc", "/sys", "/dev")


def outside_allowed() -> bool:
    """True when the user allows data files outside the scenario's folder (:data:`ALLOW_OUTSIDE_ENV`)."""
    return os.environ.get(ALLOW_OUTSIDE_ENV, "").strip().lower() in ("1", "true", "yes", "on")


def _label(field: str) -> str:
    return f"{field}: " if field else ""


def _in_system_folder(real: str) -> bool:
    return any(real == d or real.startswith(d + os.sep) for d in _SYSTEM_FOLDERS)


def resolve_data_path(name, *, base_dir, field: str) -> Path:
    """The path of a data file named in a scenario (or fit plan, or sweep value), checked to stay in its folder.

    Parameters
    ----------
    name : str or os.PathLike
        The file name as written (``"data/led.csv"``); relative names resolve against ``base_dir``.
    base_dir : str or os.PathLike
        The folder of the file that names it.
    field : str
        The field that names the file (``"sources[0].file"``), for the one-line error.

    Returns
    -------
    pathlib.Path
        ``base_dir / name`` (not resolved: messages show the name as written).

    Raises
    ------
    ActsimInputError
        The name is empty, or it leads out of ``base_dir`` (``../``, an absolute path, a symbolic
        link pointing elsewhere) and :data:`ALLOW_OUTSIDE_ENV` is not set, or it lies under
        ``/proc``, ``/sys`` or ``/dev`` (always refused).
    """
    text = os.fspath(name)
    if not str(text).strip():
        raise ActsimInputError(f"{_label(field)}empty file name")
    if "\x00" in str(text):
        raise ActsimInputError(f"{_label(field)}file name contains a NUL character")
    base = Path(base_dir)
    path = base / text
    real = os.path.realpath(path)
    if _in_system_folder(real):
        raise ActsimInputError(f"{_label(field)}'{text}' is a system file under /proc, /sys or /dev, not a data file")
    if not outside_allowed():
        root = os.path.realpath(base)
        try:
            inside = os.path.commonpath([root, real]) == root
        except ValueError:  # another drive
            inside = False
        if not inside:
            raise ActsimInputError(
                f"{_label(field)}'{text}' lies outside the scenario's folder; keep data files in that folder "
                f"(or below it), or set {ALLOW_OUTSIDE_ENV}=1 to allow files elsewhere")
    return path


def _check_stat(st, shown: str, field: str, max_bytes: int):
    if stat.S_ISDIR(st.st_mode):
        raise ActsimInputError(f"{_label(field)}'{shown}' is a folder, not a file")
    if not stat.S_ISREG(st.st_mode):
        raise ActsimInputError(f"{_label(field)}'{shown}' is not a regular file (a device, pipe or socket)")
    if st.st_size > max_bytes:
        raise ActsimInputError(f"{_label(field)}'{shown}' is {st.st_size / 2**20:.1f} MiB, more than the "
                               f"{max_bytes / 2**20:g} MiB allowed for a text or data file")


def check_data_file(path, *, field: str, shown: str | None = None, max_bytes: int | None = None) -> None:
    """Check, without opening it, that ``path`` is a regular file of at most ``max_bytes``.

    Parameters
    ----------
    path : str or os.PathLike
        The file.
    field : str
        The field or option that named it, for the one-line error.
    shown : str, optional
        The name shown in messages (default: ``path`` as given).
    max_bytes : int, optional
        Largest size accepted [bytes]; default :data:`MAX_TEXT_FILE_BYTES`.

    Raises
    ------
    ActsimInputError
        Missing; a folder, device, FIFO or socket; under ``/proc``, ``/sys`` or ``/dev``; too large.
    """
    shown = os.fspath(path) if shown is None else shown
    max_bytes = MAX_TEXT_FILE_BYTES if max_bytes is None else max_bytes
    sent = sent_file(path)  # a sweep task's data files (actsim.sentfiles): never this machine's disk
    if sent is not None:
        if len(sent) > max_bytes:
            raise ActsimInputError(f"{_label(field)}'{shown}' is {len(sent) / 2**20:.1f} MiB, more than the "
                                   f"{max_bytes / 2**20:g} MiB allowed for a text or data file")
        return
    if _in_system_folder(os.path.realpath(path)):
        raise ActsimInputError(f"{_label(field)}'{shown}' is a system file under /proc, /sys or /dev, not a data file")
    try:
        st = os.stat(path)
    except FileNotFoundError:
        raise ActsimInputError(f"{_label(field)}file '{shown}' does not exist") from None
    except OSError as exc:
        raise ActsimInputError(f"{_label(field)}'{shown}' cannot be read ({exc.strerror})") from None
    _check_stat(st, shown, field, max_bytes)


def read_file_bytes(path, *, field: str = "", shown: str | None = None, max_bytes: int | None = None) -> bytes:
    """The bytes of a regular file of at most ``max_bytes``, checked as in :func:`check_data_file`.

    The path is checked with ``stat`` before it is opened (no device is ever opened), opened
    with ``O_NONBLOCK`` (a FIFO swapped in meanwhile cannot hang) and checked again with
    ``fstat``; reading stops past ``max_bytes``.

    Parameters
    ----------
    path : str or os.PathLike
        The file.
    field : str
        The field or option that named it, for messages.
    shown : str, optional
        The name shown in messages (default: ``path`` as given).
    max_bytes : int, optional
        Largest size accepted [bytes]; default :data:`MAX_TEXT_FILE_BYTES`.

    Returns
    -------
    bytes
    """
    shown = os.fspath(path) if shown is None else shown
    max_bytes = MAX_TEXT_FILE_BYTES if max_bytes is None else max_bytes
    check_data_file(path, field=field, shown=shown, max_bytes=max_bytes)
    sent = sent_file(path)
    if sent is not None:
        return sent
    try:
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0))
    except OSError as exc:
        raise ActsimInputError(f"{_label(field)}'{shown}' cannot be read ({exc.strerror})") from None
    try:
        st = os.fstat(fd)  # the file opened is the file checked (it may have been swapped since the stat)
        _check_stat(st, shown, field, max_bytes)
        chunks, total = [], 0
        while True:
            block = os.read(fd, 1 << 20)
            if not block:
                break
            total += len(block)
            if total > max_bytes:
                raise ActsimInputError(f"{_label(field)}'{shown}' is more than the {max_bytes / 2**20:g} MiB "
                                       "allowed for a text or data file")
            chunks.append(block)
    except OSError as exc:
        raise ActsimInputError(f"{_label(field)}'{shown}' cannot be read ({exc.strerror})") from None
    finally:
        os.close(fd)
    return b"".join(chunks)


def read_text_file(path, *, field: str = "", shown: str | None = None, what: str = "text",
                   max_bytes: int | None = None) -> str:
    """Read a regular file of at most ``max_bytes`` as strict UTF-8 text.

    Parameters
    ----------
    path : str or os.PathLike
        The file.
    field : str
        The field or option that named it (``"scenario"``, ``"sources[0].file"``), for messages.
    shown : str, optional
        The name shown in messages (default: ``path`` as given).
    what : str
        What the file should be, for the encoding message (``"TOML"``, ``"CSV"``, ``"JSON"``).
    max_bytes : int
        Largest size accepted [bytes]; default :data:`MAX_TEXT_FILE_BYTES`.

    Returns
    -------
    str
        The text, without a leading byte-order mark.

    Raises
    ------
    ActsimInputError
        As :func:`check_data_file`, and when the bytes are not UTF-8 ("not UTF-8 text").
    """
    shown = os.fspath(path) if shown is None else shown
    data = read_file_bytes(path, field=field, shown=shown, max_bytes=max_bytes)
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data.count(b"\n", 0, exc.start) + 1
        raise ActsimInputError(f"{_label(field)}'{shown}' is not UTF-8 text (byte {exc.start + 1}, line {line}); "
                               f"save it as UTF-8 {what}") from None
    return text[1:] if text.startswith("\ufeff") else text
