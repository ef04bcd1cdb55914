"""Writing outputs atomically, and never over something that exists without ``force``.

Every command that writes follows the same habits:

- an output that exists is replaced only with ``force`` (the command line's
  ``--force``); without it :func:`check_target` refuses before anything is
  computed or written;
- a file is written to a temporary sibling and renamed into place
  (:func:`new_file`, :func:`write_file`);
- a folder is built beside the target and swapped in as a whole
  (:func:`new_folder`), so no file of a previous run survives in it;
- what is written gets the user's ordinary permissions (``0o666`` or
  ``0o777`` less the umask), not the private ones of :mod:`tempfile`;
- a folder being built is named after its process (``.OUT.new.<pid>@<host>.*``):
  a run killed with SIGKILL, which no handler sees, leaves it behind, and the next
  run writing OUT deletes it once that process no longer runs.
"""

from __future__ import annotations

import glob
import os
import re
import shutil
import signal
import socket
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from faciesseq.errors import ConfigError

__all__ = [
    "check_target",
    "new_file",
    "new_folder",
    "signals_held",
    "temporary_folder",
    "write_file",
]


def current_umask() -> int:
    """The process umask (read by setting it and putting it back)."""
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def _parent(path: Path) -> Path:
    return path.parent if str(path.parent) else Path(".")


def check_target(
    path: str | os.PathLike,
    *,
    force: bool,
    folder: bool,
    option: str = "-o",
    make_parents: bool = False,
    inputs: tuple[str, ...] = (),
) -> Path:
    """Check that an output may be written to ``path``; return it as a :class:`~pathlib.Path`.

    Parameters
    ----------
    path
        The file or folder to write.
    force
        Whether an existing ``path`` may be replaced.
    folder
        ``True`` when the output is a folder, ``False`` for a file.
    option
        The option that named ``path``, for the message.
    make_parents
        The caller creates missing parent folders; do not require them.
    inputs
        Files and folders the command reads: ``path`` may not be one of them, nor a
        folder holding one, even with ``force`` (replacing it would lose the input).

    Raises
    ------
    ConfigError
        ``path`` exists and ``force`` is false; it exists as the other kind
        (a folder where a file is written, or the reverse); it is, or holds, one of
        the ``inputs``; its parent folder does not exist (unless
        ``make_parents``); or the folder it would be made in is not writable
        (checked here, before any work; a refusal found only when writing is the
        same one line, from :func:`new_file` and :func:`new_folder`). Exit code 2.
    """
    target = Path(path)
    kind = "folder" if folder else "file"
    _not_an_input(target, inputs, option)
    if target.exists() and target.is_dir() != folder:
        other = "a folder" if target.is_dir() else "a file"
        raise ConfigError(f"is {other}; give a {kind} name to {option}", file=str(target))
    if target.exists() and not force:
        raise ConfigError(
            f"exists; pass --force to replace it, or choose another {option}", file=str(target)
        )
    parent = _parent(target)
    if not make_parents and not parent.is_dir():
        raise ConfigError(f"folder {str(parent)!r} does not exist", file=str(target))
    while not parent.exists() and parent != _parent(parent):  # the folder made first
        parent = _parent(parent)
    if parent.is_dir() and not os.access(parent, os.W_OK | os.X_OK):
        raise ConfigError(_unwritable(parent, "permission denied"), file=str(target))
    return target


def _unwritable(parent: Path, reason: str) -> str:
    return f"cannot write in folder {str(parent)!r} ({reason}); choose another folder"


@contextmanager
def _writable(target: Path) -> Iterator[None]:
    """An operating-system error making the temporary beside ``target`` (a read-only or
    full file system, ...) as one line naming the folder (exit code 2), not a traceback."""
    try:
        yield
    except OSError as exc:
        reason = (exc.strerror or str(exc)).lower()
        raise ConfigError(_unwritable(_parent(target), reason), file=str(target)) from None


def _not_an_input(target: Path, inputs: tuple[str, ...], option: str) -> None:
    """Refuse an output that is, or (a folder) holds, a file the command reads."""
    if not target.exists():
        return
    whole = target.resolve()
    for given in inputs:
        if not Path(given).exists():  # a URL, or reported missing by the reading
            continue
        read = Path(given).resolve()
        if read == whole or (target.is_dir() and read.is_relative_to(whole)):
            what = "is" if read == whole else "holds"
            raise ConfigError(
                f"{what} {given}, which this command reads; writing there would lose it: "
                f"choose another {option}",
                file=str(target),
            )


