"""Evaluating a limit set over arrays of points: factors, rows, the lower of the candidates.

The engine has no per-edition code. For each point it evaluates every row of the tissue whose
conditions hold and keeps the lowest radiant exposure. That one rule covers

* dual limits (thermal and photochemical, the cornea limit beside the retinal one): the lower
  governs, as both limit sets say;
* shared edges of neighbouring rows (rows are closed intervals unless written otherwise):
  the stricter value, which is what Directive 2006/25/EC Annex II footnote (a) prescribes.

Points are grouped by row with index arrays, never looped over in Python.
"""
from __future__ import annotations

from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import NDArray

from hazards.limits.limit_set import Condition, Factor, LimitSet, Row

FloatArray = NDArray[np.float64]
IndexArray = NDArray[np.intp]

# Edges are compared with a small relative tolerance so that "700 nm" read through a unit
# conversion (700.0000000000001) still counts as on the edge rather than beyond it.
_EDGE_TOLERANCE = 1e-9


class Variables(Mapping[str, FloatArray]):
    """The inputs of n points and, computed on first use, every factor of the limit set."""

    def __init__(self, limit_set: LimitSet, inputs: dict[str, FloatArray]) -> None:
        self.limit_set = limit_set
        self.size = next(iter(inputs.values())).shape[0]
        self._inputs = dict(inputs)
        self._values: dict[str, FloatArray] = dict(inputs)
        self.piece_index: dict[str, IndexArray] = {}
        # Many rows share a wavelength band: the points inside each band are found once.
        self.band_cache: dict[tuple[str, str], IndexArray] = {}

    def __getitem__(self, name: str) -> FloatArray:
        if name not in self._values:
            factor = self.limit_set.factors[name]
            self._values[name], self.piece_index[name] = evaluate_factor(factor, self)
        return self._values[name]

    def __iter__(self) -> Iterator[str]:
        return iter(self._values)

    def __len__(self) -> int:
        return len(self._values)

    def subset(self, indices: IndexArray) -> Variables:
        """The same inputs at some of the points; factors are computed afresh, for those points only."""
        return Variables(self.limit_set, {name: values[indices] for name, values in self._inputs.items()})


def evaluate_factor(factor: Factor, variables: Variables) -> tuple[FloatArray, IndexArray]:
    """The factor's value at every point (NaN where no piece holds) and which piece gave it."""
    values = np.full(variables.size, np.nan)
    piece_index = np.full(variables.size, -1, dtype=np.intp)
    unassigned: IndexArray | None = None
    for number, piece in enumerate(factor.pieces):
        if unassigned is None and not piece.conditions:
            # A factor with one value everywhere (alpha_min): no indexing needed.
            return (piece.value.evaluate({name: variables[name] for name in piece.value.names}, (variables.size,)),
                    np.full(variables.size, number, dtype=np.intp))
        chosen = select(piece.conditions, variables, unassigned)
        if chosen.size == 0:
            continue
        values[chosen] = piece.value.evaluate(_subset(variables, piece.value.names, chosen), (chosen.size,))
        piece_index[chosen] = number
        unassigned = np.flatnonzero(piece_index < 0)
        if unassigned.size == 0:
            break
    return values, piece_index


def select(conditions: tuple[Condition, ...], variables: Variables, candidates: IndexArray | None) -> IndexArray:
    """The indices among ``candidates`` (None: all points) where every condition holds."""
    chosen = candidates
    for condition in conditions:
        if chosen is None:
            key = (condition.variable, condition.interval.text)
            if key not in variables.band_cache:
                variables.band_cache[key] = np.flatnonzero(_holds(condition, variables, None))
            chosen = variables.band_cache[key]
            continue
        if chosen.size == 0:
            break
        chosen = chosen[_holds(condition, variables, chosen)]
    return np.arange(variables.size) if chosen is None else chosen


def _holds(condition: Condition, variables: Variables, chosen: IndexArray | None) -> NDArray[np.bool_]:
    interval = condition.interval
    full = variables[condition.variable]
    value = full if chosen is None else full[chosen]
    keep = np.ones(value.shape[0], dtype=bool)
    for bound, closed, is_lower in ((interval.lower, interval.lower_closed, True),
                                    (interval.upper, interval.upper_closed, False)):
        if isinstance(bound, str):
            limit: FloatArray | float = variables[bound] if chosen is None else variables[bound][chosen]
        elif np.isfinite(bound):
            limit = bound
        else:
            continue
        slack = _EDGE_TOLERANCE * np.abs(limit)
        if is_lower:
            keep &= value >= limit - slack if closed else value > limit + slack
        else:
            keep &= value <= limit + slack if closed else value < limit - slack
    return keep


