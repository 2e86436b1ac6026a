"""File output that never leaves a half-written file or a mixed set of files.

Two mechanisms, one module:

* :func:`atomic_path` / :func:`write_text`: one file, written to a temporary
  name beside the target and renamed onto it on success.
* :class:`OutputSet`: every file a run writes into one folder, all or nothing.
  The folder is checked before the work starts (:func:`check_output_dir`), the
  files are written into a hidden staging folder beside it
  (``.<folder>.lenswork-stage-<pid>-<random>``), and only when every one is
  complete are they moved in, the files of the previous lenswork run that this
  run did not write are removed, and the manifest ``lenswork-manifest.json``
  (each file's size and SHA-256, the command, the version) is moved in last.
  A file that does not match the manifest beside it belongs to a run that was
  stopped while its files were being moved in (:func:`check_against_manifest`).

Only names lenswork wrote are ever removed: the names in the earlier manifest
(and in the journal ``.lenswork-pending.json`` a stopped run leaves), temporary
files ``.<name>.<pid>.<random>.tmp`` of those names and of this run's names
whose process is gone, and staging folders whose process is gone.
"""

from __future__ import annotations

import contextlib
import errno
import hashlib
import json
import os
import re
import shutil
import tempfile
from pathlib import Path

try:  # POSIX: concurrent runs into one folder move their sets in one after the other
    import fcntl
except ImportError:  # pragma: no cover - Windows: no folder lock, each set still moved in whole
    fcntl = None

from ._errors import LensworkError, OutputError
from ._version import __version__

__all__ = [
    "FORMULA_STARTS",
    "MANIFEST",
    "OutputSet",
    "atomic_path",
    "check_against_manifest",
    "check_output_dir",
    "check_output_file",
    "csv_writer",
    "dict_csv_writer",
    "file_digest",
    "os_error_text",
    "safe_cell",
    "unformula",
    "write_text",
]

#: Name of the manifest written last into every output folder.
MANIFEST = "lenswork-manifest.json"
#: The journal of names a run is moving in (removed once its manifest is in place).
_PENDING = ".lenswork-pending.json"
_STAGE = ".lenswork-stage-"
_TMP = re.compile(r"^\.(?P<name>.+)\.(?P<pid>\d+)\.[A-Za-z0-9_]+\.tmp$")
_OLD_TMP = re.compile(r"^\.(?P<name>.+)\.[A-Za-z0-9_]{8}\.tmp$")  # before the pid was recorded


def os_error_text(err, path=None):
    """A one-line description of an OSError: what, where, and what to do."""
    where = err.filename or path
    what = {
        errno.ENOSPC: "no space left on the device; free space or write elsewhere",
        errno.EDQUOT: "the disk quota is used up; free space or write elsewhere",
        errno.EFBIG: "the file is larger than this process may write (a file-size limit); "
                     "raise the limit or write elsewhere",
        errno.EROFS: "the file system is read-only; choose another output path",
        errno.EACCES: "permission denied; choose a folder you may write to",
        errno.EPERM: "not permitted (a locked or immutable file or folder); choose another "
                     "output path",
        errno.ENOTDIR: "a part of the path is a file, not a folder; choose another output path",
        errno.EISDIR: "it is a folder, not a file; give a file name",
        errno.ENAMETOOLONG: "the name is too long for the file system; use a shorter one",
    }.get(err.errno, err.strerror or str(err)).rstrip(".")
    return f"{where}: {what}." if where else f"{what}."


