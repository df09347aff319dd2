"""Limit sets as data: the expression language, the file format and what the files promise."""
from __future__ import annotations

import copy
from typing import Any

import numpy as np
import pytest

from hazards.errors import InputError
from hazards.limits import LIMIT_SETS, exposure_limit
from hazards.limits.exposure import evaluate_limit
from hazards.limits.expression import ExpressionError, parse_expression
from hazards.limits.limit_set import STATUSES, LimitSetError, load_limit_set, parse_interval, parse_limit_set


@pytest.mark.parametrize(("text", "values", "expected"), [
    ("18 * t^0.75 * C_E", {"t": 0.25, "C_E": 2.0}, 18 * 0.25**0.75 * 2),
    ("10^(0.002*(wavelength_nm-700))", {"wavelength_nm": 800.0}, 10**0.2),
    ("10 * 10^((alpha_mrad-1.5)/98.5)", {"alpha_mrad": 100.0}, 100.0),
    ("8 + 10^(0.04*(wavelength_nm-1250))", {"wavelength_nm": 1300.0}, 108.0),
    ("alpha_mrad^2 / alpha_min_mrad / alpha_max_mrad", {"alpha_mrad": 150.0, "alpha_min_mrad": 1.5,
                                                         "alpha_max_mrad": 100.0}, 150.0),
    ("18 * T2^-0.25 * C_E", {"T2": 16.0, "C_E": 1.0}, 9.0),
    ("10^(0.8*(wavelength_nm-295)) * 1e-15", {"wavelength_nm": 315.0}, 10.0),
    ("3e10", {}, 3e10),
])
def test_formulas_evaluate_over_arrays(text: str, values: dict[str, float], expected: float) -> None:
    expression = parse_expression(text)
    arrays = {name: np.full(3, value) for name, value in values.items()}
    assert expression.evaluate(arrays, (3,)) == pytest.approx(np.full(3, expected))
    assert expression.names == frozenset(values)


@pytest.mark.parametrize("text", ["__import__('os').system('true')", "2 ** 3", "t^x", "t +", "(t)", "t - 1",
                                  "10^(t)", "lambda: 1", "C_A; C_B"])
def test_anything_outside_the_formula_forms_is_refused(text: str) -> None:
    with pytest.raises(ExpressionError):
        parse_expression(text)


@pytest.mark.parametrize(("text", "lower", "upper", "closed"), [
    ("[400, 700]", 400.0, 700.0, (True, True)),
    ("(1.5, inf)", 1.5, float("inf"), (False, False)),
    ("[10, T2)", 10.0, "T2", (True, False)),
])
def test_intervals_read_as_written(text: str, lower: float, upper: float | str, closed: tuple[bool, bool]) -> None:
    interval = parse_interval(text)
    assert (interval.lower, interval.upper, (interval.lower_closed, interval.upper_closed)) == (lower, upper, closed)


@pytest.mark.parametrize("text", ["400-700", "[400, 700", "[400, 7-0]"])
def test_malformed_intervals_are_refused(text: str) -> None:
    with pytest.raises(LimitSetError):
        parse_interval(text)


def test_the_limit_sets_are_discovered_from_the_data_files() -> None:
    assert LIMIT_SETS == ("icnirp2013", "eu2006")


@pytest.mark.parametrize("limits", ["icnirp2013", "eu2006"])
def test_every_row_cites_its_source_and_states_its_status(limits: str) -> None:
    limit_set = load_limit_set(limits)
    prefix = {"icnirp2013": "ICNIRP 2013", "eu2006": "2006/25/EC Annex II Table 2."}[limits]
    assert len({row.id for row in limit_set.rows}) == len(limit_set.rows)
    for row in limit_set.rows:
        assert row.citation.startswith(prefix), row.id
        assert row.status in STATUSES
    for factor in [*limit_set.factors.values(), *limit_set.apertures.values()]:
        assert all(piece.source.startswith(prefix.split(" Table")[0]) for piece in factor.pieces)


def test_unverified_and_from_memory_rows_say_so_in_the_result() -> None:
    # ICNIRP 2013, 400-700 nm, 10 ps - 5 us (a 2013 change, from memory)
    record = exposure_limit(532e-9, 1e-8).to_dict()
    assert record["governing_row"] == "visible-ns"
    assert any(note.startswith(f"{record['citation']}: from memory") for note in record["notes"])
    assert "[from memory" in next(step["source"] for step in record["working"]
                                  if step["source"].startswith(record["citation"]))
    # 2006/25/EC Annex II Table 2.3 (not read in the Official Journal)
    record = exposure_limit(1064e-9, 100.0, limits="eu2006").to_dict()
    assert record["status"].startswith("unverified")


