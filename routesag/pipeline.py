"""Stage registry, chain assembly and the runner.

A stage is a class with a ``name``, the dataset names it ``requires`` and
``provides``, and a ``run(data, ctx)`` method that returns a dict of the
datasets it provides. Built-in and third-party stages are both registered in
the ``routesag.stages`` entry-point group, so a plugin package adds or replaces
a stage without touching the core.

A stage with ``per_section = True`` runs once per tension section, on that
section's share of the line-level datasets (see :func:`section_inputs`); the
runner splits the chain into a line-level start, the section phase (run in
process, in worker processes or on a dask cluster by an engine) and a
line-level finish, whose stages receive the section results merged in
section order (:func:`merge_results`).
"""
from __future__ import annotations

import logging
import threading
import time
from dataclasses import dataclass, field
from importlib.metadata import entry_points
from typing import Any, Callable, ClassVar, Mapping

import pandas as pd

from routesag.contracts import check_outputs
from routesag.errors import PipelineError, RoutesagError

log = logging.getLogger("routesag")

ENTRY_POINT_GROUP = "routesag.stages"

# The built-in chain, in a valid order; the runner re-orders by requires/provides anyway.
DEFAULT_CHAIN = ("read_inputs", "build_spans", "check_spans", "solve_tensions", "compute_structure_loads",
                 "build_conductors", "check_sags", "sample_terrain", "read_crossings", "classify_stations",
                 "sample_surface", "check_clearance", "find_unknowns", "find_hotspots", "check_tension_limits",
                 "build_sag_table", "open_output", "assemble_layers", "write_geopackage")
# The LiDAR point cloud: wire fits, the as-found state, vegetation and buildings from the points.
DEFAULT_CHAIN += ("read_point_cloud", "fit_wires", "compare_as_found", "measure_point_clearance")

# Datasets present before any stage runs.
INITIAL_DATASETS = ("project",)
# The dataset the writer provides: its stage runs after every stage that does not need it.
WRITTEN = "geopackage"
# The dataset that defines the tension sections (one row each, with section_id, line_id, from_id, to_id).
SECTIONS = "sections"


class Stage:
    """Base class of a pipeline stage."""

    name: ClassVar[str] = ""
    requires: ClassVar[tuple[str, ...]] = ()
    provides: ClassVar[tuple[str, ...]] = ()
    description: ClassVar[str] = ""
    #: Run once per tension section (the heavy phase) instead of once per run.
    per_section: ClassVar[bool] = False
    #: Datasets of this stage written as extra output layers: dataset name -> geometry type (None: a table).
    output_layers: ClassVar[Mapping[str, str | None]] = {}
    #: A line-level start stage that may run while the sections run (after the first one's results arrive),
    #: as long as no section stage and no other start stage needs what it provides (see :func:`run_chain`).
    beside_sections: ClassVar[bool] = False

    def run(self, data: Mapping[str, Any], ctx: "RunContext") -> dict[str, Any]:
        raise NotImplementedError


class BrokenStage(Stage):
    """Placeholder for a registered stage that failed to import.

    Listing stages shows the error; using the stage raises it.
    """

    def __init__(self, name: str, error: BaseException):
        self.name = name
        self.error = error
        self.description = f"failed to load: {type(error).__name__}: {error}"

    def run(self, data, ctx):
        raise PipelineError(f"stage {self.name!r} cannot be used: it {self.description}")