#: First characters that make a spreadsheet read a cell as a formula (OWASP, CSV injection).
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
_FORMULA = re.compile("^'*[=+\\-@\t\r]")
_NUMBER = re.compile(r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$")


def safe_cell(value):
    """A CSV cell with spreadsheet formulas neutralised; numbers and other values unchanged.

    A text cell that starts with ``=``, ``+``, ``-``, ``@``, a tab or a carriage
    return (after any apostrophes) gets one leading apostrophe, so a spreadsheet
    shows it as text (OWASP, "CSV Injection"). Only ``str`` values are touched:
    a negative number stays a number. :func:`unformula` undoes it, so lenswork
    reads its own files back unchanged.

    Examples
    --------
    >>> safe_cell("=HYPERLINK(1)"), safe_cell("-x"), safe_cell(-1.5), safe_cell("ab")
    ("'=HYPERLINK(1)", "'-x", -1.5, 'ab')
    >>> unformula(safe_cell("'=x")) == "'=x"
    True
    """
    if isinstance(value, str) and value and _FORMULA.match(value) and not _NUMBER.match(value):
        return "'" + value
    return value


class _SafeWriter:
    """A csv writer whose text cells go through :func:`safe_cell`."""

    def __init__(self, writer):
        self._writer = writer

    def writerow(self, row):
        return self._writer.writerow([safe_cell(c) for c in row])

    def writerows(self, rows):
        for row in rows:
            self.writerow(row)


def csv_writer(fh, **kwargs):
    """``csv.writer(fh, **kwargs)`` with spreadsheet formulas neutralised (:func:`safe_cell`).

    Every CSV file lenswork writes goes through it (or through
    :func:`safe_cell` cell by cell, where speed matters).

    Examples
    --------
    >>> import io
    >>> buf = io.StringIO()
    >>> _ = csv_writer(buf, lineterminator="\\n").writerow(["@SUM(A1)", "-1.5", -2])
    >>> buf.getvalue()
    "'@SUM(A1),-1.5,-2\\n"
    """
    import csv

    w = _SafeWriter(csv.writer(fh, **kwargs))
    return w


def dict_csv_writer(fh, fieldnames, **kwargs):
    """``csv.DictWriter`` with spreadsheet formulas neutralised (:func:`safe_cell`)."""
    import csv

    w = csv.DictWriter(fh, fieldnames=fieldnames, **kwargs)
    w.writer = _SafeWriter(w.writer)
    return w


def unformula(text):
    """Undo :func:`safe_cell` on a text cell read from a CSV file.

    Examples
    --------
    >>> unformula("'+cmd"), unformula("'plain"), unformula("''=x")
    ('+cmd', "'plain", "'=x")
    """
    if text.startswith("'") and _FORMULA.match(text[1:]):
        return text[1:]
    return text


def _pid_alive(pid):
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def _umask_mode(path, mode=0o666):
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(path, mode & ~umask)


@contextlib.contextmanager
def atomic_path(path):
    """Yield a temporary path beside ``path``; rename it onto ``path`` only on success.

    Nothing half-written is ever left at ``path``: on an exception the
    temporary file (``.<name>.<pid>.<random>.tmp``) is removed and the
    exception propagates. One a killed process leaves is removed by the next
    write of the same name.

    Examples
    --------
    >>> import tempfile
    >>> with tempfile.TemporaryDirectory() as d:
    ...     with atomic_path(Path(d) / "a.txt") as tmp:
    ...         _ = tmp.write_text("x")
    ...     sorted(p.name for p in Path(d).iterdir())
    ['a.txt']
    """
    path = Path(path)
    if path.exists() and not path.is_file():  # never replace a folder, device, FIFO, socket
        raise OutputError(f"Cannot write {str(path)!r}: it exists and is not a regular file.")
    path.parent.mkdir(parents=True, exist_ok=True)
    _remove_stale_tmp(path.parent, {path.name})
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.{os.getpid()}.", suffix=".tmp",
                               dir=path.parent)
    os.close(fd)
    try:
        yield Path(tmp)
        _umask_mode(tmp)  # mkstemp creates 0600 files; give what a plain open() would
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
        raise


def write_text(path, text):
    """Write ``text`` (UTF-8) to ``path`` atomically.

    Examples
    --------
    >>> import tempfile
    >>> with tempfile.TemporaryDirectory() as d:
    ...     write_text(Path(d) / "a.txt", "hello").read_text()
    'hello'
    """
    path = Path(path)
    with atomic_path(path) as tmp:
        tmp.write_text(text, encoding="utf-8")
    return path


