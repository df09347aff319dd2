"""The small, safe expression language of the limit-set data files.

A limit set writes each formula the way the printed tables do, for example
``18 * t^0.75 * C_E``, ``10^(0.002*(wavelength_nm-700))`` or ``8 + 10^(0.04*(wavelength_nm-1250))``.
Nothing here calls eval(): the text is parsed once, at load time, into sums of products

    coefficient * name_1^p_1 * ... * 10^(k_1*(name_a - x_1)) * ...

which numpy evaluates over whole arrays. That covers every formula in the published tables
(powers of t, products of correction factors, the 10^(k(lambda - lambda_0)) factors and the
one sum in ICNIRP 2013's C_C) and nothing else, so a data file cannot run code.
"""
from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]

_TOKEN = re.compile(
    r"\s*(?:(?P<number>(?:\d+\.?\d*|\.\d+)(?:[eE][-]?\d+)?)|(?P<name>[A-Za-z_][A-Za-z0-9_]*)|(?P<op>[-+*/^()]))"
)


class ExpressionError(ValueError):
    """A formula in a limit-set file is outside the supported forms (a data-file bug)."""


@dataclass(frozen=True)
class Exponential:
    """10^(slope * (name - offset))."""

    name: str
    slope: float
    offset: float


@dataclass(frozen=True)
class Product:
    coefficient: float
    powers: tuple[tuple[str, float], ...]
    exponentials: tuple[Exponential, ...]

    def evaluate(self, values: Mapping[str, FloatArray]) -> FloatArray:
        result: FloatArray | float = self.coefficient
        for name, power in self.powers:
            result = result * (values[name] if power == 1.0 else np.power(values[name], power))
        for term in self.exponentials:
            result = result * np.power(10.0, term.slope * (values[term.name] - term.offset))
        return np.asarray(result, dtype=np.float64)


@dataclass(frozen=True)
class Expression:
    """A parsed formula: the source text (shown in the working) and its sum of products."""

    text: str
    terms: tuple[Product, ...]

    @property
    def names(self) -> frozenset[str]:
        used: set[str] = set()
        for term in self.terms:
            used.update(name for name, _ in term.powers)
            used.update(exponential.name for exponential in term.exponentials)
        return frozenset(used)

    def evaluate(self, values: Mapping[str, FloatArray], shape: tuple[int, ...]) -> FloatArray:
        """Evaluate over arrays in ``values`` (all of ``shape``); constants are broadcast to it."""
        total: FloatArray = np.zeros(shape, dtype=np.float64)
        for term in self.terms:
            total = total + term.evaluate(values)
        return total


def parse_expression(text: str) -> Expression:
    tokens = _tokenise(text)
    parser = _Parser(tokens, text)
    terms = [parser.product()]
    while parser.accept("+"):
        terms.append(parser.product())
    if parser.position != len(tokens):
        raise ExpressionError(f"unexpected {tokens[parser.position]!r} in formula {text!r}")
    return Expression(text=text, terms=tuple(terms))


def _tokenise(text: str) -> list[str]:
    tokens: list[str] = []
    position = 0
    stripped = text.rstrip()
    while position < len(stripped):
        match = _TOKEN.match(stripped, position)
        if match is None:
            raise ExpressionError(f"cannot read formula {text!r} at {stripped[position:]!r}")
        tokens.append(match.group(match.lastgroup or "op"))
        position = match.end()
    return tokens


class _Parser:
    """Recursive descent over: sum := product ('+' product)*;
    product := factor (('*' | '/') factor)*;
    factor := NUMBER | NAME ['^' SIGNED] | '10' '^' '(' exponent ')';
    exponent := SIGNED '*' '(' NAME '-' NUMBER ')' | '(' NAME '-' NUMBER ')' '/' NUMBER."""

    def __init__(self, tokens: list[str], text: str) -> None:
        self.tokens = tokens
        self.text = text
        self.position = 0

    def peek(self, ahead: int = 0) -> str | None:
        index = self.position + ahead
        return self.tokens[index] if index < len(self.tokens) else None

    def accept(self, token: str) -> bool:
        if self.peek() == token:
            self.position += 1
            return True
        return False

    def expect(self, token: str) -> None:
        if not self.accept(token):
            raise ExpressionError(f"expected {token!r} in formula {self.text!r}")

    def take(self) -> str:
        token = self.peek()
        if token is None:
            raise ExpressionError(f"formula {self.text!r} ends too early")
        self.position += 1
        return token

    def number(self) -> float:
        sign = -1.0 if self.accept("-") else 1.0
        token = self.take()
        try:
            return sign * float(token)
        except ValueError:
            raise ExpressionError(f"expected a number, got {token!r} in formula {self.text!r}") from None

    def name(self) -> str:
        token = self.take()
        if not re.fullmatch(r"[A-Za-z_][A-Za-z0-9_]*", token):
            raise ExpressionError(f"expected a name, got {token!r} in formula {self.text!r}")
        return token

    def product(self) -> Product:
        coefficient = 1.0
        powers: list[tuple[str, float]] = []
        exponentials: list[Exponential] = []
        divide = False
        while True:
            sign = -1.0 if divide else 1.0
            token = self.peek()
            if token == "10" and self.peek(1) == "^" and self.peek(2) == "(":
                self.position += 3
                exponential = self.exponent()
                exponentials.append(Exponential(exponential.name, sign * exponential.slope, exponential.offset))
            elif token is not None and re.fullmatch(r"[A-Za-z_]\w*", token):
                name = self.name()
                power = self.number() if self.accept("^") else 1.0
                powers.append((name, sign * power))
            else:
                value = self.number()
                coefficient = coefficient / value if divide else coefficient * value
            if self.accept("*"):
                divide = False
            elif self.accept("/"):
                divide = True
            else:
                return Product(coefficient, tuple(powers), tuple(exponentials))

    def exponent(self) -> Exponential:
        if self.accept("("):
            name = self.name()
            self.expect("-")
            offset = self.number()
            self.expect(")")
            self.expect("/")
            slope = 1.0 / self.number()
        else:
            slope = self.number()
            self.expect("*")
            self.expect("(")
            name = self.name()
            self.expect("-")
            offset = self.number()
            self.expect(")")
        self.expect(")")
        return Exponential(name, slope, offset)
