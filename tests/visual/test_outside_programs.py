"""The report and the styles as outside programs see them: a headless browser and the desktop GIS.

Both come from the OS packages (.ci/run installs them where it can); each test is skipped, saying why, when its
program is absent.
"""
import json
import os
import shutil
import subprocess
import textwrap
from pathlib import Path

import numpy as np
import pytest

from routesag.visual import palette

BROWSERS = ("chromium", "chromium-browser", "chromium-headless-shell")
SYSTEM_PYTHON = Path("/usr/bin/python3")
WIDTH, HEIGHT = 1280, 2400


def browser():
    return next((found for name in BROWSERS if (found := shutil.which(name))), None)


@pytest.mark.skipif(browser() is None, reason=f"no headless browser ({', '.join(BROWSERS)}) on PATH; "
                                              ".ci/run installs the OS package chromium where available")
def test_index_renders_headless_to_a_page_that_is_not_blank(demo_report, tmp_path):
    import matplotlib.image

    shot = tmp_path / "index.png"
    # No network: the page must render from the folder alone. Flags keep the browser from calling out.
    command = [browser(), "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
               "--disable-background-networking", "--disable-component-update", "--disable-sync",
               f"--user-data-dir={tmp_path / 'profile'}", f"--window-size={WIDTH},{HEIGHT}",
               f"--screenshot={shot}", demo_report.index.resolve().as_uri()]
    subprocess.run(command, check=True, timeout=120, capture_output=True)
    pixels = matplotlib.image.imread(shot)[:, :, :3]
    assert pixels.shape[:2] == (HEIGHT, WIDTH)
    assert pixels.std() > 0.05  # a blank page has one colour
    # The caution's border and the violation status cells are drawn in the palette's violation colour.
    violation = np.array([int(palette.VIOLATION[k:k + 2], 16) / 255 for k in (1, 3, 5)])
    assert (np.abs(pixels - violation).max(axis=2) < 0.03).sum() > 500


QGIS_SCRIPT = textwrap.dedent("""
    import json, os, sys
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    from qgis.core import QgsApplication, QgsVectorLayer
    app = QgsApplication([], False)
    app.initQgis()
    out = {}
    for name in sys.argv[2:]:
        layer = QgsVectorLayer(f"{sys.argv[1]}|layername={name}", name, "ogr")
        renderer = layer.renderer()
        kind = renderer.type()
        if kind == "categorizedSymbol":
            colours = [c.symbol().color().name() for c in renderer.categories()]
        elif kind == "graduatedSymbol":
            colours = [r.symbol().color().name() for r in renderer.ranges()]
        else:
            colours = [renderer.symbol().color().name()]
        out[name] = {"valid": layer.isValid(), "renderer": kind, "colours": colours,
                     "labels": layer.labelsEnabled()}
    print(json.dumps(out), flush=True)
    os._exit(0)  # tearing the application down can crash in some builds; the answer is already out
""")


def qgis_available() -> bool:
    if not SYSTEM_PYTHON.is_file():
        return False
    probe = subprocess.run([str(SYSTEM_PYTHON), "-c", "import qgis.core"], capture_output=True, timeout=120)
    return probe.returncode == 0


@pytest.mark.skipif(not qgis_available(), reason="the desktop GIS's Python bindings (OS package python3-qgis) "
                                                 "are not importable by /usr/bin/python3")
def test_each_styled_layer_opens_with_its_default_style(demo_gpkg, tmp_path):
    expected = {"conductors": ("categorizedSymbol", palette.CASE_COLOURS[:4]),
                "clearance_violations": ("graduatedSymbol", palette.DEFICIT_COLOURS),
                "hotspots": ("graduatedSymbol", palette.DEFICIT_COLOURS),
                "unknown_stretches": ("singleSymbol", [palette.UNKNOWN]),
                "structures": ("categorizedSymbol", [palette.STRUCTURE, "#ffffff"]),
                "spans": ("singleSymbol", [palette.SPAN])}
    script = tmp_path / "load_styles.py"
    script.write_text(QGIS_SCRIPT)
    env = {**os.environ, "QT_QPA_PLATFORM": "offscreen", "XDG_RUNTIME_DIR": str(tmp_path)}
    done = subprocess.run([str(SYSTEM_PYTHON), str(script), str(demo_gpkg), *expected], capture_output=True,
                          text=True, timeout=300, env=env, check=True)
    loaded = json.loads(done.stdout.strip().splitlines()[-1])
    for name, (renderer, colours) in expected.items():
        assert loaded[name]["valid"], name
        assert loaded[name]["renderer"] == renderer, name
        assert loaded[name]["colours"] == [c.lower() for c in colours], name
    assert loaded["structures"]["labels"] and loaded["hotspots"]["labels"]
