"""Folders routeplan writes into: it replaces or deletes only files it wrote itself.

Every folder a routeplan command writes (``plan --out``, ``map``, ``diff --out``,
``synth --out``) holds ``.routeplan-manifest.json``, the *manifest*: which command's files
the folder holds (its *purpose*), which run wrote them, when, with which version, and each
file's SHA-256, size and modification time. routeplan deletes or replaces a file only when
the manifest lists it and its bytes are still the ones written (a file edited since is
replaced only with ``--force``); every other file in the folder is left alone, whatever
happens.

Opening a folder (:meth:`OutputFolder.open`, before any computation) checks the path:
it is refused (:class:`routeplan.errors.FolderError`, one line: the path and what to do) when
it is a file or lies under one; when it is the site folder, holds any of the site's input
files (the site's parent, say) or lies inside an input dataset; when it is not empty and
holds no manifest (unless ``--force``: routeplan's files are then written beside the others,
and nothing else is touched); when a file routeplan is about to write is there but was not
written by routeplan (always refused) or was edited since (refused unless ``--force``); when
it cannot be written; when its disk has too little room; and while another run writes into
it.

Writing is all or nothing, and a kill at any instant is safe. The run writes its files into
a *work folder* inside the folder (``.routeplan-work-<token>``, holding an ``owner.json``
that names it). :meth:`OutputFolder.commit` then writes the *commit record* (the new
manifest and the files to delete) into the work folder, moves every new file into place
(``os.replace``: each file is swapped atomically), deletes the previous run's files that the
new run does not write, and writes the manifest last. A kill before the commit record
leaves the previous outputs as they were, and a work folder that the next run removes; a
kill after it leaves a committed work folder that the next command opening the folder
completes before anything else (rolling forward: the folder then holds the new outputs, as
the manifest says). So the folder always holds one complete run once it is opened again.
A run may add files in a second commit before it releases the folder
(:meth:`OutputFolder.follow_up`, keeping the first commit's files: a watching process's cache
entries); a kill between the two leaves the first commit complete.
(A kill is a killed process; a power cut can lose what the operating system had not yet
written to disk.)

Two runs never write one folder at once: the folder is locked (``flock`` on the folder
itself, held by the run and the processes it forks; where ``flock`` does not exist, a
``.routeplan.lock`` file) and a second run is refused with a message naming the first.
Folders are created with the user's normal permissions (the umask), and a folder that is a
symbolic link is written through, never replaced.
"""

from __future__ import annotations

import contextlib
import dataclasses
import datetime as dt
import errno
import hashlib
import json
import os
import secrets
import shutil
import time
from collections.abc import Iterable, Iterator, Mapping
from pathlib import Path

from . import __version__
from .errors import FolderError

try:  # POSIX
    import fcntl
except ImportError:  # pragma: no cover - Windows
    fcntl = None  # type: ignore[assignment]

MANIFEST = ".routeplan-manifest.json"
WORK_PREFIX = ".routeplan-work-"
#: inside a work folder: who made it (its token, process id, start time)
OWNER = "owner.json"
#: inside a work folder: the run's new manifest and the files to delete; there = committed
COMMIT = "commit.json"
#: the lock file, where ``flock`` does not exist
LOCK_FILE = ".routeplan.lock"
#: bump when the manifest's layout changes
FORMAT = 1
#: files an operating system or a file manager puts into folders; they do not make a folder
#: "not empty" (routeplan never touches them)
SYSTEM_FILES = frozenset({".DS_Store", "Thumbs.db", "desktop.ini", ".directory"})
#: least free room for any run [bytes]; a folder with outputs needs more (see ``open``)
MIN_FREE_BYTES = 8 * 2**20
#: what each purpose's folder is, in words
PURPOSES: dict[str, str] = {
    "plan": "an output folder of 'routeplan plan'",
    "diff": "an output folder of 'routeplan diff'",
    "site": "a site folder written by 'routeplan synth'",
}


@dataclasses.dataclass(frozen=True)
class Written:
    """What the manifest records of one file: SHA-256, size [bytes], modification time
    [ns]. A file whose size and time are unchanged is taken as unchanged (as ``make`` and
    ``git`` do); otherwise its SHA-256 decides."""

    sha256: str
    size: int
    mtime_ns: int

    def matches(self, path: Path) -> bool:
        """Whether ``path`` is a regular file whose bytes are the ones recorded."""
        try:
            st = path.lstat()
        except OSError:
            return False
        if not path.is_file() or path.is_symlink():
            return False
        if st.st_size == self.size and st.st_mtime_ns == self.mtime_ns:
            return True
        return st.st_size == self.size and file_sha256(path) == self.sha256


