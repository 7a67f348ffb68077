"""A run killed while it writes (SIGKILL, SIGTERM) leaves the earlier output intact; the next run cleans up.

The child process is the real command line; it only waits (after the first layer reached the temporary file)
until the test has sent its signal, so every kill lands during the write.
"""
from __future__ import annotations

import os
import signal
import subprocess
import sys
import textwrap
import time

import pytest

import routesag
from tests.test_nothing_lost import snapshot
from tests.test_validation import good_survey

CHILD = textwrap.dedent("""
    import pathlib, sys, time
    from routesag.io import gpkg
    real = gpkg._write_one
    marker = pathlib.Path(sys.argv[1])

    def slow_write(path, layer, *args, **kwargs):
        real(path, layer, *args, **kwargs)
        if not marker.exists():
            marker.write_text(str(path))
            time.sleep(float(sys.argv[2]))

    gpkg._write_one = slow_write
    from routesag.cli import main
    main(sys.argv[3:])
""")


def start_writing(project, tmp_path, hold_s):
    marker = tmp_path / "writing"
    marker.unlink(missing_ok=True)
    child = subprocess.Popen([sys.executable, "-c", CHILD, str(marker), str(hold_s), "run", str(project)],
                             stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    deadline = time.monotonic() + 120
    while not marker.exists():
        assert child.poll() is None, child.communicate()
        assert time.monotonic() < deadline
        time.sleep(0.02)
    return child, marker.read_text()


def outputs(folder):
    return {name: data for name, data in snapshot(folder).items() if name.startswith("out")}


@pytest.mark.parametrize("delay_s", [0.0, 0.3])
def test_kill_9_during_the_write_keeps_the_earlier_output(tmp_path, delay_s):
    project = good_survey(tmp_path)
    routesag.run(project)
    before = outputs(tmp_path)
    child, temporary = start_writing(project, tmp_path, hold_s=5.0)
    time.sleep(delay_s)
    child.send_signal(signal.SIGKILL)
    child.communicate(timeout=60)
    assert outputs(tmp_path) == before                       # the earlier output, byte for byte
    assert os.path.exists(temporary)                          # what the killed run left
    result = subprocess.run([sys.executable, "-c", "from routesag.cli import main; main()", "run", str(project)],
                            capture_output=True, text=True, timeout=120)
    assert result.returncode == 0, result.stderr
    assert "left by an earlier run that was killed" in result.stderr and os.path.basename(temporary) in result.stderr
    assert not [p for p in os.listdir(tmp_path) if ".tmp-" in p]


def test_sigterm_during_the_write_cleans_up_like_ctrl_c(tmp_path):
    project = good_survey(tmp_path)
    routesag.run(project)
    before = outputs(tmp_path)
    child, temporary = start_writing(project, tmp_path, hold_s=5.0)
    child.send_signal(signal.SIGTERM)
    _, stderr = child.communicate(timeout=60)
    assert child.returncode != 0 and "Traceback" not in stderr
    assert outputs(tmp_path) == before
    assert not [p for p in os.listdir(tmp_path) if ".tmp-" in p], os.listdir(tmp_path)
