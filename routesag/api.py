"""The Python API: ``routesag.run("project.toml")``."""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import logging

from routesag.errors import InputError, OutputError, ProjectError
from routesag.io.gpkg_version import check_extension
from routesag.io.outputs_guard import check_output_target, remove_stale_temporaries
from routesag.pipeline import RunContext, assemble_chain, run_chain, stages_for
from routesag.project import Project, load_project

log = logging.getLogger("routesag")


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


def run(project_path, out=None, progress=None, workers=1, scheduler=None, on_section=None,
        read_back=True) -> RunResult:
    """Run the pipeline of a project file and write its GeoPackage.

    Parameters
    ----------
    project_path : str or Path
        The TOML project file.
    out : str or Path, optional
        Output GeoPackage; overrides ``[output] path``.
    progress : callable, optional
        Called with each stage's name as it starts.
    workers : int or None, optional
        Worker processes for the tension sections; 0 means one per core. Default 1: in this process.
        None: the project's ``[engine]`` table decides (its scheduler, else its workers), as the command
        line does when given neither ``--workers`` nor ``--scheduler``.
    scheduler : str, optional
        A dask scheduler address (``tcp://host:port``) or ``local:N``; wins over ``workers``.
    on_section : callable, optional
        Called with (section_id, done, total) as each section finishes, and with ("", 0, total) before.
    read_back : bool, default True
        The conductors go to the GeoPackage section by section and leave memory; True reads them back once the
        file is in place, so ``result["conductors"]`` is at hand as for the other layers. False reads them
        from the file only when first asked for (the file must then still exist), which keeps a long line's
        stations out of memory.

    Returns
    -------
    RunResult
        ``result.layers[name]`` is a GeoDataFrame (or DataFrame for tables).
    """
    project = load_project(project_path, output=out)
    removed = check_destination(project)
    return run_project(project, engine_factory(project, workers, scheduler), progress, on_section,
                       removed, read_back)


def run_batch(project_paths, workers=1, scheduler=None, progress=None, on_section=None, on_result=None) -> list:
    """Run several project files through one engine (one worker pool or one cluster), each to its own output.

    Every project file is read and checked, and the outputs are checked to be distinct and writable, before
    any of them runs. ``workers`` and ``scheduler`` are as in :func:`run`; with ``workers`` None the first
    project's ``[engine]`` table decides. ``on_result(result)`` is called as each project finishes.

    Raises
    ------
    InputError
        With every problem of every project file, before anything runs.
    """
    projects = load_batch(project_paths)
    factory = engine_factory(projects[0], workers, scheduler)
    factory.prepare()
    engine = factory(None)
    results = []
    try:
        for project in projects:
            results.append(run_project(project, engine, progress, on_section))
            if on_result:
                on_result(results[-1])
    finally:
        engine.close()
    return results


def load_batch(project_paths) -> list[Project]:
    """Read and check every project of a batch; one error listing every problem of every file."""
    projects, problems = [], []
    for path in project_paths:
        try:
            project = load_project(path)
            check_destination(project)
            projects.append(project)
        except InputError as exc:
            problems.extend(exc.problems)
        except OutputError as exc:
            problems.append(f"project file {path}: {exc}")
    outputs: dict[Path, Path] = {}
    for project in projects:
        other = outputs.setdefault(project.output_path.resolve(), project.path)
        if other != project.path:
            problems.append(f"project file {project.path}: output {project.output_path} is also the output of "
                            f"{other}; give each project its own [output] path")
    inputs = {p.resolve(): project.path for project in projects for p in project.input_paths().values()}
    problems += [f"project file {project.path}: output {project.output_path} is an input of {inputs[out]}"
                 for project in projects if (out := project.output_path.resolve()) in inputs]
    if not project_paths:
        problems.append("no project file given")
    if problems:
        raise ProjectError(problems)
    return projects


