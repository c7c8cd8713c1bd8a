"""Writing outputs so that a reader finds the previous set or the new one, never a mix.

One invocation writes a *set*: files of one name (``RUN.record.json``, ``RUN.points.csv``, …)
in an output folder, and perhaps a file elsewhere (``--json FILE``). :func:`write_outputs`

1. refuses, before anything is written, an output that is an input (by identity of the file:
   symlinks, relative paths, hard links and case-insensitive file systems included), a folder
   or file path occupied by the other kind, and an output folder that holds folders, the
   inputs or the current folder (the folder is replaced as a whole);
2. takes a lock beside every target (``.NAME.activolt.lock``, holding the process id, made
   from a private file created with ``O_EXCL`` and hard-linked to the lock's name, so that it
   is never seen empty); a lock held by a live process is refused, one left by a dead process
   is taken over, together with its temporaries;
3. builds the new folder beside the old one (``.NAME.activolt-PID-TOKEN.new``): the new files,
   with the modes of the files they replace, and hard links (or copies) of the files of other
   sets, which are kept; files of the same set that the new set no longer holds are left out.
   The new files are made durable before the swap, with one ``syncfs`` on Linux (else an
   ``fsync`` of each); :func:`output_set` lets the files be streamed into the new folder, by
   worker processes too, so that a set of many series is never held in memory;
4. swaps the two folders in one step (``renameat2(RENAME_EXCHANGE)`` on Linux,
   ``renamex_np(RENAME_SWAP)`` on macOS; elsewhere two renames, and a folder left at ``.old``
   by a killed run is put back by the next one), then replaces the separate files, with Ctrl-C
   and SIGTERM held back during these renames; a failure undoes the swap;
5. removes every temporary on every exit path; a killed run's are removed by the next run.

A failed write (full disk, file-size limit, no permission) raises
:class:`activolt.errors.InputError` and leaves the previous outputs as they were and no new file
or folder behind.
"""

from __future__ import annotations

import contextlib
import ctypes
import errno
import os
import re
import secrets
import shutil
import signal
import stat
import sys
import threading
import unicodedata
from collections.abc import Callable, Collection, Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path

from ..errors import InputError

__all__ = ["StagedFolder", "check_outputs", "output_set", "write_atomically",
           "write_outputs", "written_back_meanwhile"]

_TEMPORARY = re.compile(r"^\.(?P<target>.+)\.activolt-(?P<pid>\d+)-[0-9a-f]{8}\."
                        r"(?P<kind>new|old|tmp)$")
#: An empty lock file this young may be a lock being written; older, it is stale [s].
_EMPTY_LOCK_GRACE_S = 10.0


def _temporary(target: Path, kind: str) -> Path:
    return target.parent / f".{target.name}.activolt-{os.getpid()}-{secrets.token_hex(4)}.{kind}"


def _lock_path(target: Path) -> Path:
    return target.parent / f".{target.name}.activolt.lock"


def _umask() -> int:
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def _alive(pid: int) -> bool:
    """Whether process ``pid`` exists (our own process counts as not holding anything)."""
    if pid == os.getpid():
        return False
    if os.name == "nt":  # os.kill would terminate it; treat the lock as held
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # exists, another user's
        return True
    except OSError:
        return False
    return True


def _lock_holder(path: Path) -> tuple[int | None, float]:
    """(process id in the lock or None, age of the lock [s])."""
    import time

    try:
        text = path.read_text(encoding="ascii", errors="replace").strip()
        age = time.time() - path.stat().st_mtime
    except FileNotFoundError:
        return None, 0.0
    return (int(text) if text.isdigit() else None), age


@contextlib.contextmanager
def _locked(target: Path, shown: str) -> Iterator[None]:
    """Hold the lock of ``target`` (a lock file created with O_EXCL beside it)."""
    path = _lock_path(target)
    mine = f"{os.getpid()}\n".encode("ascii")
    for _ in range(5):
        if not _create_lock(path, mine, target):
            holder, age = _lock_holder(path)
            if (holder is not None and _alive(holder)) or (
                    holder is None and age < _EMPTY_LOCK_GRACE_S):
                who = f"process {holder}" if holder is not None else "another process"
                raise InputError(f"another activolt run ({who}) is writing here; wait for it to "
                                 f"finish, or remove {path.name} if no run is going on",
                                 file=shown) from None
            _take_over(path, holder)
            continue
        break
    else:
        raise InputError("cannot take the lock of this output; another activolt run keeps "
                         "taking it", file=shown)
    try:
        yield
    finally:
        with contextlib.suppress(OSError):
            if path.read_bytes() == mine:
                path.unlink()


