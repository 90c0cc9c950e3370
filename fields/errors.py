"""Exceptions of the random-field package."""


class InputError(ValueError):
    """Bad user input. The message names the input and how to fix it."""


def finite_float(value, subject, unit=""):
    """``float(value)``, or an InputError naming ``subject`` if it is not a finite number."""
    import math

    u = f" ({unit})" if unit else ""
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{subject} must be a number{u}, got {value!r}") from None
    if not math.isfinite(v):
        raise InputError(f"{subject} must be finite{u}, got {value!r}")
    return v