def file_digest(path):
    """(size in bytes, SHA-256 hex digest) of a file, read in 1 MiB blocks.

    Examples
    --------
    >>> import tempfile
    >>> with tempfile.TemporaryDirectory() as d:
    ...     file_digest(write_text(Path(d) / "a", "abc"))[1][:12]
    'ba7816bf8f01'
    """
    h = hashlib.sha256()
    size = 0
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
            size += len(block)
    return size, h.hexdigest()


def _remove_stale_tmp(folder, names):
    """Remove ``.<name>.<pid>.<random>.tmp`` files of ``names`` whose process is gone."""
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return
    for entry in entries:
        m = _TMP.match(entry.name)
        if m and m["name"] in names and not _pid_alive(int(m["pid"])):
            with contextlib.suppress(OSError):
                os.unlink(entry.path)
            continue
        m = _OLD_TMP.match(entry.name)
        if m and m["name"] in names and not _TMP.match(entry.name):
            with contextlib.suppress(OSError):
                os.unlink(entry.path)


def _probe(folder):
    """Create and remove a file in ``folder``: the test that it takes writes (root too)."""
    fd, probe = tempfile.mkstemp(prefix=f".lenswork-probe-{os.getpid()}.", dir=folder)
    os.close(fd)
    os.unlink(probe)


def check_output_dir(directory, *, what="output folder"):
    """Check before any work that ``directory`` can be created and written; return it as a Path.

    Raises
    ------
    OutputError
        A part of the path is a file, or the nearest existing folder takes no
        writes (read-only file system, permissions, an immutable folder).

    Examples
    --------
    >>> import tempfile
    >>> with tempfile.TemporaryDirectory() as d:
    ...     check_output_dir(Path(d) / "new").name
    'new'
    """
    if not str(directory).strip():
        raise OutputError(f"The {what} is empty; give a folder path (-o).")
    directory = Path(directory)
    probe = directory
    while not probe.exists() and not probe.is_symlink() and probe != probe.parent:
        probe = probe.parent
    if probe.is_symlink() and not probe.exists():
        raise OutputError(
            f"Cannot write the {what} {str(directory)!r}: {str(probe)!r} is a symbolic link to "
            f"{os.readlink(probe)!r}, which does not exist. Create that folder or choose "
            f"another path (-o)."
        )
    if not probe.is_dir():
        if probe == directory:
            raise OutputError(
                f"The {what} {str(directory)!r} is a file; give a folder path (-o)."
            )
        raise OutputError(
            f"Cannot create the {what} {str(directory)!r}: {str(probe)!r} is a file, not a "
            f"folder. Choose another path (-o)."
        )
    try:
        _probe(probe)
    except OSError as err:
        err.filename = None  # name the folder, not the probe file
        raise OutputError(
            f"Cannot write the {what} {str(directory)!r}: {os_error_text(err, probe)} "
            f"Nothing was computed."
        ) from None
    return directory


