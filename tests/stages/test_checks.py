"""The station count is capped per tension section, not per route: a long network is not refused."""
from pathlib import Path
from types import SimpleNamespace

import pandas as pd
import pytest

from routesag.errors import ProjectError
from routesag.stages.checks import MAX_SECTION_STATIONS, check_station_spacing


def spans_of(sections: int, spans_per_section: int, span_m: float) -> pd.DataFrame:
    return pd.DataFrame({"span_id": [f"L:{i}" for i in range(sections * spans_per_section)],
                         "section_id": [f"L:T{s}-T{s + 1}" for s in range(sections) for _ in range(spans_per_section)],
                         "span_m": span_m})


PROJECT = SimpleNamespace(path=Path("net.toml"), station_m=1.0)


def test_a_route_longer_than_ten_thousand_km_is_accepted():
    # 600 sections of 50 spans of 400 m: 12,000 km, 1.2e7 stations at 1 m, each section 20 km.
    spans = spans_of(600, 50, 400.0)
    assert spans["span_m"].sum() / PROJECT.station_m > 10 * MAX_SECTION_STATIONS
    check_station_spacing(PROJECT, spans)


def test_a_section_asking_for_too_many_stations_is_named():
    spans = pd.concat([spans_of(1, 10, 400.0), spans_of(3, 10, 400.0).iloc[10:].assign(span_m=500.0)])
    with pytest.raises(ProjectError, match=r"net\.toml: \[clearance\] station_m = 0\.001 m asks for 5e\+06 "
                                           r"stations per load case in tension section L:T1-T2 \(5000 m"):
        check_station_spacing(SimpleNamespace(path=Path("net.toml"), station_m=0.001), spans)
