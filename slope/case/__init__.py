"""The case file: its schema (``schema``), the objects it builds (``build``) and the
analyses it asks for (``analyses``)."""
from .build import Case, load_case

__all__ = ["Case", "load_case"]