def _create_lock(path: Path, content: bytes, target: Path) -> bool:
    """Create the lock file with its content in one step; False if it exists.

    The process id is written to a private file (created with O_EXCL) that is then hard-linked
    to the lock's name, which fails when the lock exists: a lock is never seen empty, even when
    its writer is killed. Where hard links are not supported, the lock itself is created with
    O_EXCL and then written.
    """
    private = _temporary(target, "tmp")
    handle = os.open(private, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o644)
    try:
        os.write(handle, content)
    finally:
        os.close(handle)
    try:
        os.link(private, path)
        return True
    except FileExistsError:
        return False
    except OSError:
        try:
            handle = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o644)
        except FileExistsError:
            return False
        try:
            os.write(handle, content)
        finally:
            os.close(handle)
        return True
    finally:
        private.unlink(missing_ok=True)


def _take_over(path: Path, holder: int | None) -> None:
    """Move a stale lock aside; put it back if it turned out to be a fresh one."""
    aside = path.with_name(f"{path.name}.stale-{os.getpid()}")
    try:
        os.rename(path, aside)
    except FileNotFoundError:
        return
    taken, _ = _lock_holder(aside)
    if taken != holder and taken is not None and _alive(taken):
        with contextlib.suppress(OSError):
            os.link(aside, path)
    aside.unlink(missing_ok=True)


def _remove(path: Path) -> None:
    with contextlib.suppress(FileNotFoundError):
        if path.is_dir() and not path.is_symlink():
            shutil.rmtree(path)
        else:
            path.unlink()


def _clean_stale(target: Path) -> None:
    """Remove the temporaries of ``target`` left by runs that were killed (their process is
    gone); a folder moved aside by a killed swap is put back when the target is missing."""
    try:
        names = os.listdir(target.parent)
    except OSError:
        return
    for name in names:
        match = _TEMPORARY.match(name)
        if match is None or match["target"] != target.name or _alive(int(match["pid"])):
            continue
        path = target.parent / name
        if match["kind"] == "old" and not os.path.lexists(target):
            os.rename(path, target)
        else:
            _remove(path)


def _fsync_folder(folder: Path) -> None:
    if os.name == "nt":
        return
    with contextlib.suppress(OSError):
        handle = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(handle)
        finally:
            os.close(handle)


def write_file(path: Path | str, data: bytes, mode: int | None) -> None:
    """Write ``data`` to a new file ``path`` (never an existing one) with permission ``mode``;
    None: a new file's, 0o666 less the umask, set by the creation itself (in a staged folder,
    which only its owner can enter until it is committed).

    The data reach the disk when the set is committed (:func:`_flush_to_disk`), once for all
    its files rather than once per file: a set of ten thousand series writes tens of
    thousands of files.
    """
    handle = os.open(path, _NEW_FILE, 0o600 if mode is not None else 0o666)
    try:
        written = os.write(handle, data)
        if written < len(data):  # rarely: the rest written until all of it is
            view = memoryview(data)[written:]
            while view:
                view = view[os.write(handle, view):]
        if mode is not None and _FCHMOD is not None:  # through the open file: no look-up
            _FCHMOD(handle, mode)
    finally:
        os.close(handle)
    if mode is not None and _FCHMOD is None:
        os.chmod(path, mode)


_FCHMOD = getattr(os, "fchmod", None)
#: How :func:`write_file` opens a file: a new one, for writing bytes.
_NEW_FILE = os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_BINARY", 0)


def _syncfs(folder: Path) -> bool:
    """``syncfs`` of the file system holding ``folder`` (Linux): every file written to it
    reaches the disk; False where the system has no such call or it failed."""
    if not sys.platform.startswith("linux"):
        return False
    try:
        syncfs = ctypes.CDLL(None, use_errno=True).syncfs
    except (OSError, AttributeError):
        return False
    handle = os.open(folder, os.O_RDONLY)
    try:
        return bool(syncfs(handle) == 0)
    finally:
        os.close(handle)


