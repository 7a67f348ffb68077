"""Where an output may go, checked before any work is done; write errors told in words; stale temporaries.

The output is written to a hidden temporary file beside the target and
renamed over it (see :mod:`routesag.io.gpkg`). That rename replaces whatever
is there, so before computing anything:

- an existing output must be a regular file (not ``/dev/null``, a FIFO, a
  device or a socket) and a GeoPackage (SQLite header and GeoPackage
  ``application_id``) or empty: routesag never replaces another kind of file;
- the folder must take a new file (a real probe, not only permission bits),
  and the file name, with the temporary name's extra characters, must fit
  the file system's limit.

Temporary files are named ``.<stem>.tmp-<pid>-<random>.gpkg``; one whose
process is gone is left by a killed run and removed by the next run.
"""
from __future__ import annotations

import errno
import os
import re
import secrets
import stat
from pathlib import Path

from routesag.errors import OutputError, cut

SQLITE_HEADER = b"SQLite format 3\x00"
#: GeoPackage application_id values (bytes 68-71 of the SQLite header): "GPKG" (1.2 on), "GP10", "GP11".
#: OGC GeoPackage Encoding Standard 1.3.1 (OGC 12-128r18), Requirement 2.
GPKG_APPLICATION_IDS = (b"GPKG", b"GP10", b"GP11")
#: The temporary name adds "." + ".tmp-" + pid + "-" + 12 hex digits to the stem [characters].
_TEMP_EXTRA = len("..tmp--") + 10 + 12
#: SQLite's "Failed to commit transaction" names no cause: full disk and file-size limit look alike.
_COMMIT = "commit"
_TEMP_NAME = re.compile(r"^\.(?P<stem>.+)\.tmp-(?P<pid>\d+)-[0-9a-f]{12}\.gpkg(?P<sidecar>-journal|-wal|-shm)?$")


def check_output_target(path, protect=()) -> None:
    """Refuse, before computing, an output that cannot or must not be replaced; OutputError says why and what to do.

    ``protect`` (the run's inputs) are left to the caller's own message, so they are not examined here.
    """
    path = Path(path)
    folder = path.parent
    _check_name_length(path)
    if any(_same(path, Path(p)) for p in protect):
        return
    if path.exists() or path.is_symlink():
        _check_replaceable(path)
    _probe_folder(folder)


def _check_replaceable(path: Path) -> None:
    try:
        mode = os.stat(path).st_mode
    except OSError as exc:
        raise OutputError(f"output {cut(path)} cannot be examined ({exc.strerror}); choose another output path")
    if stat.S_ISDIR(mode):
        raise OutputError(f"output {cut(path)} is a folder; give a .gpkg file path")
    if not stat.S_ISREG(mode):
        kind = ("a character device" if stat.S_ISCHR(mode) else "a block device" if stat.S_ISBLK(mode)
                else "a FIFO (named pipe)" if stat.S_ISFIFO(mode) else "a socket" if stat.S_ISSOCK(mode)
                else "not a regular file")
        raise OutputError(f"output {cut(path)} is {kind}, not a regular file: routesag writes a GeoPackage file "
                          "and would replace it; give a .gpkg file path")
    if _immutable(path):
        raise OutputError(f"output {cut(path)} is marked immutable or append-only (chattr); it cannot be replaced: "
                          "clear the flag or write elsewhere with --out")
    if os.stat(path).st_size and not is_geopackage(path):
        raise OutputError(f"output {cut(path)} exists and is not a GeoPackage; routesag replaces only an earlier "
                          "GeoPackage, never another file: choose another output path or move that file away")


#: Linux inode flags (linux/fs.h): FS_IOC_GETFLAGS, FS_IMMUTABLE_FL, FS_APPEND_FL.
_FS_IOC_GETFLAGS, _FS_IMMUTABLE_FL, _FS_APPEND_FL = 0x80086601, 0x10, 0x20


def _immutable(path: Path) -> bool:
    """True when Linux reports the file immutable or append-only; False where that cannot be asked."""
    try:
        import array
        import fcntl

        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
    except (ImportError, OSError):
        return False
    try:
        flags = array.array("l", [0])
        fcntl.ioctl(fd, _FS_IOC_GETFLAGS, flags, True)
        return bool(flags[0] & (_FS_IMMUTABLE_FL | _FS_APPEND_FL))
    except OSError:
        return False
    finally:
        os.close(fd)


def _same(a: Path, b: Path) -> bool:
    try:
        return a.resolve() == b.resolve() or (a.exists() and b.exists() and os.path.samefile(a, b))
    except OSError:
        return False


def is_geopackage(path) -> bool:
    """True when the file starts with the SQLite header and carries a GeoPackage application_id."""
    try:
        with open(path, "rb") as f:
            head = f.read(72)
    except OSError:
        return False
    return head.startswith(SQLITE_HEADER) and len(head) == 72 and head[68:72] in GPKG_APPLICATION_IDS