MINIMAL_SET: dict[str, Any] = {
    "limit_set": {"name": "trial", "title": "a two-row trial set", "citation": "none",
                  "wavelength_m": [1.8e-7, 1e-3], "duration_s": [1e-13, 3e4]},
    "factors": {"C_X": [{"when": {"wavelength_nm": "[0, 1e6]"}, "value": "2", "source": "trial"}],
                "T_g": [{"value": "1e-6", "source": "trial"}]},
    "apertures": {"eye": [{"value": "7", "source": "trial"}]},
    "pulse_trains": {"grouping_time": "T_g", "reduction_exponent": -0.25, "citation": "trial"},
    "rows": [
        {"id": "short", "tissues": ["eye"], "mechanism": "thermal", "quantity": "H", "expression": "5 * t^0.5 * C_X",
         "when": {"wavelength_nm": "[180, 1e6]", "t": "[1e-13, 1]"}, "citation": "trial, short"},
        {"id": "long", "tissues": ["eye"], "mechanism": "thermal", "quantity": "E", "expression": "10",
         "when": {"wavelength_nm": "[180, 1e6]", "t": "[1, 3e4]"}, "citation": "trial, long"},
    ],
}


def test_a_new_edition_is_only_data() -> None:
    limit_set = parse_limit_set(copy.deepcopy(MINIMAL_SET), origin="trial")
    result = evaluate_limit(limit_set, "eye", np.array([5e-7, 5e-7]), np.array([0.04, 100.0]), np.zeros(2),
                            duration_basis="as given")
    assert result.radiant_exposure_J_m2 == pytest.approx([5 * 0.2 * 2, 10 * 100.0])
    assert list(result.governing) == ["thermal", "thermal"]
    assert result.aperture_m == pytest.approx([7e-3, 7e-3])


@pytest.mark.parametrize(("path", "value", "message"), [
    (("rows", 0, "expression"), "5 * t^0.5 * C_Y", "unknown names ['C_Y']"),
    (("rows", 0, "quantity"), "L", "quantity must be 'H' or 'E'"),
    (("rows", 0, "tissues"), ["retina"], "tissues must be among"),
    (("rows", 0, "when"), {"wavelength_nm": "[180, 1e6]", "t": "[1, T_unknown]"}, "unknown names ['T_unknown']"),
    (("rows", 0, "when"), {"t": "[1, 10]"}, "must start with the wavelength_nm band"),
    (("factors", "C_X", 0, "status"), "guessed", "status 'guessed'"),
])
def test_a_malformed_file_is_refused_with_the_place_named(path: tuple[Any, ...], value: object, message: str) -> None:
    document = copy.deepcopy(MINIMAL_SET)
    target: Any = document
    for key in path[:-1]:
        target = target[key]
    target[path[-1]] = value
    with pytest.raises(LimitSetError, match=message.replace("[", r"\[").replace("]", r"\]")):
        parse_limit_set(document, origin="trial")


@pytest.mark.parametrize(("kwargs", "field"), [
    ({"wavelength_m": 179e-9, "duration_s": 1.0}, "wavelength"),
    ({"wavelength_m": 532e-9, "duration_s": 0.0}, "duration"),
    ({"wavelength_m": 532e-9, "duration_s": 4e4}, "duration"),
    ({"wavelength_m": 532e-9, "duration_s": 1.0, "source_size_rad": -1e-3}, "source_size"),
    ({"wavelength_m": 532e-9, "duration_s": float("nan")}, "duration"),
    ({"wavelength_m": "532 nm", "duration_s": "10 m"}, "duration"),
    ({"wavelength_m": 532e-9, "duration_s": 1.0, "tissue": "lung"}, "tissue"),
    ({"wavelength_m": 532e-9, "duration_s": 1.0, "limits": "ansi"}, "limits"),
    ({"wavelength_m": np.array([532e-9, 5e-8]), "duration_s": 1.0}, "wavelength"),
])
def test_out_of_domain_input_raises_naming_the_field(kwargs: dict[str, Any], field: str) -> None:
    with pytest.raises(InputError) as raised:
        exposure_limit(**kwargs)
    assert raised.value.field == field


def test_an_array_error_points_at_the_element_and_the_range() -> None:
    with pytest.raises(InputError, match=r"out of range: allowed from 180 nm to 1 mm \(element 1\)"):
        exposure_limit(np.array([532e-9, 5e-8]), 1.0)
