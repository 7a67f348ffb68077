"""Stage registry, chain assembly and the runner.

A stage is a class with a ``name``, the dataset names it ``requires`` and
``provides``, and a ``run(data, ctx)`` method that returns a dict of the
datasets it provides. Built-in and third-party stages are both registered in
the ``routesag.stages`` entry-point group, so a plugin package adds or replaces
a stage without touching the core.
"""
from __future__ import annotations

import logging
import time
from dataclasses import dataclass, field
from importlib.metadata import entry_points
from typing import Any, ClassVar, Mapping

from routesag.errors import PipelineError, RoutesagError

log = logging.getLogger("routesag")

ENTRY_POINT_GROUP = "routesag.stages"

# The built-in chain, in a valid order; the runner re-orders by requires/provides anyway.
DEFAULT_CHAIN = ("read_inputs", "build_spans", "check_spans", "solve_tensions", "compute_structure_loads",
                 "build_conductors", "check_sags", "sample_terrain", "read_crossings", "classify_stations",
                 "sample_surface", "check_clearance", "find_unknowns", "find_hotspots", "check_tension_limits",
                 "build_sag_table", "assemble_layers", "write_geopackage")

# Datasets present before any stage runs.
INITIAL_DATASETS = ("project",)


class Stage:
    """Base class of a pipeline stage."""

    name: ClassVar[str] = ""
    requires: ClassVar[tuple[str, ...]] = ()
    provides: ClassVar[tuple[str, ...]] = ()
    description: ClassVar[str] = ""

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

    def warn(self, message: str) -> None:
        log.warning(message)
        self.warnings.append(message)


def available_stages() -> dict[str, Stage]:
    """Every stage registered in the entry-point group, by name, instantiated.

    A stage whose import fails becomes a :class:`BrokenStage`.
    """
    stages: dict[str, Stage] = {}
    for ep in entry_points(group=ENTRY_POINT_GROUP):
        try:
            cls = ep.load()
            stage = cls()
            if not stage.name:
                stage.name = ep.name
        except Exception as exc:  # a broken plugin must never break the CLI
            stage = BrokenStage(ep.name, exc)
        stages.setdefault(ep.name, stage)
    return stages


def assemble_chain(extra: list[str] = (), registry: Mapping[str, Stage] | None = None) -> list[Stage]:
    """Build the ordered stage list: the built-in chain plus ``extra`` stages.

    An extra stage that provides a dataset a built-in stage provides replaces
    that built-in stage. The chain is ordered so every stage runs after the
    providers of what it requires. Raises PipelineError for an unknown stage,
    a dataset nobody provides, two providers of one dataset, or a cycle.
    """
    registry = available_stages() if registry is None else registry
    unknown = [n for n in list(DEFAULT_CHAIN) + list(extra) if n not in registry]
    if unknown:
        raise PipelineError(f"unknown stage(s) {', '.join(map(repr, unknown))}; "
                            f"registered: {', '.join(sorted(registry))}")
    added = [registry[n] for n in dict.fromkeys(extra)]
    replaced = {p for s in added for p in s.provides}
    chain = [registry[n] for n in DEFAULT_CHAIN
             if n not in extra and not (set(registry[n].provides) & replaced)] + added
    return order_stages(chain)


def order_stages(stages: list[Stage]) -> list[Stage]:
    """Topological order by requires/provides (stable for the given order)."""
    providers: dict[str, str] = {d: "<start>" for d in INITIAL_DATASETS}
    for stage in stages:
        for dataset in stage.provides:
            if dataset in providers:
                raise PipelineError(f"dataset {dataset!r} is provided by both {providers[dataset]!r} "
                                    f"and {stage.name!r}")
            providers[dataset] = stage.name
    missing = [f"{s.name!r} requires {d!r}" for s in stages for d in s.requires if d not in providers]
    if missing:
        raise PipelineError("no stage provides what is required: " + "; ".join(missing))
    ordered, have, pending = [], set(INITIAL_DATASETS), list(stages)
    while pending:
        ready = [s for s in pending if set(s.requires) <= have]
        if not ready:
            raise PipelineError("stages form a cycle: " + ", ".join(s.name for s in pending))
        ordered.append(ready[0])
        have.update(ready[0].provides)
        pending.remove(ready[0])
    return ordered


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


def run_chain(chain: list[Stage], data: dict[str, Any], ctx: RunContext, progress=None) -> dict[str, Any]:
    """Run stages in order; each stage's result is checked against its provides."""
    for stage in chain:
        start = time.perf_counter()
        if progress:
            progress(stage.name)
        result = stage.run(data, ctx) or {}
        missing = set(stage.provides) - set(result)
        if missing:
            raise RoutesagError(f"stage {stage.name!r} did not provide {', '.join(sorted(missing))}")
        data.update(result)
        ctx.notes.setdefault("stage_seconds", {})[stage.name] = round(time.perf_counter() - start, 3)
    return data