@dataclass
class RunContext:
    """What every stage may read besides the datasets: notes for the run report."""

    notes: dict[str, Any] = field(default_factory=dict)
    warnings: list[str] = field(default_factory=list)
    #: Extra output layers contributed by stages (dataset name -> geometry type), in chain order.
    output_layers: dict[str, str | None] = field(default_factory=dict)
    #: Input role -> (path, SHA-256, file signature), taken when the inputs were read (io.hashing.fingerprint).
    inputs: dict[str, tuple] = field(default_factory=dict)
    #: Functions the main process passes each finished section's results through, in order (output streams).
    section_sinks: list[Callable[[dict], dict]] = field(default_factory=list)
    #: Functions of a section id giving a picklable function that reshapes that section's results where the
    #: section ran, before they travel (an output stream turns profiles into rows there).
    section_shapers: list[Callable[[str], Callable[[dict], dict]]] = field(default_factory=list)

    def warn(self, message: str) -> None:
        if message in self.warnings:  # sections repeat line-wide warnings
            return
        log.warning(message, extra={"run_warning": True})  # the CLI summary lists it: see cli/logs.py
        self.warnings.append(message)

    def absorb(self, other: "RunContext") -> None:
        """Take a section's notes and warnings: counts (int notes) add up, other notes keep the first value."""
        for key, value in other.notes.items():
            if key == "stage_seconds":
                mine = self.notes.setdefault("section_stage_seconds", {})
                for name, seconds in value.items():
                    mine[name] = round(mine.get(name, 0.0) + seconds, 3)
            elif key == "section_seconds":
                self.notes.setdefault(key, {}).update(value)
            elif isinstance(value, int) and not isinstance(value, bool) and isinstance(self.notes.get(key), int):
                self.notes[key] += value
            else:
                self.notes.setdefault(key, value)
        for message in other.warnings:
            if message not in self.warnings:
                self.warnings.append(message)


#: The distribution whose stages are the built-in ones; their names are reserved.
BUILTIN_DISTRIBUTION = "routesag"


class Registry(dict):
    """Stages by name, plus every provider by ``distribution:name`` and the names several distributions claim."""

    def __init__(self):
        super().__init__()
        self.qualified: dict[str, Stage] = {}
        self.clashes: dict[str, list[str]] = {}


def _distribution(ep, names: dict | None = None) -> str:
    """The normalised name of the distribution registering ``ep``; ``names`` memoises it by distribution, as
    reading a name parses the distribution's whole metadata file and one distribution registers many stages."""
    dist = getattr(ep, "dist", None)
    if names is not None and dist is not None and id(dist) in names:
        return names[id(dist)]
    name = getattr(dist, "name", None) or (ep.value.split(".")[0] if ep.value else "?")
    name = name.lower().replace("_", "-")
    if names is not None and dist is not None:
        names[id(dist)] = name
    return name


def available_stages() -> Registry:
    """Every stage registered in the entry-point group, by name, instantiated; ``stage.distribution`` says whose.

    A stage whose import fails becomes a :class:`BrokenStage`. A built-in name always means routesag's own
    stage; another distribution registering it (or two plugins sharing a name) is recorded in ``clashes``
    and refused by :func:`assemble_chain` unless the project names the provider as ``distribution:name``.
    """
    stages = Registry()
    eps = entry_points(group=ENTRY_POINT_GROUP)
    names: dict[int, str] = {}  # by id() of distributions that eps keeps alive
    for ep in eps:
        try:
            cls = ep.load()
            stage = cls()
            if not stage.name:
                stage.name = ep.name
        except Exception as exc:  # a broken plugin must never break the CLI
            stage = BrokenStage(ep.name, exc)
        dist = _distribution(ep, names)
        try:
            stage.distribution = dist
        except AttributeError:
            pass
        stages.qualified[f"{dist}:{ep.name}"] = stage
        builtin_name = ep.name in DEFAULT_CHAIN
        if ep.name in stages:
            owner = getattr(stages[ep.name], "distribution", "")
            if builtin_name and dist == BUILTIN_DISTRIBUTION and owner != BUILTIN_DISTRIBUTION:
                stages.clashes.setdefault(ep.name, []).append(owner)
                stages[ep.name] = stage
            elif dist != owner:
                stages.clashes.setdefault(ep.name, []).append(dist)
            continue
        stages[ep.name] = stage
    return stages


def _resolve(extra, registry) -> tuple[list[Stage], set[str]]:
    """The extra stages, ``distribution:name`` picking one provider; and the bare names so chosen."""
    qualified = getattr(registry, "qualified", {})
    unknown = [n for n in extra if n not in registry and n not in qualified]
    if unknown:
        raise PipelineError(f"unknown stage(s) {', '.join(map(repr, unknown))}; "
                            f"registered: {', '.join(sorted(registry))}")
    chosen = {n.split(":", 1)[1] for n in extra if ":" in n and n in qualified}
    return [qualified.get(n) or registry[n] for n in dict.fromkeys(extra)], chosen


