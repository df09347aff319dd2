"""The assessment of emissions: every hazard figure a safety officer needs, with its working.

- ``inputs``: the Beam and Scenario, each input's unit and bounds, and every rule tying inputs
  together (the one home of each, used by every way in);
- ``evaluate``: ``assess_many``, the whole computation over arrays of emissions;
- ``presentation``: one emission's record (the JSON of ``python -m hazards assess --json``),
  text and working, read from the arrays.

``assess(beam, scenario)`` is ``assess_many`` of one emission.
"""
from __future__ import annotations

from hazards.assessment.evaluate import Assessments, BatchInputError, assess_many
from hazards.assessment.inputs import (
    REQUEST_KEYS,
    Beam,
    FieldSpec,
    Mode,
    Scenario,
    beam_fields,
    check_beam,
    check_beam_values,
    check_scenario,
    parse_assessment_request,
    scenario_fields,
    shortest_tabulated_duration,
)
from hazards.assessment.presentation import Assessment, AssessmentDict, json_safe
from hazards.errors import InputError


def assess(beam: Beam, scenario: Scenario) -> Assessment:
    """Every hazard figure for ``beam`` under ``scenario``, with warnings and working.

    Raises InputError for an inconsistent beam or scenario, naming the field.
    """
    try:
        batch = assess_many([beam], [scenario])
    except BatchInputError as error:
        raise InputError(error.field, error.message) from None
    return Assessment(batch, 0)


__all__ = [
    "REQUEST_KEYS", "Assessment", "AssessmentDict", "Assessments", "BatchInputError", "Beam", "FieldSpec", "Mode",
    "Scenario", "assess", "assess_many", "beam_fields", "check_beam", "check_beam_values", "check_scenario",
    "json_safe", "parse_assessment_request", "scenario_fields", "shortest_tabulated_duration",
]
