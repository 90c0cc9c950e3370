"""Exceptions of the slope package."""
from slipfield.fields.errors import InputError as _FieldsInputError


class InputError(_FieldsInputError):
    """Bad user input (section, material, surface, case file).

    The message names the item and the fix. Subclass of
    :class:`fields.errors.InputError` so one ``except`` catches both.
    """
