"""Content hashes of input files, for the run report."""

import hashlib


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


class BackgroundHash:
    """SHA-256 of a file computed in a thread while the run goes on (hashlib releases the GIL on large blocks).

    The file's size and modification time are noted when hashing starts;
    :meth:`changed` tells whether they differ now, i.e. whether the digest
    may not be that of the bytes the run read.

    Parameters
    ----------
    path : str or os.PathLike
        File to hash.
    """

    def __init__(self, path):
        import os
        import threading

        self.path = path
        self._stat = _signature(os.stat(path))
        self._digest = None
        self._error = None
        self._thread = threading.Thread(target=self._run, name=f"sha256 {path}", daemon=True)
        self._thread.start()

    def _run(self):
        try:
            self._digest = sha256_file(self.path)
        except OSError as exc:
            self._error = exc

    def hexdigest(self):
        """The digest (waits for the thread); an OSError met while reading is raised here."""
        self._thread.join()
        if self._error is not None:
            raise self._error
        return self._digest

    def changed(self):
        """True when the file's size or modification time differ from when hashing started."""
        import os

        try:
            return _signature(os.stat(self.path)) != self._stat
        except OSError:
            return True


def _signature(stat):
    return stat.st_size, stat.st_mtime_ns
