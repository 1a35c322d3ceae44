"""The register across processes: refuse a register file inherited open from the parent at fork.

SQLite keeps its record of the locks a process holds (per file: which
connections hold a shared, reserved or exclusive lock; the WAL's shared-memory
locks) in the process's memory. A forked child inherits that record and the
open files, but not the locks themselves: POSIX advisory locks belong to a
process. A connection opened in the child to a file the parent had open joins
the inherited record and believes it holds locks it does not; another process
then finds nobody holding the file, takes it as its last user, checkpoints and
deletes the WAL while the child writes to it, and the child's commit, reported
done, is lost. The register opens a connection for every transaction and
closes it at the end (:mod:`trackplan.register`), so it never carries one
across a fork itself; this module makes a child refuse to connect to a
register whose file it inherited open (through any connection of the parent,
SQLAlchemy or ``sqlite3``), rather than lose entries.

Light (no SQLAlchemy): imported by :mod:`trackplan.register`.

References
----------
SQLite documentation, "How To Corrupt An SQLite Database File", section 2.6
(carrying an open database connection across a fork) and section 2.2 (POSIX
advisory locks released by a close()) (sqlite.org).
"""

from __future__ import annotations

import os
import stat
from pathlib import Path


class ForkedConnectionError(RuntimeError):
    """The register's file was open in the parent process when this process was forked.

    A program error, not bad input: close every connection to the register
    (SQLAlchemy or ``sqlite3``) before forking, or open it in the child only.
    """


#: Regular files this process inherited open from its parent at fork: ``{fd: (st_dev, st_ino)}``
#: (empty in a process that was not forked).
_INHERITED_FILES: dict[int, tuple[int, int]] = {}


def _note_inherited_files() -> None:
    """In a child just forked: remember the regular files the parent had open."""
    _INHERITED_FILES.clear()
    try:
        fds = [int(n) for n in os.listdir("/dev/fd")]
    except (OSError, ValueError):
        return
    for fd in fds:
        try:
            st = os.fstat(fd)
        except OSError:  # the descriptor of the listing itself, closed by now
            continue
        if stat.S_ISREG(st.st_mode):
            _INHERITED_FILES[fd] = (st.st_dev, st.st_ino)


if hasattr(os, "register_at_fork"):
    os.register_at_fork(after_in_child=_note_inherited_files)


def refuse_inherited(path: Path) -> None:
    """Raise :class:`ForkedConnectionError` if the register (or its WAL or shared-memory
    file) is still open through a descriptor inherited from the parent process."""
    if not _INHERITED_FILES:
        return
    for fd, key in list(_INHERITED_FILES.items()):
        try:
            st = os.fstat(fd)
            same = (st.st_dev, st.st_ino) == key
        except OSError:
            same = False
        if not same:  # closed (or its number reused) since the fork
            del _INHERITED_FILES[fd]
    ours = set()
    for p in (path, Path(f"{path}-wal"), Path(f"{path}-shm")):
        try:
            st = os.stat(p)
        except OSError:
            continue
        ours.add((st.st_dev, st.st_ino))
    if ours & set(_INHERITED_FILES.values()):
        raise ForkedConnectionError(
            f"{path}: the register was open in the parent process when this process was forked; SQLite's "
            "locks do not pass to a forked process, so a write here could be lost: close every connection "
            "to the register before forking, or open it in the child only")