def _subset(variables: Variables, names: frozenset[str], chosen: IndexArray) -> dict[str, FloatArray]:
    return {name: variables[name][chosen] for name in names}


@dataclass
class Candidate:
    """A row that holds at some points, with its radiant exposure there (for the working)."""

    row: Row
    indices: IndexArray
    radiant_exposure_J_m2: FloatArray


@dataclass
class GroupLowest:
    """The lowest radiant exposure among the rows averaged over one aperture table (inf, -1 where none holds)."""

    radiant_exposure_J_m2: FloatArray
    row_index: IndexArray


@dataclass
class Evaluation:
    """The lower-of-rows result for n points, and what produced it.

    ``groups`` keeps the lowest row per aperture table: limits averaged over different
    apertures (the retinal limit over 7 mm, a cornea limit over 3.5 mm) cannot be ranked
    without the beam, so each is kept for the caller to compare exposure against.
    """

    variables: Variables
    radiant_exposure_J_m2: FloatArray
    row_index: IndexArray
    rows: tuple[Row, ...]
    groups: dict[str, GroupLowest]
    candidates: list[Candidate] = field(default_factory=list)

    def candidates_at(self, point: int) -> list[tuple[Candidate, float]]:
        """The rows that hold at one point, each with its value there (for that point's working)."""
        found: list[tuple[Candidate, float]] = []
        for candidate in self.candidates:
            position = int(np.searchsorted(candidate.indices, point))
            if position < candidate.indices.size and candidate.indices[position] == point:
                found.append((candidate, float(candidate.radiant_exposure_J_m2[position])))
        return found


def evaluate_rows(
    limit_set: LimitSet,
    tissue: str,
    wavelength_nm: FloatArray,
    duration_s: FloatArray,
    alpha_mrad: FloatArray,
    *,
    pulse_reduction_only: bool = False,
    keep_candidates: bool = False,
) -> Evaluation:
    """Evaluate 1-d arrays of points; ``row_index`` is -1 where no row holds.

    Rows are taken band by band: the points inside a row's first condition (its wavelength band)
    get their own Variables, so that a factor such as C_E is computed only where a row needs it.
    """
    variables = Variables(limit_set, {"wavelength_nm": wavelength_nm, "t": duration_s, "alpha_mrad": alpha_mrad})
    rows = tuple(row for row in limit_set.rows if tissue in row.tissues
                 and (row.pulse_reduction or not pulse_reduction_only))
    size = wavelength_nm.shape[0]
    lowest = np.full(size, np.inf)
    row_index = np.full(size, -1, dtype=np.intp)
    groups = {table: GroupLowest(np.full(size, np.inf), np.full(size, -1, dtype=np.intp))
              for table in dict.fromkeys(row.aperture_table(tissue) for row in rows)}
    candidates: list[Candidate] = []
    bands: dict[tuple[str, str], tuple[IndexArray, Variables]] = {}
    for number, row in enumerate(rows):
        band, others = row.conditions[0], row.conditions[1:]
        key = (band.variable, band.interval.text)
        if key not in bands:
            inside = select((band,), variables, None)
            bands[key] = (inside, variables.subset(inside))
        inside, local = bands[key]
        if inside.size == 0:
            continue
        chosen_here = select(others, local, None)
        if chosen_here.size == 0:
            continue
        value = row.expression.evaluate(_subset(local, row.expression.names, chosen_here), (chosen_here.size,))
        if row.quantity == "E":
            value = value * local["t"][chosen_here]
        chosen = inside[chosen_here]
        lower = value < lowest[chosen]
        lowest[chosen[lower]] = value[lower]
        row_index[chosen[lower]] = number
        group = groups[row.aperture_table(tissue)]
        lower = value < group.radiant_exposure_J_m2[chosen]
        group.radiant_exposure_J_m2[chosen[lower]] = value[lower]
        group.row_index[chosen[lower]] = number
        if keep_candidates:
            candidates.append(Candidate(row=row, indices=chosen, radiant_exposure_J_m2=value))
    return Evaluation(variables=variables, radiant_exposure_J_m2=lowest, row_index=row_index, rows=rows,
                      groups=groups, candidates=candidates)


def evaluate_aperture_mm(limit_set: LimitSet, table: str, variables: Variables) -> tuple[FloatArray, IndexArray]:
    """The aperture diameter (mm) of ``table`` at every point, and which piece gave it."""
    return evaluate_factor(limit_set.apertures[table], variables)
