"""Content hashes of input files, for the run report, taken when the inputs are read.

:func:`fingerprint` hashes an input (a file, or a folder dataset such as a
FileGDB or a folder of shapefiles) and notes its file-system signature;
:func:`changed_since` tells, cheaply, whether it was replaced or rewritten
since, so a run never records the hash of a file other than the one it read.
"""

import hashlib
import os
import threading
from pathlib import Path

from routesag.errors import DataError


def sha256_file(path, chunk=1 << 20):
    """SHA-256 hex digest of a file, read in chunks so memory stays bounded.

    Parameters
    ----------
    path : str or os.PathLike
        File to hash.
    chunk : int
        Bytes read per step [bytes].

    Returns
    -------
    str
        64-character lowercase hex digest.

    References
    ----------
    .. [1] NIST FIPS 180-4, Secure Hash Standard (2015).
    """
    digest = hashlib.sha256()
    with open(path, "rb") as f:
        while block := f.read(chunk):
            digest.update(block)
    return digest.hexdigest()


def sha256_path(path) -> str:
    """SHA-256 of a file, or of a folder dataset: every file's relative name and content hash, in name order."""
    path = Path(path)
    if not path.is_dir():
        return sha256_file(path)
    digest = hashlib.sha256()
    for name, member in _folder_files(path):
        digest.update(f"{name}\0{sha256_file(member)}\n".encode())
    return digest.hexdigest()


def signature(path) -> tuple:
    """What changes when a file is replaced or rewritten: inode, size and modification time (of each file)."""
    path = Path(path)
    if not path.is_dir():
        st = os.stat(path)
        return (st.st_ino, st.st_size, st.st_mtime_ns)
    return tuple((name, signature(member)) for name, member in _folder_files(path))


class BackgroundDigest:
    """SHA-256 of an input (:func:`sha256_path`) taken in a thread while the run goes on.

    hashlib and file reads release the GIL, so a raster of hundreds of MB is hashed on a spare core
    while the line is solved, not before it. ``start=False`` waits for :meth:`start` (or the first
    :meth:`result`); :meth:`result` waits for the digest (or re-raises its error).
    """

    def __init__(self, path, start=True):
        self._digest, self._error = None, None
        self._thread = threading.Thread(target=self._hash, args=(Path(path),), daemon=True,
                                        name=f"sha256 {Path(path).name}")
        self._started = threading.Lock()
        if start:
            self.start()

    def start(self) -> None:
        """Begin hashing (once)."""
        if self._started.acquire(blocking=False):
            self._thread.start()

    def _hash(self, path):
        try:
            self._digest = sha256_path(path)
        except BaseException as exc:  # handed to whoever asks for the digest
            self._error = exc

    def result(self) -> str:
        self.start()
        self._thread.join()
        if self._error is not None:
            raise self._error
        return self._digest


def fingerprint(path, start=True) -> tuple[BackgroundDigest, tuple]:
    """(SHA-256, signature) of an input as it is now; the SHA-256 is taken in a thread
    (:class:`BackgroundDigest`, ``start`` as there), so hashing a large raster overlaps the run."""
    before = signature(path)
    return BackgroundDigest(path, start), before


def changed_since(path, recorded_signature) -> bool:
    """True when the input is gone, replaced or rewritten since its signature was recorded."""
    try:
        return signature(path) != recorded_signature
    except OSError:
        return True


def input_sha256(role, path, ctx=None) -> str:
    """The SHA-256 recorded for an input when it was read (``ctx.inputs``), after checking it is unchanged.

    Without a record (a plugin replaced the reading stage) the file is hashed now.

    Raises
    ------
    DataError
        The input was replaced or rewritten during the run: the results may mix two versions of it.
    """
    record = getattr(ctx, "inputs", {}).get(role)
    if record is None or Path(record[0]) != Path(path):
        return sha256_path(path)
    _, digest, recorded = record
    if isinstance(digest, BackgroundDigest):
        digest = digest.result()  # before the signature check: the file must not change while it is hashed
    if changed_since(path, recorded):
        raise DataError(f"{role} file {path} changed while the run was reading it (replaced, rewritten or "
                        "removed); the results could mix two versions of it, so nothing was written: run again "
                        "once the file is final")
    return digest


def _folder_files(folder: Path):
    return sorted((str(p.relative_to(folder)), p) for p in folder.rglob("*") if p.is_file())
