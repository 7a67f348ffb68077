"""The sections layer and run_info say which change-of-state method ran and on which ruling span."""
import json

import routesag


def test_sections_and_run_info_carry_method_and_ruling_span(survey):
    layers = routesag.run(survey)
    sections = layers["sections"]
    assert set(sections["stringing_method"]) == {"section"}  # the default method
    assert (sections["ruling_span_m"] > 0).all()
    assert {"knee_point_initial_c", "knee_point_final_c"} <= set(sections.columns)
    assert sections["knee_point_final_c"].isna().all()   # the survey's conductor is linear
    info = layers["run_info"].set_index("key")["value"]
    ruling = json.loads(info["note.ruling_span_m"])
    assert ruling == {str(r.section_id): round(r.ruling_span_m, 3)
                      for r in sections.drop_duplicates("section_id").itertuples()}
    assert set(json.loads(info["note.stringing_method"]).values()) == {"section"}
    # the survey's conductor is given without core data: model = "auto" takes the linear composite
    assert set(sections["conductor_model"]) == {"linear"}
    assert set(json.loads(info["note.conductor_model"]).values()) == {"linear"}