@contextmanager
def signals_held() -> Iterator[None]:
    """Ctrl-C and SIGTERM held back while a temporary file or folder is made and its
    name kept, so that an interruption never leaves one that nobody deletes; a signal
    that came meanwhile is raised again, to its own handler, as the block ends. Make
    the temporary inside the ``try`` that deletes it, with the name set to ``None``
    before it.

    The signals are caught by a Python handler for the block (Python runs signal
    handlers in the main thread, whichever thread the kernel hands a signal to; a
    blocking mask would hold them in one thread only). Outside the main thread no
    handler can be set, and the block simply runs."""
    caught: list[int] = []
    previous = {}
    try:
        for sig in (signal.SIGINT, signal.SIGTERM):
            previous[sig] = signal.signal(sig, lambda signum, frame: caught.append(signum))
    except (ValueError, OSError):  # not the main thread
        for sig, handler in previous.items():
            signal.signal(sig, handler)
        yield
        return
    try:
        yield
    finally:
        for sig, handler in previous.items():
            signal.signal(sig, signal.SIG_DFL if handler is None else handler)
        for sig in dict.fromkeys(caught):
            signal.raise_signal(sig)


@contextmanager
def temporary_folder(prefix: str, parent: Path, target: Path | None = None) -> Iterator[Path]:
    """A new hidden folder in ``parent``, deleted with what is left in it when the block
    ends, however it ends (made under :func:`signals_held`); ``target``, the output it
    is made for, is what an error making it names."""
    temp = None
    try:
        with signals_held(), _writable(parent / prefix if target is None else target):
            temp = Path(tempfile.mkdtemp(prefix=prefix, dir=parent))
        yield temp
    finally:
        if temp is not None:
            shutil.rmtree(temp, ignore_errors=True)


@contextmanager
def new_file(path: str | os.PathLike, suffix: str = ".tmp") -> Iterator[Path]:
    """Write a file beside ``path``, then rename it into place.

    Yields the path of a new, empty temporary file in the same folder as
    ``path`` (ending in ``suffix``, for writers that read the format from it).
    When the block ends without an exception it replaces ``path`` and gets the
    user's ordinary permissions; however the block ends, no temporary file is
    left (made under :func:`signals_held`).
    """
    target = Path(path)
    tmp = None
    try:
        with signals_held(), _writable(target):
            fd, name = tempfile.mkstemp(
                prefix=f".{target.name}.", suffix=suffix, dir=_parent(target)
            )
            tmp = Path(name)
        os.close(fd)
        yield tmp
        os.replace(tmp, target)
        os.chmod(target, 0o666 & ~current_umask())
    finally:
        if tmp is not None:
            tmp.unlink(missing_ok=True)


def write_file(path: str | os.PathLike, data: str | bytes) -> Path:
    """Write ``data`` to a temporary sibling of ``path``, then rename it into place.

    Parameters
    ----------
    path
        The file to write; an existing file is replaced (check first with
        :func:`check_target`).
    data
        Text (written as UTF-8) or bytes.

    Returns
    -------
    pathlib.Path
        ``path``.
    """
    with new_file(path) as tmp:
        tmp.write_bytes(data.encode("utf-8") if isinstance(data, str) else data)
    return Path(path)


def _swap(temp: Path, target: Path) -> None:
    """Put ``temp`` where ``target`` is; the old ``target`` (if any) is deleted afterwards."""
    if not target.exists():
        os.replace(temp, target)
        return
    with temporary_folder(f".{target.name}.old.", _parent(target)) as trash:
        os.replace(target, trash / target.name)
        try:
            os.replace(temp, target)
        except BaseException:
            os.replace(trash / target.name, target)  # put the old folder back
            raise


def _running(pid: int) -> bool:
    """Whether process ``pid`` runs on this host (another user's counts as running)."""
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OverflowError):
        return True  # another user's process; a number no process has is kept too
    return True


def _remove_stale(parent: Path, prefix: str) -> None:
    """Delete the folders ``<prefix><pid>@<host>.*`` in ``parent`` made on this host by a
    process that no longer runs (killed with SIGKILL while it built its output)."""
    host = socket.gethostname()
    name = re.compile(re.escape(prefix) + r"(\d+)@(.+)\.[A-Za-z0-9_]+")
    for entry in parent.glob(glob.escape(prefix) + "*"):
        found = name.fullmatch(entry.name)
        if found and found[2] == host and entry.is_dir() and not _running(int(found[1])):
            shutil.rmtree(entry, ignore_errors=True)


@contextmanager
def new_folder(path: str | os.PathLike) -> Iterator[Path]:
    """Build a folder beside ``path``, then swap it in as a whole.

    Yields a new, empty temporary folder in the same parent folder as
    ``path``. When the block ends without an exception the temporary folder
    replaces ``path`` (an existing folder is removed, so no file of a previous
    run remains) and gets the user's ordinary permissions; on an exception it
    is deleted and ``path`` is left as it was. Temporary folders of ``path`` left
    by a process that no longer runs (killed with SIGKILL) are deleted first.

    Parameters
    ----------
    path
        The folder to write (check first with :func:`check_target`).

    Yields
    ------
    pathlib.Path
        The temporary folder to fill.
    """
    target = Path(path)
    prefix = f".{target.name}.new."
    _remove_stale(_parent(target), prefix)
    owner = f"{prefix}{os.getpid()}@{socket.gethostname()}."
    with temporary_folder(owner, _parent(target), target) as temp:
        yield temp
        _swap(temp, target)
    target.chmod(0o777 & ~current_umask())