def _refuse_clashes(registry, extra, chosen) -> None:
    for name, others in getattr(registry, "clashes", {}).items():
        if name in chosen:
            continue
        used = name in DEFAULT_CHAIN or name in extra
        if not used:
            continue
        owner = getattr(registry[name], "distribution", "?")
        claimants = sorted({owner, *others})
        raise PipelineError(
            f"stage name {name!r} is registered by several distributions ({', '.join(claimants)})"
            + (f"; it is a built-in name, reserved for {BUILTIN_DISTRIBUTION}" if name in DEFAULT_CHAIN else "")
            + f". Name the one to use in [pipeline] stages, e.g. stages = [\"{claimants[-1]}:{name}\"], "
              "or uninstall the other package")


def assemble_chain(extra: list[str] = (), registry: Mapping[str, Stage] | None = None) -> list[Stage]:
    """Build the ordered stage list: the built-in chain plus ``extra`` stages.

    An extra stage that provides a dataset a built-in stage provides replaces
    that built-in stage; ``distribution:name`` picks one distribution's stage
    (needed when several register the name). The chain is ordered so every
    stage runs after the providers of what it requires. Raises PipelineError
    for an unknown stage, a name several distributions claim, a dataset
    nobody provides, two providers of one dataset, or a cycle.
    """
    registry = available_stages() if registry is None else registry
    missing_builtin = [n for n in DEFAULT_CHAIN if n not in registry]
    if missing_builtin:
        raise PipelineError(f"unknown stage(s) {', '.join(map(repr, missing_builtin))}; "
                            f"registered: {', '.join(sorted(registry))}")
    added, chosen = _resolve(list(extra), registry)
    _refuse_clashes(registry, list(extra), chosen)
    replaced = {p for s in added for p in s.provides}
    chain = [registry[n] for n in DEFAULT_CHAIN
             if n not in extra and n not in chosen and not (set(registry[n].provides) & replaced)] + added
    return order_stages(chain)


def effective_requires(stage: Stage, stages: list[Stage]) -> tuple[str, ...]:
    """What a stage needs before it runs: its ``requires`` and, for the provider of ``layers``, every
    extra output layer contributed by the other stages."""
    if "layers" not in stage.provides:
        return tuple(stage.requires)
    extra = [d for s in stages if s is not stage for d in s.output_layers]
    return tuple(dict.fromkeys(list(stage.requires) + extra))


def order_stages(stages: list[Stage]) -> list[Stage]:
    """Topological order by requires/provides (stable for the given order)."""
    providers: dict[str, str] = {d: "<start>" for d in INITIAL_DATASETS}
    for stage in stages:
        for dataset in stage.provides:
            if dataset in providers:
                raise PipelineError(f"dataset {dataset!r} is provided by both {providers[dataset]!r} "
                                    f"and {stage.name!r}")
            providers[dataset] = stage.name
    requires = {s.name: effective_requires(s, stages) for s in stages}
    missing = [f"{s.name!r} requires {d!r}" for s in stages for d in requires[s.name] if d not in providers]
    if missing:
        raise PipelineError("no stage provides what is required: " + "; ".join(missing))
    ordered, have, pending = [], set(INITIAL_DATASETS), list(stages)
    while pending:
        ready = [s for s in pending if set(requires[s.name]) <= have]
        if not ready:
            raise PipelineError("stages form a cycle: " + ", ".join(s.name for s in pending))
        ordered.append(ready[0])
        have.update(ready[0].provides)
        pending.remove(ready[0])
    return writer_last(ordered, requires)


def writer_last(ordered: list[Stage], requires: Mapping[str, tuple[str, ...]]) -> list[Stage]:
    """The same order with the writer (provider of :data:`WRITTEN`), and whatever needs what it wrote, at the end.

    A stage that nothing requires would otherwise run after the writer: its failure would come after the
    earlier output was replaced, and its notes and warnings would miss run_info.
    """
    late: set[str] = {s.name for s in ordered if WRITTEN in s.provides}
    made = {d for s in ordered if s.name in late for d in s.provides}
    grew = True
    while grew:
        grew = False
        for stage in ordered:
            if stage.name not in late and set(requires[stage.name]) & made:
                late.add(stage.name)
                made |= set(stage.provides)
                grew = True
    return [s for s in ordered if s.name not in late] + [s for s in ordered if s.name in late]


