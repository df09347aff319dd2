"""Exposure limits (MPE) for the eye and the skin, for one point or whole arrays of points."""
from __future__ import annotations

import math
from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import TypedDict

import numpy as np
from numpy.typing import ArrayLike, NDArray

from hazards import ENGINE_VERSION
from hazards.caution import CAUTION
from hazards.errors import InputError
from hazards.limits.engine import Evaluation, FloatArray, evaluate_aperture_mm, evaluate_rows
from hazards.limits.limit_set import TISSUES, LimitSet, Row, available_limit_sets, load_limit_set
from hazards.units import format_for_people, format_si, parse_quantity
from hazards.working import StepDict, Working

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
    return float(default_exposure_durations(_scalar_wavelength_nm(wavelength_m) * 1e-9, deliberate))


def default_exposure_durations(wavelength_m: ArrayLike, deliberate: ArrayLike) -> FloatArray:
    """default_exposure_duration for arrays of wavelengths (m) and deliberate-viewing flags."""
    # Rounded so that 700e-9 m compares as 700 nm despite binary floating point.
    nm = np.round(np.asarray(wavelength_m, dtype=np.float64) * 1e9, 6)
    long_viewing = np.asarray(deliberate, dtype=bool) | (nm < _VISIBLE_NM[0])
    return np.where(long_viewing, LONG_VIEWING_S, np.where(nm <= _VISIBLE_NM[1], AVERSION_S, INFRARED_S))


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
    aperture_m: float
    citation: str
    status: str


class ApertureRecord(TypedDict):
    radiant_exposure_J_m2: float | None
    aperture_m: float | None


class LimitRecord(TypedDict):
    """One point of an ExposureLimit: the lookup's figures, the governing row and each aperture's own lowest."""

    wavelength_m: float | None
    duration_s: float | None
    duration_basis: str
    source_size_rad: float | None
    tissue: str
    limits: str
    limits_title: str
    limits_citation: str
    radiant_exposure_J_m2: float | None
    irradiance_W_m2: float | None
    aperture_m: float | None
    field_of_view_rad: float | None
    governing: str
    governing_row: str | None
    citation: str | None
    status: str | None
    by_aperture: dict[str, ApertureRecord]
    caution: str
    engine_version: str


class LimitJson(LimitRecord):
    """The JSON of ``python -m hazards limit --json`` for one point."""

    candidate_rows: list[CandidateRow]
    notes: list[str]
    warnings: list[str]
    working: list[StepDict]


def short_duration_warning(duration_s: float, shortest_s: float) -> str:
    """What is said wherever a duration below the tables' first column is assessed at that column."""
    return (f"The {format_for_people(duration_s, 's')} duration is shorter than the "
            f"{format_for_people(shortest_s, 's')} where the limit tables start; it was assessed as "
            f"{format_for_people(shortest_s, 's')}, whose limits the tables hold "
            "down to that edge (from memory). Confirm with the LSO for few-cycle pulses.")


@dataclass(frozen=True)
class ApertureLimit:
    """The lowest limit among the rows averaged over one aperture table (NaN where none of them holds)."""

    table: str
    radiant_exposure_J_m2: FloatArray
    irradiance_W_m2: FloatArray
    aperture_m: FloatArray
    row_index: NDArray[np.intp]


