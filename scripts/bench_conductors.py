"""Benchmark the build_conductors stage against its own terrain reads, measured in the same run.

Computes the line-level inputs of a project once, then for every tension section runs ``build_conductors`` with
a fresh terrain sampler (so its windows are read as in a run) and, separately, reads the same windows alone
(the stage's decode floor). Each is the best of ``--repeat`` runs per section, summed over the sections, which
filters the noise of a shared machine. Prints both, the compute between them and their ratio.

Usage: python scripts/bench_conductors.py /tmp/routesag-bench/km100-res1/project.toml [--repeat 3]
"""
from __future__ import annotations

import argparse
import time

from routesag.api import compute
from routesag.io.terrain import TerrainSampler
from routesag.pipeline import RunContext, split_by_section
from routesag.stages.conductors import BuildConductors

INPUTS = ("wire_spans", "tensions", "structure_loads")


def section_inputs(project_path):
    data = compute(project_path, INPUTS + ("work_crs", "sections", "spans"))
    shares = {name: split_by_section(data[name], data) for name in INPUTS}
    sections = [{name: shares[name](section_id) for name in INPUTS} for section_id in data["sections"]["section_id"]]
    return data, sections


def fresh_sampler(terrain):
    ref = terrain.reference()
    return TerrainSampler(ref.path, z_units=ref.z_units, crs=ref.crs, nodata=ref.nodata, hold_windows=ref.hold_windows)


def time_section(data, share, repeat):
    """Best stage time and best time of its window reads alone [s], and the number of windows."""
    best_stage = best_reads = float("inf")
    for _ in range(repeat):
        with fresh_sampler(data["terrain"]) as sampler:
            windows, read = [], sampler._read
            sampler._read = lambda window: windows.append(window) or read(window)
            inputs = dict(share, project=data["project"], work_crs=data["work_crs"], terrain=sampler)
            start = time.perf_counter()
            BuildConductors().run(inputs, RunContext())
            best_stage = min(best_stage, time.perf_counter() - start)
        with fresh_sampler(data["terrain"]) as sampler:
            start = time.perf_counter()
            for window in windows:
                sampler._read(window)
            best_reads = min(best_reads, time.perf_counter() - start)
    return best_stage, best_reads, len(windows)


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("project")
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    data, sections = section_inputs(args.project)
    try:
        stage = reads = 0.0
        windows = 0
        for share in sections:
            s, r, n = time_section(data, share, args.repeat)
            stage, reads, windows = stage + s, reads + r, windows + n
    finally:
        data["terrain"].close()
    print(f"{len(sections)} sections, {windows} window reads; best of {args.repeat} per section, summed:")
    print(f"build_conductors {stage:.3f} s | its window reads alone {reads:.3f} s | compute {stage - reads:.3f} s "
          f"| stage / reads {stage / reads:.2f}")


if __name__ == "__main__":
    main()
