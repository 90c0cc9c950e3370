"""Exceptions of the random-field package."""


class InputError(ValueError):
    """Bad user input. The message names the input and how to fix it."""
