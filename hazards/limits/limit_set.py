"""Limit sets as data: reading a TOML file of rows, factors and apertures into typed objects.

A limit set file (``hazards/limits/data/<name>.toml``) holds

* ``[limit_set]``: name, title, citation, the domain, and notes that apply to the whole set;
* ``[factors.<NAME>]`` arrays of pieces (``when`` conditions, ``value`` formula, ``source``):
  the correction factors and parameters (C_A, C_E, T_2, alpha_max, gamma ...), evaluated in
  the order they are needed;
* ``[apertures.<table>]`` pieces giving the limiting aperture diameter in mm: one table per
  tissue, and further tables that rows name with ``aperture = { eye = "<table>" }`` where a
  second limit for the same tissue is averaged differently;
* ``[pulse_trains]``: the grouping time factor and the exponent of C_P = N^exponent;
* ``[[rows]]``: one row of the published table each: tissues, mechanism, ``when`` conditions
  (wavelength_nm, t, alpha_mrad as interval strings such as "[400, 700]", "[10, T2)", whose
  bounds may name a factor), quantity H or E, formula, citation, status and note.

Variables a formula or a bound may name: ``wavelength_nm``, ``t`` (s), ``alpha_mrad`` and any
factor of the same file. Adding an edition is adding a file; the engine has no per-edition code.
"""
from __future__ import annotations

import math
import re
import tomllib
from dataclasses import dataclass
from functools import cache
from pathlib import Path
from typing import Any, Literal

from hazards.limits.expression import Expression, ExpressionError, parse_expression

DATA_DIRECTORY = Path(__file__).parent / "data"
INPUT_VARIABLES = frozenset({"wavelength_nm", "t", "alpha_mrad"})
TISSUES = ("eye", "skin")
STATUSES = frozenset({"read", "read, pre-2013 value", "from memory", "unverified", "interpretation"})

_INTERVAL = re.compile(r"^\s*([\[(])\s*([^,\s]+)\s*,\s*([^,\s]+)\s*([\])])\s*$")


class LimitSetError(ValueError):
    """A limit-set data file is malformed (a bug in the data, not a person's input)."""


Bound = float | str


@dataclass(frozen=True)
class Interval:
    """A range with each end open or closed; a bound is a number or the name of a factor."""

    text: str
    lower: Bound
    upper: Bound
    lower_closed: bool
    upper_closed: bool

    @property
    def names(self) -> frozenset[str]:
        return frozenset(bound for bound in (self.lower, self.upper) if isinstance(bound, str))


@dataclass(frozen=True)
class Condition:
    variable: str
    interval: Interval


@dataclass(frozen=True)
class Piece:
    """One line of a factor or aperture table: where it holds, its formula and its source."""

    conditions: tuple[Condition, ...]
    value: Expression
    source: str
    status: str
    note: str


@dataclass(frozen=True)
class Factor:
    name: str
    unit: str
    pieces: tuple[Piece, ...]

    @property
    def names(self) -> frozenset[str]:
        used: set[str] = set()
        for piece in self.pieces:
            used.update(piece.value.names)
            for condition in piece.conditions:
                used.add(condition.variable)
                used.update(condition.interval.names)
        return frozenset(used)


@dataclass(frozen=True)
class Row:
    """One cell of a published table: the limit for a band, a duration range and a condition."""

    id: str
    tissues: tuple[str, ...]
    mechanism: str
    conditions: tuple[Condition, ...]
    quantity: Literal["H", "E"]
    expression: Expression
    pulse_reduction: bool
    field_of_view: str | None
    citation: str
    status: str
    note: str
    apertures: dict[str, str]

    def aperture_table(self, tissue: str) -> str:
        """The limiting-aperture table this row is averaged over for ``tissue`` (the tissue's own by default)."""
        return self.apertures.get(tissue, tissue)

    @property
    def names(self) -> frozenset[str]:
        used = set(self.expression.names)
        for condition in self.conditions:
            used.add(condition.variable)
            used.update(condition.interval.names)
        if self.field_of_view:
            used.add(self.field_of_view)
        return frozenset(used)