def _flush_to_disk(paths: Sequence[Path] | Callable[[], Sequence[Path]],
                   folder: Path | None = None) -> None:
    """Make written files durable before they are renamed into place: one ``syncfs`` of the
    file system holding ``folder`` on Linux (all of a staged folder's files at once), else an
    ``fsync`` of each file (and of ``folder``'s own entry). ``paths`` may be a function that
    lists them, called only when they are synced one by one."""
    if folder is not None and _syncfs(folder):
        return
    for path in paths() if callable(paths) else paths:
        handle = os.open(path, os.O_RDONLY)
        try:
            os.fsync(handle)
        finally:
            os.close(handle)
    if folder is not None:
        _fsync_folder(folder)


def _exchange(first: Path, second: Path) -> bool:
    """Swap two paths in one step; False when the system or file system cannot."""
    if sys.platform.startswith("linux"):
        name, flags = "renameat2", 2  # RENAME_EXCHANGE
    elif sys.platform == "darwin":
        name, flags = "renamex_np", 2  # RENAME_SWAP
    else:
        return False
    try:
        function = getattr(ctypes.CDLL(None, use_errno=True), name)
    except (OSError, AttributeError):
        return False
    a, b = os.fsencode(first), os.fsencode(second)
    if name == "renameat2":
        function.argtypes = [ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p,
                             ctypes.c_uint]
        result = function(-100, a, -100, b, flags)  # AT_FDCWD
    else:
        function.argtypes = [ctypes.c_char_p, ctypes.c_char_p, ctypes.c_uint]
        result = function(a, b, flags)
    if result == 0:
        return True
    code = ctypes.get_errno()
    if code in (errno.ENOSYS, errno.EINVAL, errno.ENOTSUP, errno.EOPNOTSUPP):
        return False
    raise OSError(code, os.strerror(code), str(second))


@contextlib.contextmanager
def _signals_held() -> Iterator[list[int]]:
    """Hold Ctrl-C and SIGTERM back (main thread only) and deliver them afterwards; yields the
    list of the signals caught meanwhile."""
    caught: list[int] = []
    if threading.current_thread() is not threading.main_thread():
        yield caught
        return
    previous = {}
    for number in (signal.SIGINT, signal.SIGTERM):
        previous[number] = signal.signal(number, lambda signum, _frame: caught.append(signum))
    try:
        yield caught
    finally:
        for number, handler in previous.items():
            signal.signal(number, handler if handler is not None else signal.SIG_DFL)
        if caught:
            signal.raise_signal(caught[0])


class _Inputs:
    """The inputs of a run, known by file identity (device and inode: symlinks, hard links and
    case-insensitive file systems included) and, for an input that cannot be examined, by its
    resolved path; worked out once, so that checking the many outputs of a batch stays linear.
    """

    def __init__(self, inputs: Sequence[Path]) -> None:
        self.identities: set[tuple[int, int]] = set()
        self.unexamined: set[str] = set()
        for source in inputs:
            try:
                found = os.stat(source)
            except OSError:
                self.unexamined.add(os.path.normcase(os.path.realpath(source)))
            else:
                self.identities.add((found.st_dev, found.st_ino))

    def holds(self, path: Path) -> bool:
        """Whether ``path`` is one of the inputs."""
        try:
            found = os.stat(path)
        except OSError:
            pass
        else:
            if (found.st_dev, found.st_ino) in self.identities:
                return True
        return bool(self.unexamined) and (os.path.normcase(os.path.realpath(path))
                                          in self.unexamined)


