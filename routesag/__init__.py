"""routesag: conductor sag and clearance screening for overhead lines.

Structures + terrain raster -> spans, tension sections, change-of-state
tensions, exact 3D catenaries -> clearance under every metre of conductor ->
GeoPackage. Results are an engineering screening aid: loads and required
clearances come from the governing code and are confirmed by a licensed engineer.
"""

__version__ = "0.1.0"

from routesag.errors import (  # noqa: E402
    DataError, EngineError, InputError, OutputError, PipelineError, ProjectError, RoutesagError, SolveError,
)


def __getattr__(name):
    # The API pulls in geopandas/rasterio; keep `import routesag.physics` light.
    if name in ("run", "RunResult"):
        from routesag import api
        return getattr(api, name)
    if name == "load_project":
        from routesag.project import load_project
        return load_project
    raise AttributeError(f"module 'routesag' has no attribute {name!r}")


__all__ = [
    "__version__", "run", "RunResult", "load_project",
    "RoutesagError", "InputError", "ProjectError", "DataError", "SolveError", "PipelineError", "OutputError",
    "EngineError",
]
