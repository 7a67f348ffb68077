"""Input hashes taken in a background thread: the same digest, the same refusal when the file changes."""
import hashlib
import os

import pytest

from routesag.errors import DataError
from routesag.io.hashing import BackgroundDigest, fingerprint, input_sha256


class Ctx:
    def __init__(self):
        self.inputs = {}


def test_background_digest_is_the_file_sha256(tmp_path):
    path = tmp_path / "terrain.bin"
    path.write_bytes(os.urandom(3 << 20) + b"tail")  # several read chunks
    digest, _ = fingerprint(path)
    assert digest.result() == hashlib.sha256(path.read_bytes()).hexdigest()  # hashlib: FIPS 180-4


def test_background_digest_hands_over_its_error(tmp_path):
    with pytest.raises(FileNotFoundError):
        BackgroundDigest(tmp_path / "missing.tif").result()


def test_recorded_background_digest_is_reported_and_a_changed_file_refused(tmp_path):
    path = tmp_path / "structures.csv"
    path.write_text("x,y\n1,2\n")
    ctx = Ctx()
    ctx.inputs["structures"] = (path, *fingerprint(path))
    assert input_sha256("structures", path, ctx) == hashlib.sha256(b"x,y\n1,2\n").hexdigest()
    path.write_text("x,y\n1,3\n0,0\n")  # rewritten during the run
    with pytest.raises(DataError, match="changed while the run was reading it"):
        input_sha256("structures", path, ctx)
