"""Stage registry, chain assembly and ordering."""
import pytest

from routesag.errors import PipelineError
from routesag.pipeline import (DEFAULT_CHAIN, BrokenStage, Stage, assemble_chain, available_stages,
                               order_stages)


class Fake(Stage):
    def __init__(self, name, requires=(), provides=()):
        self.name, self.requires, self.provides = name, tuple(requires), tuple(provides)


def test_every_builtin_stage_is_registered():
    stages = available_stages()
    for name in DEFAULT_CHAIN:
        assert name in stages
        assert not isinstance(stages[name], BrokenStage), stages[name].description


def test_default_chain_is_valid_and_ordered():
    chain = assemble_chain()
    have = {"project"}
    for stage in chain:
        assert set(stage.requires) <= have, stage.name
        have |= set(stage.provides)
    assert "geopackage" in have


def test_order_is_by_requirements_not_list_order():
    a, b, c = Fake("a", ["project"], ["x"]), Fake("b", ["x"], ["y"]), Fake("c", ["y"], ["z"])
    assert [s.name for s in order_stages([c, b, a])] == ["a", "b", "c"]


def test_missing_provider_is_reported():
    with pytest.raises(PipelineError, match="'b' requires 'nothing'"):
        order_stages([Fake("b", ["nothing"], ["y"])])


def test_two_providers_clash():
    with pytest.raises(PipelineError, match="provided by both 'a' and 'b'"):
        order_stages([Fake("a", ["project"], ["x"]), Fake("b", ["project"], ["x"])])


def test_cycle_is_reported():
    with pytest.raises(PipelineError, match="cycle"):
        order_stages([Fake("a", ["y"], ["x"]), Fake("b", ["x"], ["y"])])


def test_extra_stage_replaces_builtin_with_same_output():
    registry = available_stages()
    registry["my_clearance"] = Fake("my_clearance", ["project", "conductors", "ground"],
                                    ["clearance", "violations"])
    names = [s.name for s in assemble_chain(["my_clearance"], registry)]
    assert "my_clearance" in names and "check_clearance" not in names


def test_extra_stage_adds_to_chain():
    registry = available_stages()
    registry["extra"] = Fake("extra", ["layers"], ["report"])
    names = [s.name for s in assemble_chain(["extra"], registry)]
    assert names.index("extra") > names.index("assemble_layers")
    assert len(names) == len(DEFAULT_CHAIN) + 1


def test_unknown_stage_lists_registered():
    with pytest.raises(PipelineError, match="unknown stage.*'nope'.*registered: .*read_inputs"):
        assemble_chain(["nope"])


def test_broken_stage_fails_only_when_used():
    broken = BrokenStage("bad", ImportError("no module named foo"))
    assert "failed to load" in broken.description
    with pytest.raises(PipelineError, match="no module named foo"):
        broken.run({}, None)


class Logged(Stage):
    """A stage that records when it ran (in ``log``) and provides its datasets."""

    def __init__(self, name, requires, provides, log, per_section=False, beside=False):
        self.name, self.requires, self.provides, self.log = name, tuple(requires), tuple(provides), log
        self.per_section, self.beside_sections = per_section, beside

    def run(self, data, ctx):
        self.log.append(self.name)
        return {d: [len(self.log)] for d in self.provides}


def beside_chain(log, table_needed_by_section=False):
    import pandas as pd

    sections = Logged("sections", ["project"], ["sections", "spans"], log)
    sections.run = lambda data, ctx: (log.append("sections"),
                                      {"sections": pd.DataFrame({"section_id": ["S1", "S2"]}),
                                       "spans": pd.DataFrame({"section_id": ["S1", "S2"]})})[1]
    return [sections,
            Logged("table", ["sections"], ["table"], log, beside=True),
            Logged("heavy", ["sections"] + (["table"] if table_needed_by_section else []), ["rows"], log,
                   per_section=True),
            Logged("finish", ["rows", "table"], ["done"], log)]


def test_a_stage_beside_the_sections_runs_as_the_first_section_arrives():
    from routesag.pipeline import RunContext, beside_sections, run_chain, split_phases

    log = []
    chain = beside_chain(log)
    assert [s.name for s in beside_sections(split_phases(chain))] == ["table"]
    ctx = RunContext()
    ctx.section_sinks.append(lambda result: (log.append("sink"), result)[1])
    data = run_chain(chain, {"project": None}, ctx)
    assert log == ["sections", "heavy", "table", "sink", "heavy", "sink", "finish"]
    assert data["done"] == [len(log)] and data["table"] == [3]


def test_a_stage_a_section_needs_is_never_beside_the_sections():
    from routesag.pipeline import RunContext, beside_sections, run_chain, split_phases

    log = []
    chain = beside_chain(log, table_needed_by_section=True)
    assert beside_sections(split_phases(chain)) == []
    run_chain(chain, {"project": None}, RunContext())
    assert log == ["sections", "table", "heavy", "heavy", "finish"]