def check_output_file(path, *, inputs=()):
    """Check before any work that the file ``path`` can be written; return it as a Path.

    ``inputs`` are the files the run reads: the output (or its ``.json``
    sidecar) must be none of them, or the run would replace its own input.

    Examples
    --------
    >>> import tempfile
    >>> with tempfile.TemporaryDirectory() as d:
    ...     table = write_text(Path(d) / "t.csv", "a,b")
    ...     try:
    ...         check_output_file(table, inputs=[table])
    ...     except OutputError as err:
    ...         print(str(err)[-35:])
    give another output file name (-o).
    """
    if not str(path).strip():
        raise OutputError("The output file name is empty; give one (-o).")
    path = Path(path)
    for source in inputs:
        for target in (path, path.with_name(path.name + ".json")):
            same = False
            with contextlib.suppress(OSError, TypeError):  # a path that does not exist yet
                same = source is not None and os.path.samefile(source, target)
            if same:
                raise OutputError(
                        f"The output {str(target)!r} is the input file {str(source)!r} this "
                        f"run reads; writing it would replace the input. Nothing was "
                        f"computed: give another output file name (-o)."
                    )
    if path.is_dir():
        raise OutputError(f"The output {str(path)!r} is a folder; give a file name (-o).")
    if path.exists() and not path.is_file():
        raise OutputError(
            f"The output {str(path)!r} is not a regular file (a device, FIFO or socket), which "
            f"lenswork does not replace; give another file name (-o)."
        )
    parent = path.parent
    while not parent.exists() and parent != parent.parent:
        parent = parent.parent
    if not parent.is_dir():
        raise OutputError(
            f"Cannot write {str(path)!r}: {str(parent)!r} is a file, not a folder. Choose "
            f"another path (-o)."
        )
    check_output_dir(path.parent, what="folder of the output file")
    if path.exists():
        try:
            with open(path, "r+b"):
                pass
        except OSError as err:
            raise OutputError(
                f"Cannot replace {str(path)!r}: {os_error_text(err)} Nothing was computed."
            ) from None
    return path