@dataclass(frozen=True)
class PulseTrainRules:
    grouping_time: str
    reduction_exponent: float
    citation: str
    note: str


@dataclass(frozen=True)
class LimitSet:
    name: str
    title: str
    citation: str
    notes: tuple[str, ...]
    wavelength_range_m: tuple[float, float]
    duration_range_s: tuple[float, float]
    factors: dict[str, Factor]
    apertures: dict[str, Factor]
    rows: tuple[Row, ...]
    pulse_trains: PulseTrainRules

    @property
    def wavelength_edges_m(self) -> tuple[float, ...]:
        """Every wavelength at which a row, a factor or an aperture of the set changes, inside its range."""
        conditions = [condition for row in self.rows for condition in row.conditions]
        conditions += [condition for table in (*self.factors.values(), *self.apertures.values())
                       for piece in table.pieces for condition in piece.conditions]
        edges = {bound * 1e-9 for condition in conditions if condition.variable == "wavelength_nm"
                 for bound in (condition.interval.lower, condition.interval.upper)
                 if isinstance(bound, float) and math.isfinite(bound)}
        low, high = self.wavelength_range_m
        return tuple(sorted(edge for edge in edges if low * (1 + 1e-9) < edge < high * (1 - 1e-9)))


def parse_interval(text: str) -> Interval:
    match = _INTERVAL.match(text)
    if match is None:
        raise LimitSetError(f"cannot read interval {text!r} (write it like '[400, 700)')")
    opening, lower_text, upper_text, closing = match.groups()
    return Interval(text=text.strip(), lower=_bound(lower_text), upper=_bound(upper_text),
                    lower_closed=opening == "[", upper_closed=closing == "]")


def _bound(text: str) -> Bound:
    if text in {"inf", "+inf"}:
        return math.inf
    if text == "-inf":
        return -math.inf
    try:
        return float(text)
    except ValueError:
        if not re.fullmatch(r"[A-Za-z_]\w*", text):
            raise LimitSetError(f"bound {text!r} is neither a number nor a name") from None
        return text


def _conditions(table: object, where: str) -> tuple[Condition, ...]:
    if not isinstance(table, dict):
        raise LimitSetError(f"{where}: 'when' must be a table of variable = interval")
    return tuple(Condition(variable=str(variable), interval=parse_interval(str(text)))
                 for variable, text in table.items())


def _formula(text: object, where: str) -> Expression:
    try:
        return parse_expression(str(text))
    except ExpressionError as error:
        raise LimitSetError(f"{where}: {error}") from None


def _status(value: object, where: str) -> str:
    status = str(value)
    if status not in STATUSES:
        raise LimitSetError(f"{where}: status {status!r} is not one of {sorted(STATUSES)}")
    return status


def _pieces(name: str, raw: object, unit: str) -> Factor:
    if not isinstance(raw, list):
        raise LimitSetError(f"factor {name}: expected an array of pieces")
    pieces = []
    for number, piece in enumerate(raw, 1):
        where = f"factor {name} piece {number}"
        pieces.append(Piece(conditions=_conditions(piece.get("when", {}), where),
                            value=_formula(piece["value"], where), source=str(piece["source"]),
                            status=_status(piece.get("status", "read"), where),
                            note=str(piece.get("note", ""))))
    return Factor(name=name, unit=unit, pieces=tuple(pieces))


def _factor_unit(name: str) -> str:
    if name.endswith("_mrad"):
        return "mrad"
    if name.endswith("_mm"):
        return "mm"
    if name.startswith("T"):
        return "s"
    return ""


