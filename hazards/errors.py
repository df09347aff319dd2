"""The one exception type that hazards raises for a person's mistake."""
from __future__ import annotations


class InputError(ValueError):
    """A value a person supplied is unusable: wrong dimension, out of range, unparseable.

    ``field`` names the input (as the caller knows it: an option, a JSON key, a CSV
    column) so that the message can point at it.
    """

    def __init__(self, field: str, message: str) -> None:
        super().__init__(f"{field}: {message}")
        self.field = field
        self.message = message
