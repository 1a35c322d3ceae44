"""Safe reading of the files a person names: regular files only, with size limits.

Every reader of a user's file (weather records, section files, job files, rail
profile files) opens it through this module, so that no path can hang a run or
exhaust the memory, and every refusal is a one-line :class:`InputError`:

* the path itself: no NUL byte, no name part over :data:`MAX_NAME_BYTES`, no
  path over :data:`MAX_PATH_BYTES`, no symbolic link loop;
* only regular files: a folder, a FIFO (named pipe), a device such as
  ``/dev/zero`` or ``/dev/urandom``, a socket is refused. The file is opened
  without blocking (a FIFO with no writer would otherwise wait forever) and its
  type is checked on the open descriptor;
* at most ``limit`` bytes are read (:data:`MAX_RECORD_BYTES` for weather
  records, :data:`MAX_TOML_BYTES` for TOML files); a gzip file is decompressed
  as a stream and refused past :data:`MAX_DECOMPRESSED_BYTES`, or past
  :data:`MAX_EXPANSION` times its own size once over 64 MiB (a small file that
  expands to gigabytes is stopped early, not after);
* text: UTF-8 with or without a byte-order mark; UTF-16 and files whose lines
  end in a bare carriage return (old Mac) get a message saying how to save them.

Messages never quote the content of the file.
"""

from __future__ import annotations

import errno
import os
import stat
from pathlib import Path

from trackplan.errors import InputError

#: Largest weather record read from disk [bytes] (30 years of one-minute data as CSV is about 600 MB;
#: compress it).
MAX_RECORD_BYTES = 512 * 1024**2
#: Largest weather record after gzip decompression [bytes].
MAX_DECOMPRESSED_BYTES = 1024**3
#: Most a gzip file may expand, as a multiple of its size (text records compress about 3-10 times;
#: a "bomb" of repeated bytes about 1000 times), once past :data:`RATIO_FREE_BYTES`.
MAX_EXPANSION = 100
RATIO_FREE_BYTES = 64 * 1024**2
#: Largest TOML file (section, job, rail profile files) [bytes].
MAX_TOML_BYTES = 16 * 1024**2
#: Longest part of a path (one file or folder name) [bytes, UTF-8], as on common file systems.
MAX_NAME_BYTES = 255
#: Longest whole path [bytes, UTF-8] (Linux PATH_MAX).
MAX_PATH_BYTES = 4096

_CHUNK = 1024**2


def _mib(n: int) -> str:
    return f"{n / 1024**2:.0f} MiB"


def check_path(path, where: str) -> Path:
    """Refuse a path no file can have (NUL byte, over-long name or path).

    Returns the path as a :class:`~pathlib.Path`.
    """
    text = os.fspath(path) if not isinstance(path, str) else path
    if isinstance(text, bytes):
        text = text.decode("utf-8", "replace")
    if "\x00" in text:
        raise InputError("the path contains a NUL byte; no file can have such a name", where)
    if not text.strip():
        raise InputError("the path is empty; give a file", where)
    raw = text.encode("utf-8", "surrogateescape")
    if len(raw) > MAX_PATH_BYTES:
        raise InputError(f"the path is {len(raw)} bytes long; at most {MAX_PATH_BYTES} are possible", where)
    for part in Path(text).parts:
        if len(part.encode("utf-8", "surrogateescape")) > MAX_NAME_BYTES:
            raise InputError(f"a name in the path is longer than {MAX_NAME_BYTES} bytes; shorten it", where)
    return Path(text)


def _os_message(exc: OSError) -> str:
    return {
        errno.ENOENT: "file not found",
        errno.ELOOP: "the path is a loop of symbolic links",
        errno.ENAMETOOLONG: "the path or a name in it is too long",
        errno.EACCES: "permission denied",
        errno.ENOTDIR: "a part of the path is not a folder",
        errno.EISDIR: "is a folder, not a file",
    }.get(exc.errno, f"cannot read the file ({exc.strerror or exc.__class__.__name__})")


def safe_resolve(path, where: str) -> Path:
    """``Path.resolve()`` with a message for symbolic link loops and impossible paths."""
    p = check_path(path, where)
    try:
        return p.resolve()
    except RuntimeError:  # symlink loop (Python < 3.13)
        raise InputError("the path is a loop of symbolic links", where) from None
    except OSError as exc:
        raise InputError(_os_message(exc), where) from None