def check_outputs(folder: Path | None = None, names: Collection[str] = (),
                  files: Collection[Path] = (), inputs: Sequence[Path] = ()) -> None:
    """Refuse outputs that would destroy an input or cannot be written as a whole.

    Parameters
    ----------
    folder : pathlib.Path, optional
        The output folder.
    names : collection of str
        Names of the files the set writes or owns in ``folder``.
    files : collection of pathlib.Path
        Outputs outside ``folder``.
    inputs : sequence of pathlib.Path
        Files read by the run (the table and its metadata).

    Raises
    ------
    InputError
        Naming the offending path and what to do.
    """
    inputs = [Path(p) for p in inputs]
    known = _Inputs(inputs)
    outputs = [*(Path(p) for p in files),
               *((folder / n) for n in _listed(folder, names) if folder is not None)]
    for path in outputs:
        if known.holds(path):
            raise InputError("this output is an input of the run (the run table or its "
                             "metadata) and would be overwritten; choose another output path",
                             file=str(path))
        if os.path.isdir(path) and path.parent != folder:
            raise InputError("this output path is occupied by a folder; give a file name",
                             file=str(path))
    if folder is None:
        return
    if os.path.lexists(folder) and not os.path.isdir(folder):
        raise InputError("the output folder is occupied by a file; choose another with --out",
                         file=str(folder))
    real = Path(os.path.realpath(folder))
    whole = "activolt replaces its output folder as a whole; give --out a folder of its own"
    with contextlib.suppress(OSError):
        here = Path.cwd().resolve()
        if real == here or real in here.parents:
            raise InputError(f"the output folder holds the current folder; {whole}",
                             file=str(folder))
    for source in inputs:
        if real in Path(os.path.realpath(source)).parents:
            raise InputError(f"the output folder holds an input of the run; {whole}",
                             file=str(folder))
    if os.path.isdir(folder):
        for entry in os.scandir(folder):
            if entry.is_dir(follow_symlinks=False):
                raise InputError(f"the output folder holds a folder, '{entry.name}' (other "
                                 f"files are kept, folders are not); {whole}", file=str(folder))
            if not (entry.is_file(follow_symlinks=False) or entry.is_symlink()):
                raise InputError(f"the output folder holds '{entry.name}', which is not a "
                                 f"file; {whole}", file=str(folder))


def _listed(folder: Path | None, names: Collection[str]) -> list[str]:
    """The ``names`` that may stand for an entry of ``folder`` (the others name nothing, so
    cannot be an input or a folder): those its listing holds, compared case-folded and in one
    Unicode normal form (file systems that ignore case or normalise names); all of them when
    the folder cannot be listed, none when it does not exist. One listing rather than a look-up
    per name: a batch of ten thousand series owns seventy thousand names."""
    if folder is None or not names:
        return []
    try:
        listed = {_folded(entry) for entry in os.listdir(folder)}
    except (FileNotFoundError, NotADirectoryError):
        return []
    except OSError:
        return list(names)
    return [name for name in names if _folded(name) in listed or os.sep in name
            or (os.altsep is not None and os.altsep in name)]


def _folded(name: str) -> str:
    return unicodedata.normalize("NFC", name).casefold()


def _make_folders(folder: Path) -> list[Path]:
    """Create ``folder`` and its missing parents; returns those created, outermost first."""
    missing = []
    probe = folder
    while not os.path.lexists(probe) and probe != probe.parent:
        missing.append(probe)
        probe = probe.parent
    created = []
    for path in reversed(missing):
        os.mkdir(path)
        created.append(path)
    return created


def _data(content: bytes | str) -> bytes:
    return content.encode("utf-8") if isinstance(content, str) else content


@dataclass(frozen=True)
class StagedFolder:
    """Where the files of a set go before it is committed: its staged folder, and the modes of
    the files they replace. Plain data, so that worker processes can write into it too.

    Attributes
    ----------
    path : pathlib.Path
        The staged folder (``.NAME.activolt-PID-TOKEN.new`` beside the output folder).
    modes : mapping of str to int
        Permission bits of the files of the set that the new ones replace, by name (a new
        file has 0o666 less the umask).
    prefix : str
        ``path`` as text, ending with a separator.
    """

    path: Path
    modes: Mapping[str, int]
    #: (a file's name completes it: tens of thousands of files are written without making a
    #: path object for each)
    prefix: str = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "prefix", os.path.join(self.path, ""))

    def write(self, name: str, content: bytes | str) -> None:
        """Write one file of the set (text as UTF-8); it appears when the set is committed."""
        write_file(self.prefix + name, _data(content), self.modes.get(name))


@contextlib.contextmanager
def written_back_meanwhile(staged: StagedFolder, every_s: float = 2.0) -> Iterator[None]:
    """While the ``with`` block runs (a batch writing its files into ``staged``), a thread asks
    the system every ``every_s`` seconds to take what has been written to the disk (Linux's
    ``syncfs``), so that the writing overlaps the work and the flush that makes the set durable
    when it is committed (:func:`output_set`) has only the last few seconds' files left. Where
    the system has no ``syncfs`` the thread stops after its first try; the set is made durable
    at its commit as before either way."""
    done = threading.Event()

    def write_back() -> None:
        while not done.wait(every_s) and _syncfs(staged.path):
            pass

    thread = threading.Thread(target=write_back, name="activolt write-back", daemon=True)
    thread.start()
    try:
        yield
    finally:
        done.set()
        thread.join()


