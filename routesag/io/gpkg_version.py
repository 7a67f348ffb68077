"""The GeoPackage version a file declares, and the output path's extension.

GDAL writes the newest version it knows (1.4 at the time of writing); several
desktop GIS releases still in use know 1.2 at most and warn on every open.
Nothing routesag writes needs a later version (vector features, attribute
tables, the CRS WKT of the core ``gpkg_spatial_ref_sys``), so the finished
file is stamped 1.2 unless ``[output] gpkg_version`` asks for another.

References
----------
.. [1] OGC GeoPackage Encoding Standard 1.2.1 (OGC 12-128r15), Requirement 2:
   ``application_id`` is 0x47504B47 ("GPKG") and ``user_version`` is
   10200 for version 1.2 (10300 for 1.3, 10400 for 1.4).
"""
from __future__ import annotations

import sqlite3
from pathlib import Path

from routesag.errors import OutputError

#: "GPKG" as a big-endian 32-bit integer (application_id of GeoPackage 1.2 and later).
GPKG_APPLICATION_ID = 0x47504B47
#: user_version per GeoPackage version.
USER_VERSIONS = {"1.2": 10200, "1.3": 10300, "1.4": 10400}
DEFAULT_VERSION = "1.2"
EXTENSION = ".gpkg"


def stamp_version(path, version: str = DEFAULT_VERSION) -> None:
    """Set the ``application_id`` and ``user_version`` of a finished GeoPackage to ``version``."""
    if version not in USER_VERSIONS:
        raise ValueError(f"GeoPackage version {version!r} is not one of {', '.join(USER_VERSIONS)}")
    connection = sqlite3.connect(Path(path))
    try:
        connection.execute(f"PRAGMA application_id = {GPKG_APPLICATION_ID}")
        connection.execute(f"PRAGMA user_version = {USER_VERSIONS[version]}")
        connection.commit()
    finally:
        connection.close()


def declared_version(path) -> tuple[int, int]:
    """``(application_id, user_version)`` of a GeoPackage file."""
    connection = sqlite3.connect(f"file:{Path(path)}?mode=ro", uri=True)
    try:
        return (connection.execute("PRAGMA application_id").fetchone()[0],
                connection.execute("PRAGMA user_version").fetchone()[0])
    finally:
        connection.close()


def check_extension(path) -> None:
    """Refuse an output path that does not end in .gpkg: routesag writes nothing else.

    Raises
    ------
    OutputError
        Naming the path and the extension it should have.
    """
    path = Path(path)
    if path.suffix.lower() != EXTENSION:
        given = f"extension {path.suffix!r}" if path.suffix else "no extension"
        raise OutputError(f"output {path}: {given}; routesag writes one GeoPackage: give a path ending in "
                          f"{EXTENSION} (e.g. {path.with_suffix(EXTENSION).name})")