def open_regular(path, where: str) -> int:
    """Open a regular file for reading without blocking; return the descriptor.

    Raises
    ------
    InputError
        Not found, a folder, a FIFO, a device, a socket, a link loop, unreadable.
    """
    p = check_path(path, where)
    try:
        fd = os.open(p, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0))
    except OSError as exc:
        raise InputError(_os_message(exc), where) from None
    try:
        mode = os.fstat(fd).st_mode
        if not stat.S_ISREG(mode):
            what = ("a folder" if stat.S_ISDIR(mode) else "a named pipe (FIFO)" if stat.S_ISFIFO(mode)
                    else "a device" if stat.S_ISCHR(mode) or stat.S_ISBLK(mode)
                    else "a socket" if stat.S_ISSOCK(mode) else "not a regular file")
            raise InputError(f"is {what}; give a regular file", where)
        if hasattr(os, "set_blocking"):
            os.set_blocking(fd, True)
    except BaseException:
        os.close(fd)
        raise
    return fd


def check_regular(path, where: str, limit: int | None = None) -> None:
    """Refuse anything but a regular file (see :func:`open_regular`), or one over ``limit`` bytes,
    for files that a library opens itself (netCDF)."""
    fd = open_regular(path, where)
    try:
        size = os.fstat(fd).st_size
    finally:
        os.close(fd)
    if limit is not None and size > limit:
        raise InputError(f"the file is larger than {_mib(limit)}, the most trackplan reads; "
                         "cut it to the years and place needed", where)


def read_bytes(path, where: str, limit: int, decompress_limit: int | None = None) -> bytes:
    """Read a regular file, at most ``limit`` bytes; gunzip it (at most ``decompress_limit``).

    Parameters
    ----------
    path : path
        The file.
    where : str
        How to name it in messages.
    limit : int
        Largest size on disk accepted [bytes].
    decompress_limit : int, optional
        When given, a gzip file (recognised by its magic bytes) is decompressed, at
        most this many bytes.
    """
    fd = open_regular(path, where)
    with os.fdopen(fd, "rb") as fh:
        raw = fh.read(limit + 1)
    if len(raw) > limit:
        raise InputError(f"the file is larger than {_mib(limit)}, the most trackplan reads; "
                         "split or compress it", where)
    if decompress_limit is not None and raw[:2] == b"\x1f\x8b":
        raw = gunzip(raw, where, decompress_limit, ratio_limit=max(RATIO_FREE_BYTES, MAX_EXPANSION * len(raw)))
    return raw


def gunzip(raw: bytes, where: str, limit: int, ratio_limit: int | None = None) -> bytes:
    """Decompress gzip data as a stream, refusing more than ``limit`` bytes of output, or more than
    ``ratio_limit`` (an expansion no text record has: see :data:`MAX_EXPANSION`)."""
    import zlib

    out = bytearray()
    data = raw
    while data:
        d = zlib.decompressobj(16 + zlib.MAX_WBITS)
        try:
            while data:
                chunk = d.decompress(data, _CHUNK)
                out += chunk
                if len(out) > limit:
                    raise InputError(f"the file expands to more than {_mib(limit)} when decompressed, the most "
                                     "trackplan reads", where)
                if ratio_limit is not None and len(out) > ratio_limit:
                    raise InputError(f"the file expands more than {MAX_EXPANSION} times its size when decompressed "
                                     "(no weather record compresses so well): a damaged or hostile file", where)
                data = d.unconsumed_tail
                if d.eof:
                    break
        except zlib.error as exc:
            raise InputError(f"damaged gzip file ({exc})", where) from None
        if not d.eof:
            raise InputError("damaged gzip file (it ends early)", where)
        data = d.unused_data
        if data and data[:2] != b"\x1f\x8b":
            break  # trailing garbage after the last member is ignored, as gzip does
    return bytes(out)


def decode_text(raw: bytes, where: str, fallback: str | None = None) -> str:
    """Decode a text file: UTF-8 (a byte-order mark is accepted), else ``fallback``.

    UTF-16/UTF-32 files and files whose lines end with a bare carriage return are
    refused with a message saying how to save them.
    """
    if raw[:2] in (b"\xff\xfe", b"\xfe\xff") or (len(raw) >= 4 and raw[:64].count(b"\x00") >= len(raw[:64]) // 4):
        raise InputError("the file is UTF-16 (or another wide encoding); save it as UTF-8", where)
    if b"\x00" in raw:
        raise InputError("the file holds NUL bytes; it is not a text file", where)
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        if fallback is None:
            raise InputError(f"the file is not UTF-8 (byte {exc.start}); save it as UTF-8", where) from None
        text = raw.decode(fallback)
    if "\r" in text and "\n" not in text:
        raise InputError("the lines end with a bare carriage return (old Mac format); save the file with "
                         "ordinary line ends (LF or CR LF)", where)
    return text


def read_text(path, where: str, limit: int = MAX_TOML_BYTES) -> str:
    """Read a small UTF-8 text file (TOML) safely (see :func:`read_bytes`, :func:`decode_text`)."""
    return decode_text(read_bytes(path, where, limit), where)