def stages_for(chain: list[Stage], targets) -> list[Stage]:
    """The part of an ordered chain needed to provide ``targets``, in chain order."""
    providers = {d: s for s in chain for d in s.provides}
    missing = [t for t in targets if t not in providers]
    if missing:
        raise PipelineError(f"no stage provides {', '.join(map(repr, missing))}")
    needed, pending = set(), list(targets)
    while pending:
        stage = providers.get(pending.pop())
        if stage is not None and stage.name not in needed:
            needed.add(stage.name)
            pending.extend(stage.requires)
    return [s for s in chain if s.name in needed]


@dataclass
class Phases:
    """A chain cut in three: line-level start, per-section stages, line-level finish (each in chain order)."""

    start: list[Stage]
    section: list[Stage]
    finish: list[Stage]

    @property
    def section_inputs(self) -> tuple[str, ...]:
        """Datasets the section stages take from the line-level start."""
        made = {d for s in self.section for d in s.provides}
        return tuple(dict.fromkeys(d for s in self.section for d in s.requires if d not in made))

    @property
    def section_outputs(self) -> tuple[str, ...]:
        """Section datasets the finish (or the run's caller) needs: everything the finish requires, the extra
        output layers, and every section dataset when nothing follows."""
        made = [d for s in self.section for d in s.provides]
        if not self.finish:
            return tuple(made)
        wanted = {d for s in self.finish for d in effective_requires(s, self.finish + self.section)}
        wanted |= {d for s in self.section for d in s.output_layers}
        return tuple(d for d in made if d in wanted)


def beside_sections(phases: Phases) -> list[Stage]:
    """The start stages that may run while the sections run: those declaring ``beside_sections`` whose
    datasets no section stage and no start stage that runs before the sections needs."""
    beside = [s for s in phases.start if s.beside_sections]
    while True:
        before = [s for s in phases.start if s not in beside]
        needed = set(phases.section_inputs) | {d for s in before + phases.section
                                                for d in effective_requires(s, phases.start)}
        kept = [s for s in beside if not set(s.provides) & needed]
        if kept == beside:
            return beside
        beside = kept


def split_phases(chain: list[Stage]) -> Phases:
    """Cut an ordered chain into :class:`Phases`.

    A line-level stage belongs to the finish when it needs, directly or
    through another finish stage, what a section stage provides; otherwise to
    the start. Raises PipelineError when a section stage needs a finish dataset.
    """
    downstream = {d for s in chain if s.per_section for d in s.provides}
    section_needs = {d for s in chain if s.per_section for d in s.requires}
    start, section, finish = [], [], []
    for stage in chain:
        # A line-level stage that sits between section stages (a plugin replacing one) runs per section too.
        between = set(effective_requires(stage, chain)) & downstream and set(stage.provides) & section_needs
        if stage.per_section or between:
            section.append(stage)
            downstream |= set(stage.provides)
        elif set(effective_requires(stage, chain)) & downstream:
            finish.append(stage)
            downstream |= set(stage.provides)
        else:
            start.append(stage)
    late = {d for s in finish for d in s.provides}
    clash = [f"{s.name!r} needs {d!r}" for s in section for d in s.requires if d in late]
    if clash:
        raise PipelineError("a per-section stage needs a line-level result made after the sections: "
                            + "; ".join(clash))
    return Phases(start, section, finish)