class OutputTransaction:
    """The temporaries, the undo steps and the folders made by one :func:`write_outputs`."""

    def __init__(self) -> None:
        self.temporaries: list[Path] = []
        self.undo: list[Callable[[], None]] = []
        self.created: list[Path] = []
        self.folder_modes: dict[Path, int] = {}
        self.file_mode = 0o666 & ~_umask()
        self.folder_mode = 0o777 & ~_umask()

    def stage_folder(self, folder: Path, owned: Collection[str]) -> StagedFolder:
        """The new folder, beside ``folder``, with links to the other sets' files; the set's
        own files are written into it next (:meth:`StagedFolder.write`)."""
        new = _temporary(folder, "new")
        os.mkdir(new, 0o700)
        self.temporaries.append(new)
        modes: dict[str, int] = {}
        folder_mode = self.folder_mode
        if os.path.isdir(folder):
            folder_mode = stat.S_IMODE(os.stat(folder).st_mode)
            for entry in os.scandir(folder):
                if entry.name in owned:
                    if entry.is_file(follow_symlinks=False):
                        modes[entry.name] = stat.S_IMODE(entry.stat(follow_symlinks=False)
                                                         .st_mode)
                    continue
                if entry.is_symlink():
                    os.symlink(os.readlink(entry.path), new / entry.name)
                    continue
                try:
                    os.link(entry.path, new / entry.name, follow_symlinks=False)
                except OSError:
                    shutil.copy2(entry.path, new / entry.name, follow_symlinks=False)
        self.folder_modes[new] = folder_mode
        return StagedFolder(new, modes)

    def seal_folder(self, new: Path) -> None:
        """Make the staged folder's files durable and give it the output folder's mode."""
        _flush_to_disk(lambda: [Path(entry.path) for entry in os.scandir(new)
                                if entry.is_file(follow_symlinks=False)], new)
        os.chmod(new, self.folder_modes[new])
        _fsync_folder(new)

    def stage_file(self, path: Path, content: bytes | str) -> Path:
        temporary = _temporary(path, "tmp")
        self.temporaries.append(temporary)
        mode = self.file_mode
        with contextlib.suppress(OSError):
            if path.is_file():
                mode = stat.S_IMODE(path.stat().st_mode)
        write_file(temporary, _data(content), mode)
        _flush_to_disk([temporary])
        return temporary

    def commit_folder(self, folder: Path, new: Path) -> None:
        if not os.path.lexists(folder):
            os.rename(new, folder)
            self.undo.append(lambda: os.rename(folder, new))
        elif _exchange(new, folder):  # `new` now holds the previous set
            self.undo.append(lambda: _exchange(new, folder))
        else:
            old = _temporary(folder, "old")
            self.temporaries.append(old)
            os.rename(folder, old)
            try:
                os.rename(new, folder)
            except BaseException:
                os.rename(old, folder)
                raise
            self.undo.append(lambda: (os.rename(folder, new), os.rename(old, folder)))
        _fsync_folder(folder.parent)

    def commit_file(self, path: Path, temporary: Path) -> None:
        if path.is_file():
            old = _temporary(path, "old")
            try:
                os.link(path, old)
            except OSError:
                pass
            else:
                self.temporaries.append(old)
                self.undo.append(lambda: os.replace(old, path))
        else:
            self.undo.append(lambda: path.unlink(missing_ok=True))
        os.replace(temporary, path)
        _fsync_folder(path.parent)

    def roll_back(self) -> None:
        for step in reversed(self.undo):
            with contextlib.suppress(OSError):
                step()

    def clean_up(self, committed: bool) -> None:
        for path in self.temporaries:
            with contextlib.suppress(OSError):
                _remove(path)
        if not committed:
            for path in reversed(self.created):
                with contextlib.suppress(OSError):
                    path.rmdir()