@dataclasses.dataclass(frozen=True)
class Manifest:
    """The manifest of a folder (see the module docstring)."""

    purpose: str
    run: str
    written: str
    version: str
    files: dict[str, Written]

    def to_json(self) -> str:
        files = {k: dataclasses.asdict(v) for k, v in sorted(self.files.items())}
        data = {
            "tool": "routeplan",
            "format": FORMAT,
            "purpose": self.purpose,
            "run": self.run,
            "written": self.written,
            "version": self.version,
            "files": files,
        }
        return json.dumps(data, indent=1) + "\n"

    @classmethod
    def from_data(cls, data: object) -> Manifest:
        """The manifest of parsed JSON; ValueError when it is not one."""
        if not isinstance(data, dict) or data.get("tool") != "routeplan":
            raise ValueError("not a routeplan manifest")
        if data.get("format") != FORMAT:
            raise ValueError(f"manifest format {data.get('format')!r}, expected {FORMAT}")
        files = data.get("files")
        if not isinstance(files, dict) or data.get("purpose") not in PURPOSES:
            raise ValueError("manifest without files or purpose")
        out = {}
        for name, rec in files.items():
            if not isinstance(rec, dict) or not _safe_name(name):
                raise ValueError(f"manifest entry {name!r}")
            out[name] = Written(str(rec["sha256"]), int(rec["size"]), int(rec["mtime_ns"]))
        return cls(
            str(data["purpose"]),
            str(data.get("run", "")),
            str(data.get("written", "")),
            str(data.get("version", "")),
            out,
        )


