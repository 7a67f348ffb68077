"""Wide string swing warns, naming the structure, wire and load case."""
import pandas as pd

from routesag.stages.structure_loads import wide_swing_warnings


def test_swing_beyond_limit_warns_by_name():
    loads = pd.DataFrame({"structure_id": ["P2", "P3", "P4"], "wire": ["a", "a", "a"],
                          "load_case": ["hot", "hot", "wind"], "swing_deg": [59.9, -78.0, float("nan")]})
    messages = wide_swing_warnings(loads, 60.0)
    assert len(messages) == 1 and "P3" in messages[0] and "hot" in messages[0] and "78.0" in messages[0]
    assert wide_swing_warnings(loads, 80.0) == []
