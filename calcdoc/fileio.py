"""Files calcdoc writes, and the files it ships.

Writing: :func:`check_output` looks at an output location before any work
starts (not the input itself, a folder that exists and can be written, a
disk that is not full); :func:`write_atomic` then writes the bytes to a
temporary file named ``.NAME.XXXX.calcdoc-partial`` beside the target and
renames it into place, so a failed or stopped run leaves an earlier file
untouched and no partial file behind. A new file gets the mode the umask
allows (as any program's would), a rebuilt file keeps its mode, and a
symbolic link is written through: the file it points at is replaced, the
link stays.

Shipped files: :func:`shipped` finds the report styles and the starter
project, which live in the repository's ``templates/`` folder and are
installed inside the package as ``calcdoc/templates/``.
"""

from __future__ import annotations

import contextlib
import os
import signal
import stat
import threading
from collections.abc import Iterator, Sequence
from pathlib import Path

from calcdoc.errors import CalcdocError

PARTIAL_SUFFIX = ".calcdoc-partial"
"""Ending of the temporary file a write goes through (removed on every catchable exit)."""

MIN_FREE_BYTES = 64 * 1024
"""Below this much free space an output is refused before any work starts."""


class OutputNotWritableError(CalcdocError):
    """The output location cannot be written (message names the output path)."""


class OutputIsInputError(CalcdocError):
    """The output path is an input file (the same file once links are resolved)."""


class OutputExistsError(CalcdocError):
    """A file that must not be overwritten already exists."""


class Stopped(BaseException):
    """A stop signal (SIGTERM, SIGHUP) arrived while a file was being written."""

    def __init__(self, signum: int) -> None:
        super().__init__(signum)
        self.signum = signum


# ---------------------------------------------------------------- shipped files


def shipped(name: str) -> Path:
    """Path of a file shipped with calcdoc, e.g. ``shipped("compact.toml")``.

    Installed, the files are package data (``calcdoc/templates/``, read
    through :mod:`importlib.resources`); in a source checkout that is not
    installed they are the repository's ``templates/`` folder, their one
    source. The path may not exist: callers check.
    """
    from importlib.resources import files

    installed = files("calcdoc") / "templates"
    if installed.is_dir():
        return Path(str(installed / name))
    return Path(__file__).resolve().parent.parent / "templates" / name


# ---------------------------------------------------------------- output checks


def _same_file(a: Path, b: Path) -> bool:
    try:
        return os.path.samefile(a, b)
    except OSError:
        return False


def check_output(path: str | Path, inputs: Sequence[str | Path] = ()) -> Path:
    """Check that ``path`` can be written and is none of ``inputs``; nothing is written.

    Parameters
    ----------
    path : str or Path
        The output as the user named it.
    inputs : sequence of paths
        Files the run reads (the project file): the output may not be one of
        them, also through a symbolic or hard link.

    Returns
    -------
    Path
        The file that will be written (``path`` with symbolic links resolved).

    Raises
    ------
    OutputIsInputError, OutputNotWritableError
        With a message that starts with ``path``.
    """
    out = Path(path)
    target = Path(os.path.realpath(out))
    for inp in inputs:
        if target == Path(os.path.realpath(inp)) or _same_file(out, Path(inp)):
            raise OutputIsInputError(
                f"{out}: the output would overwrite the input file {inp}; choose another output"
            )

    def refuse(reason: str) -> OutputNotWritableError:
        return OutputNotWritableError(f"{out}: cannot write the output: {reason}")

    if target.is_dir():
        raise refuse("it is a folder")
    if target.exists() and not target.is_file():
        raise refuse("it exists and is not a regular file")
    folder = target.parent
    if not folder.is_dir():
        above = folder
        while not above.exists() and above != above.parent:
            above = above.parent
        if above.exists() and not above.is_dir():
            raise refuse(f"{above} is a file, not a folder")
        raise refuse(f"the folder {folder} does not exist")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise refuse(f"the folder {folder} is not writable")
    try:
        fs = os.statvfs(folder)
    except (OSError, AttributeError):  # pragma: no cover - no statvfs (Windows)
        return target
    if fs.f_flag & os.ST_RDONLY:
        raise refuse(f"the folder {folder} is on a read-only file system")
    free = fs.f_bavail * fs.f_frsize
    if free < MIN_FREE_BYTES:
        raise refuse(f"the disk holding {folder} is full ({free // 1024} KiB free)")
    return target