def _check_name_length(path: Path) -> None:
    folder = path.parent if path.parent.is_dir() else Path(".")
    try:
        limit = os.pathconf(folder, "PC_NAME_MAX")
    except (OSError, ValueError):
        limit = 255
    need = len(os.fsencode(path.name)) + _TEMP_EXTRA
    if need > limit:
        raise OutputError(f"output file name {cut(path.name, 80)} is {len(os.fsencode(path.name))} bytes long; with "
                          f"the temporary file's extra {_TEMP_EXTRA} it exceeds the file system's limit of {limit} "
                          "bytes: choose a shorter name")


def _probe_folder(folder: Path) -> None:
    """Create and remove a small file: permission bits do not show a read-only mount or a full quota."""
    if not folder.is_dir():
        raise OutputError(f"output folder {cut(folder)} does not exist")
    probe = folder / f".routesag-probe-{os.getpid()}-{secrets.token_hex(4)}"
    try:
        fd = os.open(probe, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o600)
        os.close(fd)
        os.unlink(probe)
    except OSError as exc:
        raise OutputError(f"output folder {cut(folder)} does not take new files ({exc.strerror}); "
                          f"{_advice(exc.errno)}") from None


def temporary_path(destination: Path) -> Path:
    """A fresh hidden temporary name beside the target that says which process made it."""
    while True:
        candidate = destination.with_name(f".{destination.stem}.tmp-{os.getpid()}-{secrets.token_hex(6)}.gpkg")
        if not candidate.exists():
            return candidate


def remove_stale_temporaries(destination) -> list[Path]:
    """Remove temporary files (and SQLite side files) a killed run left beside ``destination``; returns them.

    Only files with routesag's temporary name for this output whose owning process is gone are removed.
    """
    destination = Path(destination)
    removed = []
    try:
        entries = list(destination.parent.iterdir())
    except OSError:
        return removed
    for entry in entries:
        match = _TEMP_NAME.match(entry.name)
        if not match or match["stem"] != destination.stem or _process_alive(int(match["pid"])):
            continue
        try:
            if entry.is_file() and not entry.is_symlink():
                entry.unlink()
                removed.append(entry)
        except OSError:
            pass
    return removed


def _process_alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True     # someone else's live process
    except OverflowError:
        return False
    return True


def keep_mode(temporary: Path, destination: Path) -> None:
    """Give the new file the permission bits of the GeoPackage it replaces (a private 0600 file stays private)."""
    try:
        mode = stat.S_IMODE(os.stat(destination).st_mode)
    except OSError:
        return
    os.chmod(temporary, mode)


def write_error(exc: BaseException, destination) -> OutputError | None:
    """An OutputError telling what went wrong while writing and what to do, or None for other errors."""
    where = f"output {cut(destination)}"
    if isinstance(exc, OSError) and exc.errno is not None:
        return OutputError(f"{where} could not be written ({exc.strerror or os.strerror(exc.errno)}); "
                           f"{_advice(exc.errno)}; the earlier file is untouched")
    text = str(exc)
    lowered = text.lower()
    for needle, errno_ in (("no space", errno.ENOSPC), ("disk full", errno.ENOSPC), ("database or disk is full",
                           errno.ENOSPC), ("file too large", errno.EFBIG), ("failed to commit", _COMMIT),
                           ("read-only", errno.EROFS), ("permission denied", errno.EACCES),
                           ("unable to open database", errno.EACCES), ("disk i/o error", errno.EIO)):
        if needle in lowered:
            return OutputError(f"{where} could not be written ({cut(text.splitlines()[0] if text else '', 300)}); "
                               f"{_advice(errno_)}; the earlier file is untouched")
    return None


def _advice(code) -> str:
    return {
        errno.ENOSPC: "the disk is full: free space or write elsewhere with --out",
        errno.EDQUOT: "the disk quota is used up: free space or write elsewhere with --out",
        errno.EFBIG: "the file is larger than this file system or the process limit (ulimit -f) allows: "
                     "write to another file system with --out",
        errno.ENAMETOOLONG: "the file name is too long: choose a shorter one",
        errno.EACCES: "permission denied: write elsewhere with --out, or fix the folder's permissions",
        errno.EPERM: "the file or folder is protected (immutable or owned by another user): "
                     "write elsewhere with --out",
        errno.EBUSY: "the file is busy (open in another program?): close it or write elsewhere with --out",
        errno.EROFS: "the file system is read-only: write elsewhere with --out",
        errno.EIO: "the storage reported an input/output error: check the disk, or write elsewhere with --out",
        _COMMIT: "the disk may be full, or the file larger than the file system or the process limit "
                 "(ulimit -f) allows: free space, or write elsewhere with --out",
    }.get(code, "write elsewhere with --out, or fix the cause and run again")
