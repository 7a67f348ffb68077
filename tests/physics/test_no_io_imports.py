"""The physics package stays free of GIS and file I/O libraries (checked in a clean interpreter)."""

import json
import os
import subprocess
import sys
from pathlib import Path

REPO_ROOT = Path(__file__).resolve().parents[2]
HEAVY = ("geopandas", "rasterio", "pyogrio", "pyproj", "shapely")


def test_import_physics_pulls_no_io_libraries():
    code = (
        "import json, sys\n"
        "import routesag.physics\n"
        f"heavy = {HEAVY!r}\n"
        "print(json.dumps(sorted(m for m in sys.modules if m.split('.')[0] in heavy)))\n"
    )
    env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(REPO_ROOT), os.environ.get("PYTHONPATH", "")]))
    result = subprocess.run([sys.executable, "-c", code], cwd=REPO_ROOT, env=env, capture_output=True, text=True,
                            timeout=60)
    assert result.returncode == 0, result.stderr
    assert json.loads(result.stdout.strip().splitlines()[-1]) == []