def file_sha256(path: Path) -> str:
    """SHA-256 of a file's bytes."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 22), b""):
            h.update(block)
    return h.hexdigest()


def _safe_name(name: object) -> bool:
    """A manifest name: a relative path inside the folder (no ``..``, not absolute)."""
    if not isinstance(name, str) or not name or "\\" in name or "\x00" in name:
        return False
    parts = name.split("/")
    return not name.startswith("/") and all(p not in ("", ".", "..") for p in parts)


def _internal(name: str) -> bool:
    """Whether a listed file is routeplan's own bookkeeping (the plan cache): replaced or
    deleted even when its bytes changed (damaged), never a document a user edits."""
    return name.startswith(".routeplan-")


def _size_text(n: float) -> str:
    return f"{n / 2**20:,.0f} MiB" if n >= 2**20 else f"{n / 1024:,.0f} KiB"


class OutputFolder:
    """A folder opened for one run of a command (see the module docstring).

    Use :meth:`open` (which checks everything and takes the lock), write the run's files
    into :attr:`work`, then :meth:`commit` them; :meth:`close` (or leaving a ``with``
    block) releases the folder, removing the work folder of a run that did not commit and a
    folder this run created but never filled.
    """

    def __init__(
        self,
        path: Path,
        real: Path,
        purpose: str,
        previous: Manifest | None,
        created: list[Path],
        lock: int | Path | None,
        force: bool,
    ) -> None:
        #: the folder as given (may be a symbolic link, written through)
        self.path = path
        #: the folder with every symbolic link resolved
        self.real = real
        self.purpose = purpose
        #: the manifest found when the folder was opened (None: no routeplan files yet)
        self.previous = previous
        self.force = force
        self._created = created
        self._lock = lock
        self._work: Path | None = None
        self._next: Path | None = None  # the second commit's work folder (next_work)
        self.committed: Manifest | None = None

    # -- opening ------------------------------------------------------------------------
    @classmethod
    def open(
        cls,
        path: Path | str,
        purpose: str,
        *,
        force: bool = False,
        protect: Iterable[Path] = (),
        protect_root: Path | None = None,
        expect: Iterable[str] = (),
        must_exist: bool = False,
    ) -> OutputFolder:
        """Check ``path`` and open it for writing (creating it when missing).

        Parameters
        ----------
        path : path
            The folder.
        purpose : {'plan', 'diff', 'site'}
            What the folder holds (see :data:`PURPOSES`); a folder holding another
            purpose's files is refused.
        force : bool
            Write into a non-empty folder without a manifest (routeplan's files beside the
            others), and replace files routeplan wrote that were edited since.
        protect : paths
            Input files (or folder datasets) the folder must not be, hold, or lie inside.
        protect_root : path, optional
            The site folder: the output folder must not be it or hold it (it may lie inside).
        expect : relative names
            Files the run will write: refused up front if they are there and not routeplan's.
        must_exist : bool
            The folder must already hold ``purpose``'s files (``routeplan map``).

        Raises
        ------
        FolderError
            With one line saying why and what to do.
        """
        if purpose not in PURPOSES:
            raise ValueError(f"unknown purpose {purpose!r}")
        path = Path(path)
        real = _check_path(path)
        _check_protected(path, real, protect, protect_root)
        if must_exist and not real.is_dir():
            raise FolderError(path, f"not found (expected {PURPOSES[purpose]})")
        created = _make(path, real)
        folder = None
        try:
            lock = _take_lock(path, real)
            folder = cls(path, real, purpose, None, created, lock, force)
            folder._recover()
            folder.previous = folder._read_manifest(must_exist)
            folder._check_contents(expect)
            folder._check_room()
            folder._work = folder._new_work()
            return folder
        except BaseException:
            if folder is not None:
                folder.close()
            else:
                _remove_created(created)
            raise

    def _read_manifest(self, must_exist: bool) -> Manifest | None:
        path = self.real / MANIFEST
        if not path.exists():
            legacy = _legacy_manifest(self.real) if self.purpose == "plan" else None
            if legacy is None and must_exist:
                raise FolderError(
                    self.path,
                    f"holds no {MANIFEST}: it is not {PURPOSES[self.purpose]}",
                )
            return legacy
        try:
            m = Manifest.from_data(json.loads(path.read_text(encoding="utf-8")))
        except (OSError, ValueError, KeyError, TypeError) as exc:
            raise FolderError(
                self.path,
                f"its {MANIFEST} is damaged ({exc}), so routeplan cannot tell its own files "
                "from others: choose another folder, or move the files you want to keep out "
                "of it and delete the manifest",
            ) from None
        if m.purpose != self.purpose:
            raise FolderError(
                self.path,
                f"is {PURPOSES[m.purpose]}, not {PURPOSES[self.purpose]}: choose another folder",
            )
        return m

    def _ours(self) -> set[str]:
        """Top-level names in the folder that are routeplan's (manifest, work folders, the
        previous run's files and their folders)."""
        names = {MANIFEST, LOCK_FILE} | SYSTEM_FILES
        if self.previous is not None:
            names |= {n.split("/", 1)[0] for n in self.previous.files}
        return names

    def _check_contents(self, expect: Iterable[str]) -> None:
        try:
            entries = sorted(p.name for p in self.real.iterdir())
        except OSError as exc:
            raise FolderError(self.path, f"cannot be read ({exc.strerror})") from None
        ours = self._ours()
        others = [n for n in entries if n not in ours and not n.startswith(WORK_PREFIX)]
        if others and self.previous is None and not self.force:
            more = f" and {len(others) - 1} more" if len(others) > 1 else ""
            raise FolderError(
                self.path,
                f"is not empty and was not written by routeplan (it holds {others[0]!r}{more}): "
                "choose a new or empty folder, or add --force to write routeplan's files "
                "beside the others (nothing else is touched)",
            )
        for name in expect:
            self._check_target(name)

    def _check_target(self, name: str) -> None:
        """Refuse to replace ``name`` unless it is routeplan's (edited: only with force)."""
        target = self.real / name
        if not (target.exists() or target.is_symlink()):
            return
        rec = self.previous.files.get(name) if self.previous is not None else None
        if rec is None or target.is_dir() or target.is_symlink():
            raise FolderError(
                self.path,
                f"{name!r} is there but was not written by routeplan, and routeplan will not "
                "replace it: move it away or choose another folder",
            )
        if not self.force and not _internal(name) and not rec.matches(target):
            raise FolderError(
                self.path,
                f"{name!r} was changed after routeplan wrote it (edited by hand?): keep a "
                "copy elsewhere, or add --force to replace it",
            )

    def _check_room(self) -> None:
        last = sum(w.size for w in self.previous.files.values()) if self.previous else 0
        need = max(MIN_FREE_BYTES, int(1.25 * last))
        try:
            free = shutil.disk_usage(self.real).free
        except OSError:
            return
        if free < need:
            why = f" (the last run wrote {_size_text(last)})" if last else ""
            raise FolderError(
                self.path,
                f"only {_size_text(free)} free on its disk; this run needs about "
                f"{_size_text(need)}{why}: free some room or choose another folder",
            )

    def _new_work(self) -> Path:
        token = secrets.token_hex(8)
        work = self.real / f"{WORK_PREFIX}{token}"
        try:
            work.mkdir()
            owner = {
                "token": token,
                "pid": os.getpid(),
                "started": _now(),
                "purpose": self.purpose,
            }
            (work / OWNER).write_text(json.dumps(owner) + "\n", encoding="utf-8")
        except OSError as exc:
            raise FolderError(self.path, f"cannot be written ({exc.strerror})") from None
        return work

    # -- writing ------------------------------------------------------------------------
    @property
    def work(self) -> Path:
        """The work folder this run writes its files into (committed by :meth:`commit`)."""
        if self._work is None:
            raise RuntimeError("the folder is closed")
        return self._work

    def commit(
        self,
        files: Iterable[str],
        digests: Mapping[str, str | None] | None = None,
        *,
        keep_others: bool = False,
    ) -> Manifest:
        """Put the run's ``files`` (names relative to :attr:`work`, where they are) into
        place, all or nothing (see the module docstring), and return the new manifest.

        ``digests``: the files' SHA-256 where the writers know it (else read here).
        ``keep_others``: keep the previous run's files that this run does not write (a
        redrawn map); by default they are deleted (a new plan replaces the old one).
        """
        work = self.work
        known = dict(digests or {})
        names = sorted(set(files))
        new: dict[str, Written] = {}
        for name in names:
            if not _safe_name(name):
                raise ValueError(f"not a relative file name: {name!r}")
            self._check_target(name)  # a file put there during the run
            src = work / name
            st = src.stat()
            sha = known.get(name) or file_sha256(src)
            new[name] = Written(sha, st.st_size, st.st_mtime_ns)
        old = dict(self.previous.files) if self.previous is not None else {}
        if keep_others:
            new = {**{k: v for k, v in old.items() if k not in new}, **new}
        remove = {k: dataclasses.asdict(v) for k, v in old.items() if k not in new}
        manifest = Manifest(self.purpose, work.name[len(WORK_PREFIX) :], _now(), __version__, new)
        record = {"manifest": json.loads(manifest.to_json()), "remove": remove}
        part = work / (COMMIT + ".part")
        with open(part, "w", encoding="utf-8") as fh:
            fh.write(json.dumps(record) + "\n")
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(part, work / COMMIT)  # the run is committed from here on
        # From here the work folder is the commit's: a failure while it is carried out leaves
        # it, as a kill would, for the next command to finish (closing must not remove it).
        self._work = None
        try:
            _finish(self.real, work)
        except OSError as exc:
            what = exc.strerror or str(exc)
            name = Path(exc.filename).name if exc.filename else "a file"
            raise FolderError(
                self.path,
                f"the new files could not all be put in place ({name}: {what}); the run is "
                "recorded there, and the next routeplan command on this folder completes it",
            ) from None
        self.committed = manifest
        return manifest

    def next_work(self) -> Path:
        """The work folder of this run's second commit (:meth:`follow_up`), made now, so
        that a child process can write into it before the first commit (a watching process's
        map memo)."""
        if self._next is None:
            self._next = self._new_work()
        return self._next

    def follow_up(self) -> None:
        """Make :meth:`next_work` (made now if it was not) this run's work folder after
        :meth:`commit`, the folder still locked, for a second commit of the same run
        (``keep_others=True``: the files just committed stay; a watching process's cache
        entries, :meth:`routeplan.cache.PlanCache.save_deferred`). A kill before that commit
        leaves the first one's folder, complete, and a work folder the next run removes."""
        if self.committed is None or self._work is not None or self._lock is None:
            raise RuntimeError("follow_up() comes after a commit, before close()")
        self.previous = self.committed
        self._work = self.next_work()
        self._next = None

    # -- recovery and closing -------------------------------------------------------------
    def _recover(self) -> None:
        """Complete a killed run's committed work folder; remove an uncommitted one."""
        for work in sorted(self.real.glob(f"{WORK_PREFIX}*")):
            if work.is_symlink() or not work.is_dir():
                continue
            if (work / COMMIT).is_file():
                _finish(self.real, work)
            elif _owned(work):
                shutil.rmtree(work, ignore_errors=True)
            else:
                with contextlib.suppress(OSError):
                    work.rmdir()  # empty: killed before it wrote owner.json

    def close(self) -> None:
        """Release the folder: remove the work folder of a run that did not commit, remove
        folders this run created if they are still empty, and release the lock."""
        for work in (self._work, self._next):
            if work is not None:
                shutil.rmtree(work, ignore_errors=True)
        self._work = self._next = None
        if self.committed is None:
            _remove_created(self._created)
        _release_lock(self._lock)
        self._lock = None

    def __enter__(self) -> OutputFolder:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