def write_outputs(files: Mapping[Path, bytes | str] | None = None, *,
                  folder: Path | None = None,
                  contents: Mapping[str, bytes | str] | None = None,
                  owned: Collection[str] = (),
                  inputs: Sequence[Path] = ()) -> list[Path]:
    """Write one set of outputs as a whole: all of it, or nothing.

    Parameters
    ----------
    files : mapping of pathlib.Path to bytes or str, optional
        Single files (outside ``folder``) and their content (text is written as UTF-8).
    folder : pathlib.Path, optional
        The output folder of the set; created with its parents when missing.
    contents : mapping of str to bytes or str, optional
        The set's files in ``folder``, by name.
    owned : collection of str
        Every name the set may hold in ``folder``; those the new set does not write are removed.
        Other files in ``folder`` (other sets) are kept.
    inputs : sequence of pathlib.Path
        Files that must never be written (the run's inputs).

    Returns
    -------
    list of pathlib.Path
        The files written, ``folder``'s first, as given (not resolved).

    Raises
    ------
    InputError
        An output that is an input, a path occupied by the other kind, a folder another run is
        writing, or a write that failed (then the previous outputs are intact and nothing new
        is left behind).
    """
    contents = dict(contents or {})
    with output_set(files, folder=folder, owned={*owned, *contents}, inputs=inputs) as staged:
        for name, content in contents.items():
            staged.write(name, content)
    written = [folder / name for name in contents] if folder is not None else []
    return written + [Path(p) for p in (files or {})]


@contextlib.contextmanager
def output_set(files: Mapping[Path, bytes | str] | None = None, *,
               folder: Path | None = None, owned: Collection[str] = (),
               inputs: Sequence[Path] = ()) -> Iterator[StagedFolder | None]:
    """Write one set of outputs as a whole, its folder's files streamed in as they are made.

    The same as :func:`write_outputs`, except that the files of ``folder`` are written by the
    body of the ``with`` block, through the :class:`StagedFolder` it is given (None without a
    folder), one at a time or by worker processes: a set of many series need not be held in
    memory. Every name written must be in ``owned``. The set is committed when the block ends
    normally; an exception (Ctrl-C included) leaves the previous outputs as they were.

    Examples
    --------
    >>> import pathlib, tempfile
    >>> out = pathlib.Path(tempfile.mkdtemp()) / "out"
    >>> with output_set(folder=out, owned=["a.txt", "b.txt"]) as staged:
    ...     staged.write("a.txt", "first")
    ...     staged.write("b.txt", b"second")
    >>> sorted(p.name for p in out.iterdir())
    ['a.txt', 'b.txt']
    """
    files = {Path(p): c for p, c in (files or {}).items()}
    owned = set(owned)
    check_outputs(folder, owned, list(files), inputs)
    targets: dict[Path, str] = {}
    real_folder = None
    if folder is not None:
        real_folder = Path(os.path.realpath(folder))
        targets[real_folder] = str(folder)
    real_files = {path: Path(os.path.realpath(path.parent)) / path.name for path in files}
    for path, real in real_files.items():
        targets[real] = str(path)
    transaction = OutputTransaction()
    committed = False
    shown = str(folder if folder is not None else next(iter(files), ""))
    try:
        for parent in sorted({t.parent for t in targets}, key=str):
            transaction.created += _make_folders(parent)
        with contextlib.ExitStack() as locks:
            for target in sorted(targets, key=str):
                locks.enter_context(_locked(target, targets[target]))
            for target in targets:
                _clean_stale(target)
            check_outputs(folder, owned, list(files), inputs)
            staged = (transaction.stage_folder(real_folder, owned)
                      if real_folder is not None else None)
            yield staged
            if staged is not None:
                transaction.seal_folder(staged.path)
            staged_files = {}
            for path, content in files.items():
                shown = str(path)
                staged_files[real_files[path]] = transaction.stage_file(real_files[path],
                                                                        content)
            with _signals_held() as caught:
                try:
                    if staged is not None:
                        shown = str(folder)
                        transaction.commit_folder(real_folder, staged.path)
                    for real, temporary in staged_files.items():
                        shown = targets[real]
                        transaction.commit_file(real, temporary)
                    if caught:  # stopped while committing: as if it had come just before
                        raise KeyboardInterrupt
                except BaseException:
                    transaction.roll_back()
                    raise
                committed = True
    except OSError as error:
        reason = error.strerror or str(error)
        raise InputError(f"cannot write the outputs ({reason}); nothing was written and earlier "
                         "outputs are unchanged — free space or choose another place",
                         file=shown) from None
    finally:
        transaction.clean_up(committed)


def write_atomically(path: str | Path, content: bytes | str) -> Path:
    """Write one file as a whole (see :func:`write_outputs`); its folder is created if missing.

    Parameters
    ----------
    path : str or pathlib.Path
        Destination; an existing file keeps its mode.
    content : bytes or str
        Bytes, or text written as UTF-8.

    Returns
    -------
    pathlib.Path
        The destination path.
    """
    path = Path(path)
    write_outputs({path: content})
    return path
