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