# -- helpers ------------------------------------------------------------------------------


def _now() -> str:
    return dt.datetime.now(dt.UTC).isoformat(timespec="seconds")


def _check_path(path: Path) -> Path:
    """The resolved folder; FolderError when the path is a file, lies under a file, or is a
    broken link."""
    if str(path) == "":
        raise FolderError("''", "an empty path is not a folder")
    if path.is_symlink() and not path.exists():
        raise FolderError(path, "is a symbolic link to nothing: fix the link or choose a folder")
    if path.exists() and not path.is_dir():
        raise FolderError(path, "is a file, not a folder: choose a folder")
    for parent in path.absolute().parents:
        if parent.exists():
            if not parent.is_dir():
                raise FolderError(path, f"cannot be made: {parent} is a file, not a folder")
            break
    try:
        return _resolved(path)
    except OSError as exc:
        raise FolderError(path, f"cannot be resolved ({exc.strerror or exc})") from None


def _resolved(path: Path) -> Path:
    """``path.resolve()``, a symbolic-link loop raised as OSError (ELOOP) as Python 3.13
    raises it (3.11 and 3.12 raise RuntimeError)."""
    try:
        return Path(path).resolve()
    except RuntimeError as exc:
        raise OSError(errno.ELOOP, os.strerror(errno.ELOOP), str(path)) from exc