def parse_limit_set(document: dict[str, Any], origin: str) -> LimitSet:
    try:
        header = document["limit_set"]
        factors = {name: _pieces(name, raw, _factor_unit(name)) for name, raw in document["factors"].items()}
        apertures = {tissue: _pieces(f"aperture ({tissue})", raw, "mm")
                     for tissue, raw in document["apertures"].items()}
        rows = tuple(_row(raw) for raw in document["rows"])
        pulses = document["pulse_trains"]
        limit_set = LimitSet(
            name=str(header["name"]), title=str(header["title"]), citation=str(header["citation"]),
            notes=tuple(str(note) for note in header.get("notes", [])),
            wavelength_range_m=(float(header["wavelength_m"][0]), float(header["wavelength_m"][1])),
            duration_range_s=(float(header["duration_s"][0]), float(header["duration_s"][1])),
            factors=factors, apertures=apertures, rows=rows,
            pulse_trains=PulseTrainRules(grouping_time=str(pulses["grouping_time"]),
                                         reduction_exponent=float(pulses["reduction_exponent"]),
                                         citation=str(pulses["citation"]), note=str(pulses.get("note", ""))),
        )
    except KeyError as error:
        raise LimitSetError(f"{origin}: missing key {error}") from None
    _check_names(limit_set, origin)
    return limit_set


def _row(raw: dict[str, Any]) -> Row:
    where = f"row {raw.get('id', '?')}"
    quantity = raw["quantity"]
    if quantity not in ("H", "E"):
        raise LimitSetError(f"{where}: quantity must be 'H' or 'E', got {quantity!r}")
    tissues = tuple(raw["tissues"])
    if not set(tissues) <= set(TISSUES):
        raise LimitSetError(f"{where}: tissues must be among {TISSUES}, got {tissues}")
    conditions = _conditions(raw["when"], where)
    if not conditions or conditions[0].variable != "wavelength_nm":
        raise LimitSetError(f"{where}: 'when' must start with the wavelength_nm band")
    apertures = raw.get("aperture", {})
    if not isinstance(apertures, dict) or not set(apertures) <= set(tissues):
        raise LimitSetError(f"{where}: 'aperture' must map some of its tissues {tissues} to an aperture table")
    return Row(id=str(raw["id"]), tissues=tissues, mechanism=str(raw["mechanism"]),
               conditions=conditions, quantity=quantity,
               expression=_formula(raw["expression"], where),
               pulse_reduction=bool(raw.get("pulse_reduction", False)),
               field_of_view=raw.get("field_of_view"), citation=str(raw["citation"]),
               status=_status(raw.get("status", "read"), where), note=str(raw.get("note", "")),
               apertures={str(tissue): str(table) for tissue, table in apertures.items()})


def _check_names(limit_set: LimitSet, origin: str) -> None:
    """Every name a formula or bound uses must be an input variable or a factor of the set."""
    known = INPUT_VARIABLES | set(limit_set.factors)
    users: list[tuple[str, frozenset[str]]] = [(f"row {row.id}", row.names) for row in limit_set.rows]
    users += [(f"factor {factor.name}", factor.names) for factor in limit_set.factors.values()]
    users += [(factor.name, factor.names) for factor in limit_set.apertures.values()]
    users.append(("pulse_trains", frozenset({limit_set.pulse_trains.grouping_time})))
    for where, names in users:
        unknown = names - known
        if unknown:
            raise LimitSetError(f"{origin}: {where} uses unknown names {sorted(unknown)}")
    for row in limit_set.rows:
        for tissue in row.tissues:
            if row.aperture_table(tissue) not in limit_set.apertures:
                raise LimitSetError(f"{origin}: row {row.id} is averaged over aperture table "
                                    f"{row.aperture_table(tissue)!r}, which the file does not define")


def available_limit_sets() -> tuple[str, ...]:
    return tuple(sorted(path.stem for path in DATA_DIRECTORY.glob("*.toml")))


@cache
def load_limit_set(name: str) -> LimitSet:
    """Read ``data/<name>.toml`` once per process."""
    path = DATA_DIRECTORY / f"{name}.toml"
    with path.open("rb") as handle:
        document = tomllib.load(handle)
    limit_set = parse_limit_set(document, origin=path.name)
    if limit_set.name != name:
        raise LimitSetError(f"{path.name}: [limit_set] name is {limit_set.name!r}, expected {name!r}")
    return limit_set
