"""The working behind a result: each step's formula, inputs, value and source.

Every figure hazards returns carries a Working, so that a safety officer can follow
the calculation and check it against the cited table. It serialises to JSON (a list
of step objects) and reads as plain text.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import TypedDict


class StepDict(TypedDict):
    what: str
    formula: str
    inputs: dict[str, float | str]
    value: float | str | None
    unit: str
    source: str


@dataclass(frozen=True)
class Step:
    what: str
    formula: str
    value: float | str | None
    unit: str = ""
    source: str = ""
    inputs: dict[str, float | str] = field(default_factory=dict)

    def to_dict(self) -> StepDict:
        return {"what": self.what, "formula": self.formula, "inputs": dict(self.inputs),
                "value": self.value, "unit": self.unit, "source": self.source}

    def as_text(self) -> str:
        inputs = ", ".join(f"{name} = {_show(value)}" for name, value in self.inputs.items())
        line = f"{self.what}: {self.formula}"
        if inputs:
            line += f" with {inputs}"
        if self.value is not None:
            line += f" -> {_show(self.value)}{(' ' + self.unit) if self.unit else ''}"
        if self.source:
            line += f"  [{self.source}]"
        return line


@dataclass
class Working:
    steps: list[Step] = field(default_factory=list)

    def add(
        self,
        what: str,
        formula: str,
        value: float | str | None,
        unit: str = "",
        source: str = "",
        **inputs: float | str,
    ) -> None:
        self.steps.append(Step(what=what, formula=formula, value=value, unit=unit, source=source,
                               inputs=inputs))

    def extend(self, other: Working, prefix: str = "") -> None:
        for step in other.steps:
            self.steps.append(Step(what=f"{prefix}{step.what}", formula=step.formula, value=step.value,
                                   unit=step.unit, source=step.source, inputs=step.inputs))

    def to_json(self) -> list[StepDict]:
        return [step.to_dict() for step in self.steps]

    def as_text(self) -> str:
        return "\n".join(f"{number}. {step.as_text()}" for number, step in enumerate(self.steps, 1))


def _show(value: float | str) -> str:
    return f"{value:.4g}" if isinstance(value, float) else str(value)