def _check_protected(path: Path, real: Path, protect: Iterable[Path], root: Path | None) -> None:
    """Refuse a folder that is the site folder or holds it, or that is, holds or lies
    inside one of the input files / datasets ``protect``."""
    if root is not None:
        site = _resolved(Path(root))
        if real == site:
            raise FolderError(
                path,
                "is the site folder: routeplan never writes over its inputs; choose another "
                f"folder (e.g. {site.name}-out beside it)",
            )
        if real in site.parents:
            raise FolderError(
                path,
                f"holds the site folder {site}: routeplan never writes over its inputs; "
                "choose a folder that holds none of them",
            )
    for p in protect:
        try:
            q = _resolved(Path(p))
        except OSError:  # an input that leads nowhere (a link loop): none to write over
            continue  # there, and the reader names it
        if real == q or real in q.parents:
            raise FolderError(
                path,
                f"holds the input file {q}: routeplan never writes over its inputs; choose a "
                "folder that holds none of them",
            )
        if q.is_dir() and q in real.parents:
            raise FolderError(
                path,
                f"lies inside the input dataset {q}: choose a folder outside the site's inputs",
            )


def _make(path: Path, real: Path) -> list[Path]:
    """Create the folder (and missing parents); the folders created, deepest last."""
    missing = []
    p = real
    while not p.exists():
        missing.append(p)
        p = p.parent
    for d in reversed(missing):
        try:
            d.mkdir()
        except FileExistsError:
            continue
        except OSError as exc:
            _remove_created([m for m in reversed(missing) if m != d])
            where = "" if d == real else f" ({d} cannot be made)"
            raise FolderError(path, f"cannot be created{where}: {exc.strerror or exc}") from None
    if not os.access(real, os.W_OK | os.X_OK):
        _remove_created(list(reversed(missing)))
        raise FolderError(path, "cannot be written (permission denied): choose another folder")
    return list(reversed(missing))


def _remove_created(created: list[Path]) -> None:
    """Remove the folders a run created, deepest first, where they are empty."""
    for d in sorted(created, key=lambda p: len(p.parts), reverse=True):
        with contextlib.suppress(OSError):
            d.rmdir()


def _owner_text(real: Path) -> str:
    """Who holds the folder, from the newest work folder's owner.json."""
    best = None
    for work in real.glob(f"{WORK_PREFIX}*"):
        try:
            owner = json.loads((work / OWNER).read_text(encoding="utf-8"))
            best = max(best or owner, owner, key=lambda o: str(o.get("started", "")))
        except (OSError, ValueError, AttributeError):
            continue
    if not best:
        return ""
    return f" (process {best.get('pid')}, started {best.get('started')})"


