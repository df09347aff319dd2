"""Exposure limits (MPE) for the eye and the skin, for one point or whole arrays of points."""
from __future__ import annotations

import math
from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any, TypedDict

import numpy as np
from numpy.typing import NDArray

from hazards import ENGINE_VERSION
from hazards.caution import CAUTION
from hazards.errors import InputError
from hazards.limits.engine import Evaluation, FloatArray, evaluate_aperture_mm, evaluate_rows
from hazards.limits.limit_set import TISSUES, LimitSet, Row, available_limit_sets, load_limit_set
from hazards.units import format_si, parse_quantity
from hazards.working import Working

DEFAULT_LIMITS = "icnirp2013"
LIMIT_SETS: tuple[str, ...] = tuple(sorted(available_limit_sets(), key=lambda name: (name != DEFAULT_LIMITS, name)))


# Exposure durations of common practice (not part of any limit set): the aversion response
# for visible light, a 10 s deliberate-stare allowance in the infrared (eye movements spread
# the image beyond that), a working day's 30 000 s for ultraviolet and deliberate long viewing.
AVERSION_S = 0.25
INFRARED_S = 10.0
LONG_VIEWING_S = 3.0e4
_VISIBLE_NM = (400.0, 700.0)


def default_exposure_duration(wavelength_m: float, *, deliberate: bool = False) -> float:
    """Exposure duration of common practice for a wavelength (s); always report it with the result."""
    wavelength_nm = _scalar_wavelength_nm(wavelength_m)
    if deliberate or wavelength_nm < _VISIBLE_NM[0]:
        return LONG_VIEWING_S
    return AVERSION_S if wavelength_nm <= _VISIBLE_NM[1] else INFRARED_S


def exposure_duration_basis(wavelength_m: float, *, deliberate: bool = False) -> str:
    """The sentence that says why default_exposure_duration chose its value."""
    wavelength_nm = _scalar_wavelength_nm(wavelength_m)
    if deliberate:
        return "default of common practice: 30000 s, deliberate long viewing"
    if wavelength_nm < _VISIBLE_NM[0]:
        return "default of common practice: 30000 s, a working day of ultraviolet exposure"
    if wavelength_nm <= _VISIBLE_NM[1]:
        return "default of common practice: 0.25 s, the aversion response to bright visible light"
    return "default of common practice: 10 s for infrared, where no aversion response protects the eye"


def _scalar_wavelength_nm(wavelength_m: float) -> float:
    value = parse_quantity(wavelength_m, field="wavelength", unit="m", minimum=0.0, inclusive_minimum=False)
    return value * 1e9


class CandidateRow(TypedDict):
    """One row that holds at a point, with its value there: the dual limits side by side."""

    row: str
    mechanism: str
    radiant_exposure_J_m2: float
    citation: str
    status: str


