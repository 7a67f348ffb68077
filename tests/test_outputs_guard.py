"""Outputs: never replace what is not an earlier GeoPackage, refuse early, tell write errors in words."""
from __future__ import annotations

import errno
import os
import signal
import sqlite3
import stat
import subprocess
import sys
import time

import pyogrio
import pytest
from click.testing import CliRunner

import routesag
from routesag.cli import main
from routesag.errors import OutputError
from routesag.io import gpkg, outputs_guard
from tests.test_nothing_lost import snapshot
from tests.test_validation import good_survey


@pytest.fixture
def project(tmp_path):
    return good_survey(tmp_path)


def refused(project, out, pattern):
    before = snapshot(project.parent)
    with pytest.raises(OutputError, match=pattern):
        routesag.run(project, out=out)
    result = CliRunner().invoke(main, ["run", str(project), "--out", str(out)])
    assert result.exit_code == 2 and "Traceback" not in result.output, result.output
    assert snapshot(project.parent) == before


def test_dev_null_is_refused(project):
    refused(project, "/dev/null", r"output /dev/null is a character device, not a regular file")


def test_fifo_is_refused(project):
    fifo = project.parent / "pipe.gpkg"
    os.mkfifo(fifo)
    refused(project, fifo, r"pipe\.gpkg is a FIFO \(named pipe\), not a regular file")
    assert stat.S_ISFIFO(os.stat(fifo).st_mode)


def test_socket_is_refused(project):
    import socket

    path = project.parent / "s.gpkg"
    with socket.socket(socket.AF_UNIX) as sock:
        sock.bind(str(path))
        refused(project, path, r"s\.gpkg is a socket")


@pytest.mark.parametrize("content", [b"ssh-ed25519 AAAA... user@host\n", b"SQLite format 3\x00" + b"\x00" * 100])
def test_a_file_that_is_not_a_geopackage_is_never_replaced(project, content):
    """A plain text file, and a SQLite database that is not a GeoPackage (application_id 0)."""
    target = project.parent / "authorized_keys"
    target.write_bytes(content)
    os.chmod(target, 0o600)
    refused(project, target, r"authorized_keys exists and is not a GeoPackage; routesag replaces only")
    assert target.read_bytes() == content and stat.S_IMODE(os.stat(target).st_mode) == 0o600


def test_a_replaced_geopackage_keeps_its_permissions(project):
    out = project.parent / "out.gpkg"
    routesag.run(project)
    assert outputs_guard.is_geopackage(out)
    os.chmod(out, 0o600)
    routesag.run(project)
    assert stat.S_IMODE(os.stat(out).st_mode) == 0o600


def test_an_empty_file_may_be_replaced(project):
    out = project.parent / "new.gpkg"
    out.touch()
    assert routesag.run(project, out=out).path == out and outputs_guard.is_geopackage(out)


def test_a_name_too_long_for_the_file_system_is_refused_before_computing(project, monkeypatch):
    out = project.parent / ("r" * 300 + ".gpkg")
    ran = []
    monkeypatch.setattr(routesag.api, "run_chain", lambda *a, **k: ran.append(1))
    refused(project, out, r"output file name r+.*is 305 bytes long.*limit of 255 bytes: choose a shorter name")
    assert not ran


@pytest.mark.skipif(os.geteuid() == 0, reason="root writes into read-only folders")
def test_a_read_only_folder_is_refused_before_computing(project, tmp_path):
    folder = tmp_path / "locked"
    folder.mkdir()
    os.chmod(folder, 0o500)
    try:
        refused(project, folder / "x.gpkg", r"output folder .*locked (does not take new files|is not writable)")
    finally:
        os.chmod(folder, 0o700)


@pytest.mark.parametrize("error, advice", [
    (OSError(errno.ENOSPC, "No space left on device"), "the disk is full"),
    (OSError(errno.EFBIG, "File too large"), "larger than this file system or the process limit"),
    (OSError(errno.EBUSY, "Device or resource busy"), "the file is busy"),
    (OSError(errno.EPERM, "Operation not permitted"), "protected \\(immutable"),
    (pyogrio.errors.DataSourceError("sqlite3_exec(COMMIT) failed: database or disk is full"), "the disk is full"),
    (RuntimeError("Failed to commit transaction"), "the disk may be full, or the file larger"),
])
def test_write_errors_are_told_in_words(project, monkeypatch, error, advice):
    routesag.run(project)
    before = snapshot(project.parent)

    def fail(*args, **kwargs):
        raise error

    monkeypatch.setattr(gpkg, "_write_one", fail)
    result = CliRunner().invoke(main, ["run", str(project)])
    assert result.exit_code == 2, result.output
    assert "could not be written" in result.output and advice.replace("\\", "") in result.output.replace("\\", "")
    assert "the earlier file is untouched" in result.output
    assert snapshot(project.parent) == before


def test_rename_over_a_busy_output_is_told_in_words(project, monkeypatch):
    routesag.run(project)
    before = snapshot(project.parent)

    def busy(src, dst):
        raise OSError(errno.EBUSY, "Device or resource busy")

    monkeypatch.setattr(gpkg.os, "replace", busy)
    with pytest.raises(OutputError, match=r"the file is busy"):
        routesag.run(project)
    assert snapshot(project.parent) == before


def test_stale_temporaries_of_dead_runs_are_removed_and_live_ones_kept(project, caplog):
    folder = project.parent
    dead = subprocess.Popen([sys.executable, "-c", "pass"])
    dead.wait()
    stale = folder / f".out.tmp-{dead.pid}-0123456789ab.gpkg"
    journal = folder / f".out.tmp-{dead.pid}-0123456789ab.gpkg-journal"
    live = folder / f".out.tmp-{os.getppid()}-0123456789ab.gpkg"
    other = folder / f".other.tmp-{dead.pid}-0123456789ab.gpkg"
    for path in (stale, journal, live, other):
        path.write_bytes(b"partial")
    with caplog.at_level("WARNING", logger="routesag"):
        result = routesag.run(project)
    assert sorted(result.notes["removed_stale_temporaries"]) == sorted([str(stale), str(journal)])
    assert not stale.exists() and not journal.exists()
    assert live.exists() and other.exists()
    assert "a temporary file left by an earlier run that was killed" in caplog.text and stale.name in caplog.text


def test_an_immutable_earlier_output_is_refused_before_computing(project):
    import shutil

    out = project.parent / "out.gpkg"
    routesag.run(project)
    if not shutil.which("chattr") or subprocess.run(["chattr", "+i", str(out)], capture_output=True).returncode:
        pytest.skip("cannot set the immutable flag here (needs chattr and the right)")
    try:
        refused(project, out, r"out\.gpkg is marked immutable or append-only \(chattr\)")
    finally:
        subprocess.run(["chattr", "-i", str(out)], check=True)


def test_a_real_file_size_limit_during_the_write(project):
    """ulimit -f in a child process: SQLite fails to commit; exit 2, what to do, the earlier output intact."""
    routesag.run(project)
    before = snapshot(project.parent)
    child = ("import resource, signal, sys\n"
             "signal.signal(signal.SIGXFSZ, signal.SIG_IGN)\n"
             "resource.setrlimit(resource.RLIMIT_FSIZE, (150_000, 150_000))\n"
             "from routesag.cli import main\n"
             "main(['run', sys.argv[1]])\n")
    done = subprocess.run([sys.executable, "-c", child, str(project)], capture_output=True, text=True, timeout=120)
    assert done.returncode == 2, done.stderr
    assert "could not be written" in done.stderr and "ulimit -f" in done.stderr and "Traceback" not in done.stderr
    assert snapshot(project.parent) == before
