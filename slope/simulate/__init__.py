"""Random limit-equilibrium simulator: random fields mapped onto slice bases."""
from .problem import RandomProblem, RandomProperty
from .driver import simulate

__all__ = ["RandomProblem", "RandomProperty", "simulate"]