# ---------------------------------------------------------------- atomic write


@contextlib.contextmanager
def stops_raise() -> Iterator[None]:
    """Turn SIGTERM and SIGHUP into :class:`Stopped` while the body runs.

    Only signals left at their default action are taken over (an ignored
    signal stays ignored, a program's own handler stays in charge). After
    the body has cleaned up, the signal is delivered again with its default
    action, so the process still ends as the sender asked.
    """
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    taken: list[int] = []

    def handler(signum: int, _frame: object) -> None:
        raise Stopped(signum)

    for name in ("SIGTERM", "SIGHUP"):
        num = getattr(signal, name, None)
        if num is not None and signal.getsignal(num) is signal.SIG_DFL:
            signal.signal(num, handler)
            taken.append(num)
    try:
        yield
    except Stopped as stop:
        for num in taken:
            signal.signal(num, signal.SIG_DFL)
        taken.clear()
        os.kill(os.getpid(), stop.signum)
        raise  # pragma: no cover - only reached if the default action did not end the process
    finally:
        for num in taken:
            signal.signal(num, signal.SIG_DFL)


def _new_file_mode() -> int:
    mask = os.umask(0o022)
    os.umask(mask)
    return 0o666 & ~mask


def write_atomic(path: str | Path, data: bytes, *, replace: bool = True) -> None:
    """Write ``data`` to ``path`` via a temporary file and an atomic rename.

    A failure, Ctrl-C, SIGTERM or SIGHUP at any point leaves an existing
    file at ``path`` untouched and no partial file behind.

    Parameters
    ----------
    path : str or Path
        The output; a symbolic link is written through.
    data : bytes
    replace : bool
        False: never overwrite an existing file (:class:`OutputExistsError`).

    Raises
    ------
    OutputNotWritableError
        The file could not be written (message names ``path``).
    OutputExistsError
        ``replace`` is False and ``path`` exists.
    """
    target = Path(os.path.realpath(path))
    try:
        mode = stat.S_IMODE(target.stat().st_mode) if replace else _new_file_mode()
    except FileNotFoundError:
        mode = _new_file_mode()
    except OSError as exc:
        raise OutputNotWritableError(
            f"{path}: cannot write the output: {exc.strerror or exc}"
        ) from None
    with stops_raise():
        tmp = None
        try:
            fd, tmp = _create_partial(target)
            with os.fdopen(fd, "wb") as fh:
                fh.write(data)
                fh.flush()
                os.fchmod(fh.fileno(), mode)
                os.fsync(fh.fileno())
            if replace:
                os.replace(tmp, target)
            else:
                os.link(tmp, target)
                os.unlink(tmp)
        except BaseException as exc:
            if tmp is not None:
                with contextlib.suppress(FileNotFoundError):
                    os.unlink(tmp)
            if isinstance(exc, FileExistsError):
                raise OutputExistsError(f"{path}: already exists; not overwritten") from None
            if isinstance(exc, OSError):
                raise OutputNotWritableError(
                    f"{path}: cannot write the output: {exc.strerror or exc}"
                ) from None
            raise


def _create_partial(target: Path) -> tuple[int, Path]:
    """Create ``.NAME.XXXXXXXX.calcdoc-partial`` beside ``target``; returns (fd, path).

    Should a stop arrive while the file is being created, the file is removed.
    """
    import secrets

    flags = os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_CLOEXEC", 0)
    while True:
        tmp = target.parent / f".{target.name}.{secrets.token_hex(4)}{PARTIAL_SUFFIX}"
        try:
            return os.open(tmp, flags, 0o600), tmp
        except FileExistsError:
            continue
        except BaseException:
            with contextlib.suppress(OSError):
                os.unlink(tmp)
            raise