def read_manifest(directory, name=MANIFEST):
    """The manifest document of ``directory`` (None when there is none or it is damaged)."""
    try:
        doc = json.loads((Path(directory) / name).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if not isinstance(doc, dict) or not isinstance(doc.get("files"), list):
        return None
    return doc


def _manifest_names(doc):
    if not doc:
        return set()
    return {f["name"] for f in doc["files"] if isinstance(f, dict)
            and isinstance(f.get("name"), str) and "/" not in f["name"]
            and f["name"] not in (".", "..")}


def check_against_manifest(path, *, manifest=MANIFEST, digest=None):
    """None when ``path`` matches the manifest of its folder (or the folder has none),
    else a sentence saying what does not match.

    Examples
    --------
    >>> import tempfile
    >>> with tempfile.TemporaryDirectory() as d:
    ...     with OutputSet(d, command="doc") as stage:
    ...         _ = write_text(stage / "a.txt", "one")
    ...     _ = (Path(d) / "a.txt").write_text("two")
    ...     "does not match" in check_against_manifest(Path(d) / "a.txt")
    True
    """
    path = Path(path)
    doc = read_manifest(path.parent, manifest)
    if doc is None:
        return None
    entry = next((f for f in doc["files"] if isinstance(f, dict) and f.get("name") == path.name),
                 None)
    if entry is None:
        return (f"{str(path)!r} is not in the manifest {manifest} of its folder (a file from "
                f"another run or another program)")
    if not path.is_file():
        return (f"{str(path)!r} is missing though the manifest {manifest} beside it lists it: "
                f"a run was stopped while its files were moved in. Run the command again")
    size, digest = digest or file_digest(path)
    if size != entry.get("bytes") or digest != entry.get("sha256"):
        return (f"{str(path)!r} does not match the manifest {manifest} beside it (written by "
                f"`lenswork {doc.get('command', '?')}`): a run was stopped while its files were "
                f"moved in, or the file was changed since. Run the command again")
    return None


@contextlib.contextmanager
def _signals_held():
    """Hold SIGINT and SIGTERM back (POSIX, main thread) while a set is moved in.

    They are delivered when the block ends, so an interrupt never stops a run
    half-way through moving its files in: the folder holds the whole new set or
    the whole earlier one. (SIGKILL cannot be held; the journal covers it.)
    """
    import signal
    import threading

    held = {signal.SIGINT, signal.SIGTERM}
    if not hasattr(signal, "pthread_sigmask") or \
            threading.current_thread() is not threading.main_thread():
        yield
        return
    before = signal.pthread_sigmask(signal.SIG_BLOCK, held)
    try:
        yield
    finally:
        signal.pthread_sigmask(signal.SIG_SETMASK, before)


class OutputSet:
    """Every file of one run in one folder: staged, then moved in as a set, manifest last.

    Parameters
    ----------
    directory : str or Path
        The output folder (created if missing). Checked now, before the work.
    command : str
        Recorded in the manifest (``"graph"``, ``"screen"``...).
    manifest : str, default="lenswork-manifest.json"
        The manifest's file name (a Parquet dataset folder uses
        ``"_lenswork-manifest.json"``, a name Parquet readers skip).
    replace_folder : bool, default=False
        Replace the whole folder with one rename (a Parquet dataset folder:
        no part file of an earlier run can survive). Refused when the folder
        holds files that no lenswork manifest lists.

    Notes
    -----
    Use as a context manager; the body writes into the yielded staging folder.
    On success :attr:`written` lists the final paths. On any failure the
    staging folder is removed and the output folder is left as it was (an
    ``OSError`` becomes an :class:`~lenswork.OutputError` with a message).

    Examples
    --------
    >>> import tempfile
    >>> with tempfile.TemporaryDirectory() as d:
    ...     with OutputSet(Path(d) / "out", command="doc") as stage:
    ...         _ = write_text(stage / "a.txt", "one")
    ...     sorted(p.name for p in (Path(d) / "out").iterdir())
    ['a.txt', 'lenswork-manifest.json']
    """

    def __init__(self, directory, *, command, manifest=MANIFEST, replace_folder=False):
        self.directory = check_output_dir(directory)
        self.command = command
        self.manifest = manifest
        self.replace_folder = replace_folder
        self.written = []
        self._stage = None
        self._created = False

    def _stage_parent(self):
        """The folder the staging folder goes in: beside the output folder when the
        parent is on the same file system and takes writes, else inside it."""
        parent = self.directory.absolute().parent
        try:
            same = os.stat(parent).st_dev == os.stat(self.directory).st_dev
            if same:
                _probe(parent)
                return parent
        except OSError:
            pass
        if self.replace_folder:
            raise OutputError(
                f"Cannot write the folder {str(self.directory)!r}: its parent folder takes no "
                f"writes. Choose another path (-o)."
            )
        return self.directory

    def __enter__(self):
        try:
            if not self.directory.exists():
                self.directory.mkdir(parents=True)
                self._created = True
            self._prefix = f".{self.directory.absolute().name}{_STAGE}"
            self._stage = Path(tempfile.mkdtemp(prefix=f"{self._prefix}{os.getpid()}-",
                                                dir=self._stage_parent()))
        except OSError as err:
            raise OutputError(f"Cannot write {str(self.directory)!r}: {os_error_text(err)}") \
                from None
        return self._stage

    def __exit__(self, kind, err, tb):
        if kind is None:
            try:
                self._commit()
            except BaseException as exc:
                self._abort()
                if isinstance(exc, OSError) and not isinstance(exc, LensworkError):
                    raise OutputError(
                        f"Writing {str(self.directory)!r} failed: {os_error_text(exc)}"
                    ) from None
                raise
            return False
        self._abort()
        if issubclass(kind, OSError) and not isinstance(err, LensworkError):
            raise OutputError(
                f"Writing {str(self.directory)!r} failed: {os_error_text(err)} The folder "
                f"was left as it was."
            ) from None
        return False

    def _abort(self):
        if self._stage is not None:
            shutil.rmtree(self._stage, ignore_errors=True)
            self._stage = None
        if self._created:
            with contextlib.suppress(OSError):
                self.directory.rmdir()

    def _entries(self):
        names = sorted(p.name for p in self._stage.iterdir()
                       if not p.name.startswith(".") and p.name != self.manifest)
        for name in names:
            if not (self._stage / name).is_file():
                raise OutputError(f"{name!r} in an output set is not a file.")
        return names

    def _document(self, names):
        files = []
        for name in names:
            size, digest = file_digest(self._stage / name)
            files.append({"name": name, "bytes": size, "sha256": digest})
        set_hash = hashlib.sha256(
            "".join(f"{f['name']}\0{f['sha256']}\n" for f in files).encode()).hexdigest()
        return {"lenswork_version": __version__, "command": self.command,
                "files": files, "set_sha256": set_hash}

    def _commit(self):
        from ._json import dumps

        names = self._entries()
        self.document = self._document(names)
        write_text(self._stage / self.manifest, dumps(self.document) + "\n")
        fd = os.open(self.directory, os.O_RDONLY) if fcntl is not None else None
        try:
            if fd is not None:
                fcntl.flock(fd, fcntl.LOCK_EX)  # concurrent runs move in one after the other
            self._clean_stale()
            with _signals_held():  # Ctrl-C / SIGTERM wait until the set is in place
                if self.replace_folder:
                    self._swap_folder()
                else:
                    self._move_in(names)
        finally:
            if fd is not None:
                os.close(fd)
        self.written = [self.directory / n for n in names] + [self.directory / self.manifest]

    def _earlier(self):
        """Names an earlier lenswork run wrote here: its manifest and any journal."""
        names = _manifest_names(read_manifest(self.directory, self.manifest))
        with contextlib.suppress(OSError, ValueError, TypeError):
            pending = json.loads((self.directory / _PENDING).read_text(encoding="utf-8"))
            names |= {n for n in pending if isinstance(n, str) and "/" not in n}
        return names

    def _move_in(self, names):
        from ._json import dumps

        earlier = self._earlier()
        for name in [*names, self.manifest]:  # before any file moves: the set goes in whole
            target = self.directory / name
            if target.is_dir() or (target.exists() and not target.is_file()):
                raise OutputError(
                    f"Cannot write {str(target)!r}: a folder (or device) of that name is in the "
                    f"way. Move it, or choose another output folder (-o); nothing was replaced."
                )
        _remove_stale_tmp(self.directory, earlier | set(names) | {self.manifest, _PENDING})
        # the journal: a run stopped while moving in leaves the names it may have placed
        write_text(self.directory / _PENDING, dumps(sorted(earlier | set(names))) + "\n")
        for name in names:
            os.replace(self._stage / name, self.directory / name)
        for name in sorted(earlier - set(names) - {self.manifest}):
            with contextlib.suppress(FileNotFoundError, IsADirectoryError):
                os.unlink(self.directory / name)
        os.replace(self._stage / self.manifest, self.directory / self.manifest)
        with contextlib.suppress(FileNotFoundError):
            os.unlink(self.directory / _PENDING)
        shutil.rmtree(self._stage, ignore_errors=True)
        self._stage = None

    def _swap_folder(self):
        earlier = self._earlier() | {self.manifest, _PENDING}
        foreign = [p.name for p in self.directory.iterdir()
                   if p.name not in earlier and not _TMP.match(p.name)]
        if foreign:
            raise OutputError(
                f"The folder {str(self.directory)!r} holds {foreign[0]!r}, which no lenswork "
                f"run wrote there; it would be replaced as a whole. Choose a new or empty folder "
                f"(-o)."
            )
        old = Path(tempfile.mkdtemp(prefix=f"{self._prefix}{os.getpid()}-old-",
                                    dir=self._stage.parent))
        os.rmdir(old)
        os.rename(self.directory, old)
        os.rename(self._stage, self.directory)
        self._stage = None
        self._created = False
        shutil.rmtree(old, ignore_errors=True)

    def _clean_stale(self):
        """Staging folders of killed runs (and the old screen's inside staging folders)."""
        for parent in {self._stage.parent, self.directory}:
            with contextlib.suppress(OSError):
                for entry in os.scandir(parent):
                    if not entry.is_dir(follow_symlinks=False):
                        continue
                    if entry.name.startswith(".lenswork-screen-") and parent == self.directory:
                        shutil.rmtree(entry.path, ignore_errors=True)
                        continue
                    if not entry.name.startswith(self._prefix):
                        continue
                    pid = entry.name[len(self._prefix):].split("-")[0]
                    if pid.isdigit() and not _pid_alive(int(pid)):
                        shutil.rmtree(entry.path, ignore_errors=True)
