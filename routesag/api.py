"""The Python API: ``routesag.run("project.toml")``."""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from routesag.errors import OutputError
from routesag.pipeline import RunContext, assemble_chain, run_chain, stages_for
from routesag.project import Project, load_project


@dataclass
class RunResult:
    """What a run produced: the layers (GeoDataFrames) and where they were written."""

    layers: dict
    path: Path | None
    project: Project
    warnings: list[str] = field(default_factory=list)
    notes: dict = field(default_factory=dict)

    def __getitem__(self, name):
        return self.layers[name]


def run(project_path, out=None, progress=None, workers=None, scheduler=None, on_section=None) -> RunResult:
    """Run the pipeline of a project file and write its GeoPackage.

    Parameters
    ----------
    project_path : str or Path
        The TOML project file.
    out : str or Path, optional
        Output GeoPackage; overrides ``[output] path``.
    progress : callable, optional
        Called with each stage's name as it starts.
    workers : int, optional
        Worker processes for the tension sections; 0 means one per core. Default 1: in this process
        (the command line's default is ``[engine] workers``).
    scheduler : str, optional
        A dask scheduler address or ``local:N``; default ``[engine] scheduler``.
    on_section : callable, optional
        Called with (section_id, done, total) as each section finishes.

    Returns
    -------
    RunResult
        ``result.layers[name]`` is a GeoDataFrame (or DataFrame for tables).
    """
    project = load_project(project_path, output=out)
    check_destination(project)
    ctx = RunContext()
    engine = engine_factory(project, workers, scheduler)
    data = _run_closing_terrain(assemble_chain(project.pipeline_stages), project, ctx, progress, engine, on_section)
    layers = {name: frame for name, (frame, _) in data.get("layers", {}).items()}
    build_configured_report(project, data.get("geopackage"))
    return RunResult(layers=layers, path=data.get("geopackage"), project=project,
                     warnings=ctx.warnings, notes=ctx.notes)


def build_configured_report(project: Project, geopackage) -> None:
    """The HTML report of ``[report] dir`` (relative to the project file), when set, from the written file."""
    settings = project.settings.get("report", {})
    if geopackage is None or not settings.get("dir"):
        return
    from routesag.visual.build import build_report

    build_report(geopackage, project.path.parent / settings["dir"], all_spans=settings.get("all_spans", False))


def compute(project_path, targets, progress=None) -> dict:
    """Run only the stages needed for ``targets``; nothing is written.

    Parameters
    ----------
    project_path : str or Path
        The TOML project file.
    targets : iterable of str
        Dataset names, e.g. ``("sag_table",)``.
    progress : callable, optional
        Called with each stage's name as it starts.

    Returns
    -------
    dict
        Every dataset computed on the way, by name.
    """
    project = load_project(project_path)
    chain = stages_for(assemble_chain(project.pipeline_stages), tuple(targets))
    return _run_closing_terrain(chain, project, RunContext(), progress)


def engine_factory(project: Project, workers=None, scheduler=None):
    """A function of the number of sections giving the run's engine (arguments win over ``[engine]``)."""
    from routesag.engine import make_engine

    scheduler = scheduler or project.settings.get("engine", {}).get("scheduler") or None
    workers = 1 if workers is None else workers
    return lambda sections: make_engine(workers, scheduler, sections)


def _run_closing_terrain(chain, project, ctx, progress, engine=None, on_section=None) -> dict:
    """Run a chain from the project; the terrain reader is closed however the run ends."""
    data = {"project": project}
    try:
        run_chain(chain, data, ctx, progress=progress, engine=engine, on_section=on_section)
    finally:
        terrain = data.get("terrain")
        if terrain is not None and hasattr(terrain, "close"):
            terrain.close()
    return data


def check_destination(project: Project) -> None:
    """Refuse an output over an input file or into a missing folder, before any work is done."""
    out = project.output_path
    inputs = {p.resolve() for p in project.input_paths().values()}
    if out.resolve() in inputs or any(_is_hard_link(out, p) for p in inputs):
        raise OutputError(f"output {out} is one of the input files; choose another output path")
    if not out.parent.is_dir():
        raise OutputError(f"output folder {out.parent} does not exist")
    if out.is_dir():
        raise OutputError(f"output {out} is a folder; give a .gpkg file path")


def _is_hard_link(a: Path, b: Path) -> bool:
    try:
        return a.exists() and b.exists() and a.samefile(b)
    except OSError:
        return False