def run_stages(stages: list[Stage], data: dict[str, Any], ctx: RunContext, progress=None,
               where: str = "") -> dict[str, Any]:
    """Run stages in order; each stage's result is checked against its provides."""
    for stage in stages:
        start = time.perf_counter()
        if progress:
            progress(stage.name)
        result = stage.run(data, ctx) or {}
        missing = set(stage.provides) - set(result)
        if missing:
            raise RoutesagError(f"stage {stage.name!r} did not provide {', '.join(sorted(missing))}")
        check_outputs(stage.name, result, data)
        data.update(result)
        for name, geometry in stage.output_layers.items():
            ctx.output_layers.setdefault(name, geometry)
        seconds = time.perf_counter() - start
        ctx.notes.setdefault("stage_seconds", {})[stage.name] = round(seconds, 3)
        if not stage.per_section:
            log.info("stage %s%s: %.2f s", stage.name, where, seconds)
    return data


def run_chain(chain: list[Stage], data: dict[str, Any], ctx: RunContext, progress=None, engine=None,
              on_section: Callable[[str, int, int], None] | None = None) -> dict[str, Any]:
    """Run a chain: the line-level start, every tension section (through ``engine``), then the finish.

    ``engine`` maps section tasks (default: in this process, see
    :mod:`routesag.engine`); it may also be a function of the number of
    sections that makes the engine, which is then closed after the sections.
    ``on_section(section_id, done, total)`` is called as each section's
    results arrive, and once with ``done`` 0 (and no id) before the first.
    """
    phases = split_phases(chain)
    beside = beside_sections(phases) if phases.section else []
    run_stages([s for s in phases.start if s not in beside], data, ctx, progress)
    closing: list[threading.Thread] = []
    try:
        if phases.section:
            if progress:
                for stage in phases.section:
                    progress(stage.name)
            data.update(run_sections(phases, data, ctx, engine, on_section,
                                     beside=lambda: run_stages(beside, data, ctx, progress), closing=closing))
        for name, geometry in ((n, g) for s in phases.section for n, g in s.output_layers.items()):
            ctx.output_layers.setdefault(name, geometry)
        return run_stages(phases.finish, data, ctx, progress)
    finally:
        for closer in closing:  # the run ends with its worker processes gone
            closer.join()


@dataclass
class SectionTask:
    """Everything one tension section needs, picklable (rasters travel as references, see engine)."""

    section_id: str
    stages: list[Stage]
    inputs: dict[str, Any]
    outputs: tuple[str, ...]
    #: Applied in order to the outputs where the section ran (see ``RunContext.section_shapers``).
    shapers: tuple[Callable[[dict], dict], ...] = ()


def run_section(task: SectionTask, open_rasters: Callable[[dict], dict] = lambda d: d) -> tuple[dict, RunContext]:
    """Run the section stages on one section's inputs; returns the wanted outputs (through the task's shapers)
    and the section's context."""
    ctx = RunContext()
    data = open_rasters(dict(task.inputs))
    start = time.perf_counter()
    run_stages(task.stages, data, ctx)
    outputs = {name: data[name] for name in task.outputs}
    for shape in task.shapers:
        outputs = shape(outputs)
    ctx.notes.setdefault("section_seconds", {})[task.section_id] = round(time.perf_counter() - start, 3)
    return outputs, ctx


def section_tasks(phases: Phases, data: Mapping[str, Any], shapers=()):
    """One :class:`SectionTask` per row of ``sections``, in order, each with its share of the inputs and, from
    each of ``shapers`` (functions of the section id), what reshapes its outputs."""
    if SECTIONS not in data:
        raise PipelineError(f"per-section stages need the {SECTIONS!r} dataset")
    sections = data[SECTIONS]
    shares = {name: split_by_section(data[name], data) for name in phases.section_inputs}
    for section_id in sections["section_id"]:
        inputs = {name: share(section_id) for name, share in shares.items()}
        yield SectionTask(str(section_id), phases.section, inputs, phases.section_outputs,
                          tuple(make(str(section_id)) for make in shapers))