@dataclass(frozen=True)
class ExposureLimit:
    """Exposure limits at each point (numpy arrays; 0-d for scalar input).

    ``working`` is filled for scalar input only; for arrays use ``records()`` for a per-point
    summary with the governing row's citation. ``rows[row_index]`` is the governing row (-1:
    none holds, which happens only for the pulse rule that looks at marked rows alone).
    """

    wavelength_m: FloatArray
    duration_s: FloatArray
    source_size_rad: FloatArray
    radiant_exposure_J_m2: FloatArray
    irradiance_W_m2: FloatArray
    aperture_m: FloatArray
    field_of_view_rad: FloatArray
    governing: NDArray[np.str_]
    row_index: NDArray[np.intp]
    rows: tuple[Row, ...]
    limits: str
    tissue: str
    duration_basis: str
    notes: tuple[str, ...]
    working: Working | None
    candidate_rows: tuple[CandidateRow, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        """The JSON object of ``python -m hazards limit --json`` for a single point."""
        if self.radiant_exposure_J_m2.size != 1:
            raise ValueError("to_dict() describes one point; use records() for arrays")
        record = next(self.records())
        record["candidate_rows"] = list(self.candidate_rows)
        record["notes"] = list(self.notes)
        record["working"] = self.working.to_json() if self.working is not None else []
        return record

    def records(self) -> Iterator[dict[str, Any]]:
        """One summary object per point, in order (no working; the governing row is cited)."""
        limit_set = load_limit_set(self.limits)
        row_index = self.row_index.reshape(-1)
        for index in range(self.radiant_exposure_J_m2.size):
            row = self.rows[row_index[index]] if row_index[index] >= 0 else None
            yield {
                "wavelength_m": _item(self.wavelength_m, index),
                "duration_s": _item(self.duration_s, index),
                "duration_basis": self.duration_basis,
                "source_size_rad": _item(self.source_size_rad, index),
                "tissue": self.tissue,
                "limits": self.limits,
                "limits_title": limit_set.title,
                "limits_citation": limit_set.citation,
                "radiant_exposure_J_m2": _item(self.radiant_exposure_J_m2, index),
                "irradiance_W_m2": _item(self.irradiance_W_m2, index),
                "aperture_m": _item(self.aperture_m, index),
                "field_of_view_rad": _item(self.field_of_view_rad, index),
                "governing": str(self.governing.reshape(-1)[index]),
                "governing_row": row.id if row else None,
                "citation": row.citation if row else None,
                "status": (row.status + (f": {row.note}" if row.note else "")) if row else None,
                "caution": CAUTION,
                "engine_version": ENGINE_VERSION,
            }


def _item(array: FloatArray, index: int) -> float | None:
    value = float(array.reshape(-1)[index])
    return value if math.isfinite(value) else None


_BOUND_SLACK = 1e-9


def check_limit_set(limits: object) -> None:
    """InputError naming "limits" unless ``limits`` names a shipped limit set."""
    if limits not in LIMIT_SETS:
        raise InputError("limits", f"{limits!r} is not a known limit set: allowed {', '.join(LIMIT_SETS)}")


def check_limits_and_tissue(limits: str, tissue: str) -> LimitSet:
    check_limit_set(limits)
    if tissue not in TISSUES:
        raise InputError("tissue", f"{tissue!r} is not a tissue this engine knows: allowed {', '.join(TISSUES)}")
    return load_limit_set(limits)


def as_checked_array(value: object, *, field: str, unit: str, minimum: float, maximum: float,
                     inclusive_minimum: bool = True) -> FloatArray:
    """A float array of ``value`` (numbers in ``unit``, or a string with units), range-checked.

    The first value out of range raises InputError naming ``field``, the value and the range.
    """
    if isinstance(value, str):
        return np.asarray(parse_quantity(value, field=field, unit=unit, minimum=minimum, maximum=maximum,
                                         inclusive_minimum=inclusive_minimum), dtype=np.float64)
    try:
        array = np.asarray(value, dtype=np.float64)
    except (TypeError, ValueError):
        raise InputError(field, f"expected numbers in {unit}, got {value!r}") from None
    # A bound reached through a unit conversion (180 nm as 1.7999999999999997e-07 m) is on the bound.
    low, high = minimum - _BOUND_SLACK * abs(minimum), maximum + _BOUND_SLACK * abs(maximum)
    too_low = array < low if inclusive_minimum else array <= minimum
    bad = ~np.isfinite(array) | too_low | (array > high)
    if bad.any():
        position = int(np.flatnonzero(bad.reshape(-1))[0])
        where = "" if array.ndim == 0 else f" (element {position})"
        try:
            parse_quantity(float(array.reshape(-1)[position]), field=field, unit=unit, minimum=minimum,
                           maximum=maximum, inclusive_minimum=inclusive_minimum)
        except InputError as error:
            raise InputError(field, error.message + where) from None
    return np.clip(array, minimum, maximum) if inclusive_minimum else np.minimum(array, maximum)


def check_points(limit_set: LimitSet, wavelength_m: object, duration_s: object, source_size_rad: object,
                 *, duration_field: str = "duration") -> tuple[FloatArray, FloatArray, FloatArray]:
    wavelength = as_checked_array(wavelength_m, field="wavelength", unit="m",
                                  minimum=limit_set.wavelength_range_m[0], maximum=limit_set.wavelength_range_m[1])
    duration = as_checked_array(duration_s, field=duration_field, unit="s",
                                minimum=limit_set.duration_range_s[0], maximum=limit_set.duration_range_s[1])
    source_size = as_checked_array(source_size_rad, field="source_size", unit="rad", minimum=0.0, maximum=math.pi)
    try:
        return tuple(np.broadcast_arrays(wavelength, duration, source_size))  # type: ignore[return-value]
    except ValueError:
        raise InputError("wavelength", f"arrays of shapes {wavelength.shape}, {duration.shape} and "
                         f"{source_size.shape} (wavelength, duration, source_size) do not broadcast") from None


def exposure_limit(
    wavelength_m: object,
    duration_s: object,
    *,
    tissue: str = "eye",
    source_size_rad: object = 0.0,
    limits: str = DEFAULT_LIMITS,
    duration_basis: str = "as given",
) -> ExposureLimit:
    """Exposure limits for the eye or the skin at each (wavelength, duration, source size).

    Inputs are SI floats or arrays that broadcast together (strings with units are accepted
    for scalars). Raises InputError naming "wavelength", "duration", "source_size", "tissue"
    or "limits" for values outside the limit set's domain.
    """
    limit_set = check_limits_and_tissue(limits, tissue)
    wavelength, duration, source_size = check_points(limit_set, wavelength_m, duration_s, source_size_rad)
    return evaluate_limit(limit_set, tissue, wavelength, duration, source_size, duration_basis=duration_basis)


def evaluate_limit(limit_set: LimitSet, tissue: str, wavelength_m: FloatArray, duration_s: FloatArray,
                   source_size_rad: FloatArray, *, duration_basis: str,
                   pulse_reduction_only: bool = False) -> ExposureLimit:
    """The engine behind exposure_limit for inputs that are already checked and broadcast."""
    shape = wavelength_m.shape
    scalar = wavelength_m.ndim == 0
    flat_t = duration_s.reshape(-1)
    evaluation = evaluate_rows(limit_set, tissue, np.round(wavelength_m.reshape(-1) * 1e9, 6), flat_t,
                               source_size_rad.reshape(-1) * 1e3, pulse_reduction_only=pulse_reduction_only,
                               keep_candidates=scalar)
    found = evaluation.row_index >= 0
    if not pulse_reduction_only and not found.all():
        position = int(np.flatnonzero(~found)[0])
        raise LookupError(f"limit set {limit_set.name} has no {tissue} row for wavelength "
                          f"{wavelength_m.reshape(-1)[position]} m, duration {flat_t[position]} s")
    radiant_exposure = np.where(found, evaluation.radiant_exposure_J_m2, np.nan)
    aperture_mm, _ = evaluate_aperture_mm(limit_set, tissue, evaluation.variables)
    mechanisms = np.array([row.mechanism for row in evaluation.rows] + ["not applicable"])
    mechanism = mechanisms[np.where(found, evaluation.row_index, len(evaluation.rows))]
    field_of_view = _field_of_view_mrad(evaluation, found) * 1e-3
    working = notes = None
    if scalar and bool(found.all()):
        working, notes = _working(limit_set, tissue, evaluation, wavelength_m, duration_s, source_size_rad,
                                  duration_basis)
    return ExposureLimit(
        wavelength_m=wavelength_m, duration_s=duration_s, source_size_rad=source_size_rad,
        radiant_exposure_J_m2=radiant_exposure.reshape(shape),
        irradiance_W_m2=(radiant_exposure / flat_t).reshape(shape),
        aperture_m=(aperture_mm * 1e-3).reshape(shape),
        field_of_view_rad=field_of_view.reshape(shape),
        governing=mechanism.reshape(shape), row_index=evaluation.row_index.reshape(shape), rows=evaluation.rows,
        limits=limit_set.name, tissue=tissue, duration_basis=duration_basis,
        notes=tuple(notes or limit_set.notes), working=working,
        candidate_rows=tuple(_candidate_rows(evaluation)) if scalar else (),
    )


def _candidate_rows(evaluation: Evaluation) -> list[CandidateRow]:
    return [CandidateRow(row=candidate.row.id, mechanism=candidate.row.mechanism,
                         radiant_exposure_J_m2=float(candidate.radiant_exposure_J_m2[0]),
                         citation=candidate.row.citation,
                         status=candidate.row.status + (f": {candidate.row.note}" if candidate.row.note else ""))
            for candidate in evaluation.candidates]


def _field_of_view_mrad(evaluation: Evaluation, found: NDArray[np.bool_]) -> FloatArray:
    """The acceptance angle of the governing row where it prescribes one (photochemical), else NaN."""
    result = np.full(found.shape[0], np.nan)
    for number, row in enumerate(evaluation.rows):
        if row.field_of_view is None:
            continue
        governed = np.flatnonzero(found & (evaluation.row_index == number))
        if governed.size:
            result[governed] = evaluation.variables.subset(governed)[row.field_of_view]
    return result


# Statuses worth a note beside the figure; "read, pre-2013 value" is explained once in the
# limit set's own notes rather than beside every factor.
_CAVEATS = frozenset({"from memory", "unverified", "interpretation"})


def _cite(source: str, status: str, note: str) -> str:
    if status == "read":
        return source + (f" ({note})" if note else "")
    return f"{source} [{status}{': ' + note if note else ''}]"


def _working(limit_set: LimitSet, tissue: str, evaluation: Evaluation, wavelength_m: FloatArray,
             duration_s: FloatArray, source_size_rad: FloatArray, duration_basis: str) -> tuple[Working, list[str]]:
    working = Working()
    notes = list(limit_set.notes)
    t = float(duration_s)
    working.add("limit set", limit_set.title, limit_set.name, source=limit_set.citation)
    working.add("wavelength", "given", float(wavelength_m), "m", source="input")
    working.add("exposure duration", duration_basis, t, "s",
                source="common practice, not part of the limit set"
                if duration_basis.startswith("default of common practice") else "input")
    working.add("apparent source size alpha", "given", float(source_size_rad) * 1e3, "mrad", source="input")
    variables = evaluation.variables
    for candidate in evaluation.candidates:
        for name in sorted(candidate.row.names & set(limit_set.factors)):
            variables[name]  # computes the factor (and the factors it needs) at this point
    for name in variables.computed_factors():
        value = float(variables[name][0])
        piece_number = int(variables.piece_index[name][0])
        if piece_number < 0 or not math.isfinite(value):
            continue
        factor = limit_set.factors[name]
        piece = factor.pieces[piece_number]
        working.add(f"factor {name}", piece.value.text, value, factor.unit, _cite(piece.source, piece.status, piece.note))
        if piece.status in _CAVEATS:
            notes.append(f"{name}: {piece.status}{' - ' + piece.note if piece.note else ''}")
    for candidate in evaluation.candidates:
        row = candidate.row
        formula = f"{row.quantity} = {row.expression.text}" + (" ; H = E * t" if row.quantity == "E" else "")
        working.add(f"{tissue} limit, {row.mechanism} (row {row.id})", formula,
                    float(candidate.radiant_exposure_J_m2[0]), "J/m^2", _cite(row.citation, row.status, row.note))
        if row.status in _CAVEATS:
            notes.append(f"row {row.id}: {row.status}{' - ' + row.note if row.note else ''}")
    governing = evaluation.rows[int(evaluation.row_index[0])]
    radiant_exposure = float(evaluation.radiant_exposure_J_m2[0])
    working.add("exposure limit H (the lower of the rows above)", "H = min(candidates)", radiant_exposure,
                "J/m^2", f"{governing.citation}; where two limits apply the lower governs")
    working.add("exposure limit as irradiance over the duration", "E = H / t", radiant_exposure / t, "W/m^2",
                f"{format_si(t, 's')} exposure")
    aperture_mm, aperture_piece = evaluate_aperture_mm(limit_set, tissue, variables)
    piece = limit_set.apertures[tissue].pieces[int(aperture_piece[0])]
    working.add("limiting aperture diameter", piece.value.text, float(aperture_mm[0]), "mm",
                _cite(piece.source, piece.status, piece.note))
    if governing.field_of_view:
        working.add("field of view for the photochemical limit", governing.field_of_view,
                    float(variables[governing.field_of_view][0]), "mrad",
                    "the limit applies to the irradiance measured within this cone; taken here as the whole source within it")
    return working, list(dict.fromkeys(notes))