def run_project(project: Project, engine, progress=None, on_section=None, removed=(),
                read_back=True) -> RunResult:
    """Run a loaded project's chain on ``engine`` (an engine, or a function of the section count making one).

    ``removed``: stale temporary files of killed runs that :func:`check_destination` removed (noted in run_info).
    ``read_back`` as in :func:`run`.
    """
    ctx = RunContext()
    if removed:
        ctx.notes["removed_stale_temporaries"] = [str(p) for p in removed]
    data = _run_closing_terrain(assemble_chain(project.pipeline_stages), project, ctx, progress, engine, on_section)
    layers = WrittenLayers({name: frame for name, (frame, _) in data.get("layers", {}).items()},
                           data.get("geopackage"))
    if read_back:
        layers.read_all()
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


def engine_factory(project: Project, workers=1, scheduler=None):
    """A function of the number of sections giving the run's engine; checks the choice at once.

    ``scheduler`` wins, then ``workers``; with ``workers`` None the project's ``[engine]`` table decides.
    """
    from routesag.engine import EngineChoice, check_scheduler, check_workers

    where = "--scheduler"
    if not scheduler and workers is None:
        engine = project.settings.get("engine", {})
        scheduler, workers = engine.get("scheduler") or None, engine.get("workers", 0)
        where = f"{project.path}: [engine] scheduler"
    if scheduler:
        check_scheduler(scheduler, where)
    else:
        check_workers(workers)
    return EngineChoice(workers, scheduler)


def _run_closing_terrain(chain, project, ctx, progress, engine=None, on_section=None) -> dict:
    """Run a chain from the project; the terrain reader is closed however the run ends."""
    data = {"project": project}
    if hasattr(engine, "prepare"):  # worker processes start before the line-level phase, not after it
        engine.prepare()
    try:
        run_chain(chain, data, ctx, progress=progress, engine=engine, on_section=on_section)
    finally:
        # the terrain reader, an output stream that was not committed (its temporary file goes), and worker
        # processes prepared for sections that never ran
        for name in ("terrain", "output_stream"):
            if hasattr(data.get(name), "close"):
                data[name].close()
        if hasattr(engine, "discard_prepared"):
            engine.discard_prepared()
    return data


class WrittenLayers(dict):
    """The run's layers by name; a layer written while the sections ran (held as None) is read back from the
    GeoPackage the first time it is asked for, so a long line's conductors never sit in memory whole."""

    def __init__(self, layers: dict, path):
        super().__init__(layers)
        self._path = path
        self._attributes: dict = {}

    def __getitem__(self, name):
        frame = super().__getitem__(name)
        if frame is None and self._path is not None:
            from routesag.io.gpkg import read_layer

            frame = read_layer(self._path, name)
            self[name] = frame
        return frame

    def attributes(self, name):
        """A layer's attribute table: the frame in memory if there is one, else the file's columns without the
        geometries (read once), so a summary of a streamed layer does not load its stations."""
        frame = super().__getitem__(name)
        if frame is not None or self._path is None:
            return frame
        if name not in self._attributes:
            from routesag.io.gpkg import read_attributes

            self._attributes[name] = read_attributes(self._path, name)
        return self._attributes[name]

    def read_all(self) -> None:
        """Read every layer still held only in the file."""
        for name in self:
            self[name]

    def get(self, name, default=None):
        return self[name] if name in self else default

    def items(self):
        return [(name, self[name]) for name in self]

    def values(self):
        return [self[name] for name in self]


def check_destination(project: Project) -> list[Path]:
    """Refuse an output over an input file or into a missing folder, before any work is done.

    Returns the temporary files of killed earlier runs that were removed beside the output.
    """
    out = project.output_path
    check_output_target(out, protect=project.input_paths().values())
    inputs = {p.resolve() for p in project.input_paths().values()}
    if out.resolve() in inputs or any(_is_hard_link(out, p) for p in inputs):
        raise OutputError(f"output {out} is one of the input files; choose another output path")
    if not out.parent.is_dir():
        raise OutputError(f"output folder {out.parent} does not exist")
    if out.is_dir():
        raise OutputError(f"output {out} is a folder; give a .gpkg file path")
    check_extension(out)
    removed = remove_stale_temporaries(out)
    for stale in removed:
        log.warning("removed %s, a temporary file left by an earlier run that was killed", stale)
    return removed


def _is_hard_link(a: Path, b: Path) -> bool:
    try:
        return a.exists() and b.exists() and a.samefile(b)
    except OSError:
        return False