#: how long a run waits for the output folder's lock before it calls the folder busy [s]: the
#: child processes of a run that has just failed (stopped with it) hold the lock until the
#: kernel has torn them down, a moment after the run ends (a test starting the next run at
#: once met it under load)
LOCK_WAIT_S = 1.0


def _take_lock(path: Path, real: Path) -> int | Path:
    busy = (
        "another routeplan run is writing into this folder{who}: wait for it to finish, "
        "or choose another folder"
    )
    if fcntl is not None:
        try:
            fd = os.open(real, os.O_RDONLY | getattr(os, "O_DIRECTORY", 0))
        except OSError as exc:
            raise FolderError(path, f"cannot be opened ({exc.strerror})") from None
        deadline = time.monotonic() + LOCK_WAIT_S
        while True:
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
                return fd
            except OSError:
                if time.monotonic() >= deadline:
                    os.close(fd)
                    raise FolderError(path, busy.format(who=_owner_text(real))) from None
                time.sleep(0.02)
    lock = real / LOCK_FILE  # pragma: no cover - Windows
    try:  # pragma: no cover
        os.close(os.open(lock, os.O_CREAT | os.O_EXCL | os.O_WRONLY))
    except FileExistsError:  # pragma: no cover
        raise FolderError(
            path, busy.format(who=f" (or a killed run left {LOCK_FILE}: delete it then)")
        ) from None
    return lock  # pragma: no cover


@contextlib.contextmanager
def reading(path: Path | str) -> Iterator[None]:
    """Hold an output folder steady while a command reads it (``routeplan diff``).

    A run killed or failed after its commit record is completed first (as every command
    opening the folder does), so the reader never sees half of one run and half of another;
    then a shared lock is held, so no run commits into the folder while it is read. A folder
    another run is writing into is refused (:class:`FolderError`, one line). Nothing is
    written to a folder without a committed work folder (read-only media work). A missing
    path is left to the reader to report.
    """
    path = Path(path)
    if fcntl is None or not path.is_dir():  # pragma: no cover - Windows
        yield
        return
    real = path.resolve()
    try:
        fd = os.open(real, os.O_RDONLY | getattr(os, "O_DIRECTORY", 0))
    except OSError as exc:
        raise FolderError(path, f"cannot be opened ({exc.strerror})") from None
    busy = "another routeplan run is writing into this folder{who}: wait for it to finish"
    try:
        pending = sorted(
            w
            for w in real.glob(f"{WORK_PREFIX}*")
            if not w.is_symlink() and w.is_dir() and (w / COMMIT).is_file()
        )
        if pending:
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
            except OSError:
                raise FolderError(path, busy.format(who=_owner_text(real))) from None
            for work in pending:
                try:
                    _finish(real, work)
                except OSError as exc:
                    raise FolderError(
                        path,
                        f"a run's new files are not all in place, and completing it failed "
                        f"({exc.strerror or exc}); plan again",
                    ) from None
        try:
            fcntl.flock(fd, fcntl.LOCK_SH | fcntl.LOCK_NB)
        except OSError:
            raise FolderError(path, busy.format(who=_owner_text(real))) from None
        yield
    finally:
        os.close(fd)


def _release_lock(lock: int | Path | None) -> None:
    if isinstance(lock, int):
        os.close(lock)
    elif isinstance(lock, Path):  # pragma: no cover - Windows
        lock.unlink(missing_ok=True)