def split_by_section(value, data: Mapping[str, Any]) -> Callable[[str], Any]:
    """A function section_id -> the section's share of a line-level dataset.

    Frames with a ``section_id`` column keep that section's rows; frames keyed
    by structure (``line_id``, ``structure_id``) keep the rows of the section's
    structures, including both ends. Anything else is shared whole.
    """
    if not isinstance(value, pd.DataFrame) or "spans" not in data:
        return lambda section_id: value
    if "section_id" in value.columns:
        groups = {k: g for k, g in value.groupby("section_id", sort=False)}
    elif {"line_id", "structure_id"} <= set(value.columns):
        spans = data["spans"]
        ends = pd.concat([spans[["line_id", "from_id", "section_id"]].rename(columns={"from_id": "structure_id"}),
                          spans[["line_id", "to_id", "section_id"]].rename(columns={"to_id": "structure_id"})])
        ends = ends.drop_duplicates().astype({"line_id": str, "structure_id": str})
        keyed = value.assign(_line=value["line_id"].astype(str), _structure=value["structure_id"].astype(str))
        keyed = keyed.reset_index(drop=True).reset_index(names="_row")
        joined = keyed.merge(ends.rename(columns={"line_id": "_line", "structure_id": "_structure",
                                                  "section_id": "_section"}), on=["_line", "_structure"])
        groups = {k: value.iloc[g.sort_values("_row")["_row"].to_numpy()]
                  for k, g in joined.groupby("_section", sort=False)}
    else:
        return lambda section_id: value
    empty = value.iloc[:0]
    return lambda section_id: groups.get(section_id, empty)


def run_sections(phases: Phases, data, ctx: RunContext, engine=None, on_section=None,
                 beside: Callable[[], Any] = lambda: None, closing: list | None = None) -> dict[str, Any]:
    """Run every section through ``engine`` and merge the results in section order.

    ``beside()`` runs once, as the first section's results arrive (before they reach the sinks), or after
    the engine when there is no section: the line-level work no section needs, done while the others run.
    ``closing``: when given, a worker pool made here that served every section is closed by a thread added
    to it (its processes exit while the finish runs; the caller joins it), not before returning.
    """
    from routesag.engine import InProcess, WorkerPool  # the engine module imports this one

    tasks = list(section_tasks(phases, data, ctx.section_shapers))
    made = engine is not None and not hasattr(engine, "map")
    engine = engine(len(tasks)) if made else (engine or InProcess())
    parts: list[dict] = []
    if on_section:
        on_section("", 0, len(tasks))
    try:
        for done, (result, section_ctx) in enumerate(engine.map(tasks), start=1):
            if done == 1:
                beside()
            for sink in ctx.section_sinks:
                result = sink(result)
            parts.append(result)
            ctx.absorb(section_ctx)
            section_id = tasks[done - 1].section_id
            log.info("section %s done (%d of %d) in %.2f s", section_id, done, len(tasks),
                     section_ctx.notes.get("section_seconds", {}).get(section_id, float("nan")))
            if on_section:
                on_section(section_id, done, len(tasks))
        if not tasks:
            beside()
        if made and closing is not None and isinstance(engine, WorkerPool):
            closing.append(threading.Thread(target=engine.close, name="routesag-pool-close", daemon=True))
            closing[-1].start()
            made = False
    finally:
        if made:
            engine.close()
    ctx.notes["engine"] = getattr(engine, "name", type(engine).__name__)
    for stage in phases.section:
        seconds = ctx.notes.get("section_stage_seconds", {}).get(stage.name, 0.0)
        log.info("stage %s (per section, %d sections, summed over workers): %.2f s", stage.name, len(tasks), seconds)
    return {name: merge_results([p[name] for p in parts]) for name in phases.section_outputs}


def merge_results(values: list) -> Any:
    """One dataset from its per-section parts, in section order.

    Profiles and lists are concatenated, frames stacked (columns in first-seen
    order), dicts joined; a section dataset of any other type cannot be merged.
    """
    from routesag.profiles import Profiles

    if not values:
        return None
    first = values[0]
    if isinstance(first, Profiles):
        return Profiles.concat(values)
    if isinstance(first, pd.DataFrame):
        filled = [v for v in values if len(v)]
        if not filled:
            return first
        return pd.concat(filled, ignore_index=True)
    if isinstance(first, list):
        return [item for v in values for item in v]
    if isinstance(first, dict):
        merged = type(first)()
        for v in values:
            merged.update(v)
        return merged
    if first is None:
        return None
    raise PipelineError(f"a per-section dataset of type {type(first).__name__} cannot be merged over sections; "
                        "return a DataFrame, list, dict or Profiles")