@dataclass(frozen=True)
class ExposureLimit:
    """Exposure limits at each point (numpy arrays; 0-d for scalar input).

    The headline ``radiant_exposure_J_m2`` is the lowest row that holds, ``aperture_m`` the
    aperture that row is averaged over and ``rows[row_index]`` the row (-1: none holds, which
    happens only for the pulse rule that looks at marked rows alone). Where rows averaged over
    different apertures hold together (the ICNIRP 2013 cornea limit of 1250-1400 nm beside the
    retinal one), ``by_aperture`` keeps the lowest of each: which one governs depends on the
    beam, and hazards.assessment compares the exposure with each over its own aperture.
    ``short_duration`` marks points whose duration was below the tables and was assessed at
    their first column. ``working_at(i)`` explains one point; ``records()`` summarises all.
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
    by_aperture: dict[str, ApertureLimit]
    short_duration: NDArray[np.bool_]
    given_duration_s: FloatArray
    evaluation: Evaluation = field(repr=False, compare=False)

    @property
    def working(self) -> Working | None:
        """The working of a single point (None for arrays: use working_at)."""
        return self.working_at(0) if self.radiant_exposure_J_m2.size == 1 else None

    @property
    def notes(self) -> tuple[str, ...]:
        """The limit set's notes, and for a single point the caveats of every factor and row it used."""
        return self.notes_at(0) if self.radiant_exposure_J_m2.size == 1 else load_limit_set(self.limits).notes

    @property
    def candidate_rows(self) -> tuple[CandidateRow, ...]:
        return self.candidate_rows_at(0) if self.radiant_exposure_J_m2.size == 1 else ()

    def warnings_at(self, index: int) -> list[str]:
        if not bool(self.short_duration.reshape(-1)[index]):
            return []
        return [short_duration_warning(float(self.given_duration_s.reshape(-1)[index]),
                                       load_limit_set(self.limits).duration_range_s[0])]

    def working_at(self, index: int) -> Working:
        return limit_working(load_limit_set(self.limits), self, index)[0]

    def notes_at(self, index: int) -> tuple[str, ...]:
        return tuple(limit_working(load_limit_set(self.limits), self, index)[1])

    def candidate_rows_at(self, index: int) -> tuple[CandidateRow, ...]:
        return tuple(CandidateRow(row=candidate.row.id, mechanism=candidate.row.mechanism, radiant_exposure_J_m2=value,
                                  aperture_m=float(self.by_aperture[candidate.row.aperture_table(self.tissue)]
                                                   .aperture_m.reshape(-1)[index]),
                                  citation=candidate.row.citation,
                                  status=candidate.row.status + (f": {candidate.row.note}" if candidate.row.note else ""))
                     for candidate, value in self.evaluation.candidates_at(index))

    def to_dict(self) -> LimitJson:
        """The JSON object of ``python -m hazards limit --json`` for a single point."""
        if self.radiant_exposure_J_m2.size != 1:
            raise ValueError("to_dict() describes one point; use records() for arrays")
        working, notes = limit_working(load_limit_set(self.limits), self, 0)
        return LimitJson(**self.record(0), candidate_rows=list(self.candidate_rows_at(0)), notes=notes,
                         warnings=self.warnings_at(0), working=working.to_json())

    def records(self) -> Iterator[LimitRecord]:
        """One summary object per point, in order (no working; the governing row is cited)."""
        for index in range(self.radiant_exposure_J_m2.size):
            yield self.record(index)

    def record(self, index: int) -> LimitRecord:
        """The summary of one point: the lowest limit, its row and aperture, and each aperture's own lowest."""
        limit_set = load_limit_set(self.limits)
        row_number = int(self.row_index.reshape(-1)[index])
        row = self.rows[row_number] if row_number >= 0 else None
        return {
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
            "by_aperture": {table: {"radiant_exposure_J_m2": _item(limit.radiant_exposure_J_m2, index),
                                    "aperture_m": _item(limit.aperture_m, index)}
                            for table, limit in self.by_aperture.items()},
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


def check_duration(limit_set: LimitSet, value: object, *, field: str) -> tuple[FloatArray, NDArray[np.bool_], FloatArray]:
    """(durations as assessed, which were shorter than the tables, durations as given).

    A duration must be positive and at most the limit set's longest; one shorter than the
    tables' first column (100 fs) is assessed at that column, and flagged so that the result
    says so (short_duration_warning), instead of being refused: few-cycle pulses are real.
    """
    shortest, longest = limit_set.duration_range_s
    given = as_checked_array(value, field=field, unit="s", minimum=0.0, maximum=longest, inclusive_minimum=False)
    short = given < shortest * (1.0 - _BOUND_SLACK)
    return np.maximum(given, shortest), short, given


def check_points(limit_set: LimitSet, wavelength_m: object, duration_s: object, source_size_rad: object,
                 *, duration_field: str = "duration"
                 ) -> tuple[FloatArray, FloatArray, FloatArray, NDArray[np.bool_], FloatArray]:
    """Wavelength, duration, source size, short-duration flags and given durations, checked and broadcast."""
    wavelength = as_checked_array(wavelength_m, field="wavelength", unit="m",
                                  minimum=limit_set.wavelength_range_m[0], maximum=limit_set.wavelength_range_m[1])
    duration, short, given = check_duration(limit_set, duration_s, field=duration_field)
    source_size = as_checked_array(source_size_rad, field="source_size", unit="rad", minimum=0.0, maximum=math.pi)
    try:
        return tuple(np.broadcast_arrays(wavelength, duration, source_size, short, given))  # type: ignore[return-value]
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
    or "limits" for values outside the limit set's domain; a duration below the tables is
    assessed at their first column and flagged (``short_duration``, ``warnings_at``).
    """
    limit_set = check_limits_and_tissue(limits, tissue)
    wavelength, duration, source_size, short, given = check_points(limit_set, wavelength_m, duration_s,
                                                                   source_size_rad)
    return evaluate_limit(limit_set, tissue, wavelength, duration, source_size, duration_basis=duration_basis,
                          short_duration=short, given_duration_s=given)


def evaluate_limit(limit_set: LimitSet, tissue: str, wavelength_m: FloatArray, duration_s: FloatArray,
                   source_size_rad: FloatArray, *, duration_basis: str, pulse_reduction_only: bool = False,
                   short_duration: NDArray[np.bool_] | None = None,
                   given_duration_s: FloatArray | None = None) -> ExposureLimit:
    """The engine behind exposure_limit for inputs that are already checked and broadcast."""
    shape = wavelength_m.shape
    flat_t = duration_s.reshape(-1)
    evaluation = evaluate_rows(limit_set, tissue, np.round(wavelength_m.reshape(-1) * 1e9, 6), flat_t,
                               source_size_rad.reshape(-1) * 1e3, pulse_reduction_only=pulse_reduction_only,
                               keep_candidates=True)
    found = evaluation.row_index >= 0
    if not pulse_reduction_only and not found.all():
        position = int(np.flatnonzero(~found)[0])
        raise LookupError(f"limit set {limit_set.name} has no {tissue} row for wavelength "
                          f"{wavelength_m.reshape(-1)[position]} m, duration {flat_t[position]} s")
    by_aperture: dict[str, ApertureLimit] = {}
    for table, group in evaluation.groups.items():
        aperture_mm, _ = evaluate_aperture_mm(limit_set, table, evaluation.variables)
        held = group.row_index >= 0
        radiant_exposure = np.where(held, group.radiant_exposure_J_m2, np.nan)
        by_aperture[table] = ApertureLimit(table=table, radiant_exposure_J_m2=radiant_exposure.reshape(shape),
                                           irradiance_W_m2=(radiant_exposure / flat_t).reshape(shape),
                                           aperture_m=np.where(held, aperture_mm * 1e-3, np.nan).reshape(shape),
                                           row_index=group.row_index.reshape(shape))
    radiant_exposure = np.where(found, evaluation.radiant_exposure_J_m2, np.nan)
    aperture = np.full(flat_t.shape, np.nan)
    tables = [row.aperture_table(tissue) for row in evaluation.rows]
    for table, limit in by_aperture.items():
        governed = found & np.isin(evaluation.row_index, [number for number, name in enumerate(tables) if name == table])
        aperture[governed] = limit.aperture_m.reshape(-1)[governed]
    mechanisms = np.array([row.mechanism for row in evaluation.rows] + ["not applicable"])
    mechanism = mechanisms[np.where(found, evaluation.row_index, len(evaluation.rows))]
    field_of_view = _field_of_view_mrad(evaluation, found) * 1e-3
    return ExposureLimit(
        wavelength_m=wavelength_m, duration_s=duration_s, source_size_rad=source_size_rad,
        radiant_exposure_J_m2=radiant_exposure.reshape(shape),
        irradiance_W_m2=(radiant_exposure / flat_t).reshape(shape),
        aperture_m=aperture.reshape(shape),
        field_of_view_rad=field_of_view.reshape(shape),
        governing=mechanism.reshape(shape), row_index=evaluation.row_index.reshape(shape), rows=evaluation.rows,
        limits=limit_set.name, tissue=tissue, duration_basis=duration_basis, by_aperture=by_aperture,
        short_duration=np.zeros(shape, dtype=bool) if short_duration is None else short_duration,
        given_duration_s=duration_s if given_duration_s is None else given_duration_s,
        evaluation=evaluation,
    )


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


def _with_dependencies(limit_set: LimitSet, names: set[str]) -> list[str]:
    """``names`` and the factors they are computed from, each after what it needs (ties alphabetical)."""
    ordered: list[str] = []

    def visit(name: str) -> None:
        if name in ordered:
            return
        for needed in sorted(limit_set.factors[name].names & set(limit_set.factors)):
            visit(needed)
        ordered.append(name)

    for name in sorted(names):
        visit(name)
    return ordered


# Statuses worth a note beside the figure; "read, pre-2013 value" is explained once in the
# limit set's own notes rather than beside every factor.
CAVEATS = frozenset({"from memory", "unverified", "interpretation"})


def _cite(source: str, status: str, note: str) -> str:
    if status == "read":
        return source + (f" ({note})" if note else "")
    return f"{source} [{status}{': ' + note if note else ''}]"


def limit_working(limit_set: LimitSet, result: ExposureLimit, index: int) -> tuple[Working, list[str]]:
    """The working and the notes of one point, read from the evaluation every point shares."""
    evaluation, tissue = result.evaluation, result.tissue
    working = Working()
    notes = list(limit_set.notes)
    t = float(result.duration_s.reshape(-1)[index])
    working.add("limit set", limit_set.title, limit_set.name, source=limit_set.citation)
    working.add("wavelength", "given", float(result.wavelength_m.reshape(-1)[index]), "m", source="input")
    working.add("exposure duration", result.duration_basis, t, "s",
                source="common practice, not part of the limit set"
                if result.duration_basis.startswith("default of common practice") else "input")
    working.add("apparent source size alpha", "given", float(result.source_size_rad.reshape(-1)[index]) * 1e3,
                "mrad", source="input")
    variables = evaluation.variables
    candidates = evaluation.candidates_at(index)
    used = {name for candidate, _value in candidates for name in candidate.row.names & set(limit_set.factors)}
    for name in _with_dependencies(limit_set, used):
        value = float(variables[name][index])
        piece_number = int(variables.piece_index[name][index])
        if piece_number < 0 or not math.isfinite(value):
            continue
        factor = limit_set.factors[name]
        piece = factor.pieces[piece_number]
        working.add(f"factor {name}", piece.value.text, value, factor.unit, _cite(piece.source, piece.status, piece.note))
        if piece.status in CAVEATS:
            notes.append(f"{name}: {piece.status}{' - ' + piece.note if piece.note else ''}")
    for candidate, value in candidates:
        row = candidate.row
        formula = f"{row.quantity} = {row.expression.text}" + (" ; H = E * t" if row.quantity == "E" else "")
        working.add(f"{tissue} limit, {row.mechanism}", formula, value, "J/m^2", _cite(row.citation, row.status, row.note))
        if row.status in CAVEATS:
            notes.append(f"{row.citation}: {row.status}{' - ' + row.note if row.note else ''}")
    row_number = int(evaluation.row_index[index])
    if row_number < 0:
        working.add("exposure limit", "no row of this rule holds here", None, "")
        return working, list(dict.fromkeys(notes))
    governing = evaluation.rows[row_number]
    radiant_exposure = float(evaluation.radiant_exposure_J_m2[index])
    working.add("exposure limit H (the lower of the rows above)", "H = min(candidates)", radiant_exposure,
                "J/m^2", f"{governing.citation}; where two limits apply the lower governs")
    working.add("exposure limit as irradiance over the duration", "E = H / t", radiant_exposure / t, "W/m^2",
                f"{format_si(t, 's')} exposure")
    for table, limit in result.by_aperture.items():
        if int(limit.row_index.reshape(-1)[index]) < 0:
            continue
        aperture_mm, aperture_piece = evaluate_aperture_mm(limit_set, table, variables)
        piece = limit_set.apertures[table].pieces[int(aperture_piece[index])]
        working.add("limiting aperture diameter", piece.value.text, float(aperture_mm[index]), "mm", _cite(piece.source, piece.status, piece.note))
        if piece.status in CAVEATS:
            notes.append(f"aperture: {piece.status}{' - ' + piece.note if piece.note else ''}")
    if governing.field_of_view:
        working.add("field of view for the photochemical limit", governing.field_of_view,
                    float(variables[governing.field_of_view][index]), "mrad",
                    "the limit applies to the irradiance measured within this cone; taken here as the whole source within it")
    for warning in result.warnings_at(index):
        notes.append(warning)
    return working, list(dict.fromkeys(notes))