def _owned(work: Path) -> bool:
    """Whether a work folder is routeplan's: its owner.json names its token."""
    try:
        owner = json.loads((work / OWNER).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return False
    return isinstance(owner, dict) and owner.get("token") == work.name[len(WORK_PREFIX) :]


def _finish(real: Path, work: Path) -> None:
    """Carry out a committed work folder's record (idempotent: a killed call is finished
    by the next)."""
    record = json.loads((work / COMMIT).read_text(encoding="utf-8"))
    manifest = Manifest.from_data(record["manifest"])
    for name in manifest.files:
        src = work / name
        if src.is_file():
            (real / name).parent.mkdir(parents=True, exist_ok=True)
            os.replace(src, real / name)
    parents = set()
    for name, rec in record["remove"].items():
        if not _safe_name(name):
            continue
        target = real / name
        written = Written(str(rec["sha256"]), int(rec["size"]), int(rec["mtime_ns"]))
        if written.matches(target) or (_internal(name) and target.is_file()):
            target.unlink()
            parents.update(p for p in Path(name).parents if str(p) != ".")
    for p in sorted(parents, key=lambda p: len(p.parts), reverse=True):
        with contextlib.suppress(OSError):
            (real / p).rmdir()  # only where empty
    part = work / (MANIFEST + ".part")
    part.write_text(manifest.to_json(), encoding="utf-8")
    os.replace(part, real / MANIFEST)
    shutil.rmtree(work, ignore_errors=True)


def _legacy_manifest(real: Path) -> Manifest | None:
    """The files of an output folder written before manifests existed, recognised by the
    plan cache's own record of them (``.routeplan-cache/manifest.json``, format 2): only
    files whose SHA-256 is the one recorded there are taken as routeplan's."""
    cache = real / ".routeplan-cache"
    try:
        m = json.loads((cache / "manifest.json").read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if not isinstance(m, dict) or m.get("format") != 2:
        return None
    claims: dict[str, str] = {}
    outputs = m.get("outputs") if isinstance(m.get("outputs"), dict) else {}
    for name, sha in (outputs.get("files") or {}).items():
        claims[str(name)] = str(sha)
    for group in (m.get("entries") or {}, outputs.get("aux") or {}):
        for e in group.values():
            if isinstance(e, dict) and isinstance(e.get("file"), str):
                claims[f".routeplan-cache/{Path(e['file']).name}"] = str(e.get("sha256"))
    files = {}
    for name, sha in claims.items():
        p = real / name
        if _safe_name(name) and p.is_file() and not p.is_symlink() and file_sha256(p) == sha:
            st = p.stat()
            files[name] = Written(sha, st.st_size, st.st_mtime_ns)
    if not files:
        return None
    p = cache / "manifest.json"
    st = p.stat()
    files[".routeplan-cache/manifest.json"] = Written(file_sha256(p), st.st_size, st.st_mtime_ns)
    return Manifest("plan", "legacy", "", "", files)


# -- single files: the change map of ``routeplan diff --map FILE`` ---------------------------
#: bytes read from the start of an existing file to find routeplan's mark in it
MARK_WINDOW = 4096


def check_own_file(path: Path | str, mark: bytes) -> Path:
    """Check, before any computation, that routeplan may write the single file ``path``:
    its folder exists and can be written, and ``path`` is new, or a regular file routeplan
    wrote (``mark`` within its first :data:`MARK_WINDOW` bytes). A folder, a symbolic link,
    or any other file is refused: routeplan never replaces a file it did not write. Returns
    the path; raises :class:`routeplan.errors.FolderError` (one line) otherwise."""
    path = Path(path)
    if str(path) == "" or path.name in ("", ".", ".."):
        raise FolderError(path, "is not a file name")
    parent = path.absolute().parent
    if not parent.is_dir():
        raise FolderError(path, f"cannot be written: its folder {parent} does not exist")
    if not os.access(parent, os.W_OK | os.X_OK):
        raise FolderError(path, f"cannot be written: no permission to write into {parent}")
    if path.is_symlink():
        raise FolderError(path, "is a symbolic link, which routeplan will not replace")
    if path.exists():
        if not path.is_file():
            raise FolderError(path, "is there and is not a file: choose another name")
        try:
            with open(path, "rb") as fh:
                head = fh.read(MARK_WINDOW)
        except OSError as exc:
            raise FolderError(path, f"cannot be read ({exc.strerror or exc})") from None
        if mark not in head:
            raise FolderError(
                path,
                "is there but was not written by routeplan, and routeplan will not replace "
                "it: choose another name or move it away",
            )
    return path


def write_own_file(path: Path | str, data: bytes, mark: bytes) -> Path:
    """Write ``data`` (which must hold ``mark``) to ``path`` after :func:`check_own_file`,
    all or nothing: into a hidden temporary file beside it (created with the umask's
    permissions), then ``os.replace``. A failure removes the temporary file and leaves
    ``path`` as it was."""
    if mark not in data[:MARK_WINDOW]:
        raise ValueError("the data does not carry routeplan's mark in its first bytes")
    path = check_own_file(path, mark)
    tmp = path.with_name(f".{path.name}.routeplan-{secrets.token_hex(4)}")
    try:
        with open(tmp, "xb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise
    return path
