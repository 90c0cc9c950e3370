"""Names of the pf estimators of the spatial simulation (``[simulation] estimator``, ``--estimator``).

The one list the case schema, the command line and the commands read (kept
free of imports, so that building the command line loads nothing heavy):

- ``monte-carlo``: :func:`slope.simulate.simulate`;
- ``subset``: subset simulation, :func:`slope.simulate.rare.subset_simulate`;
- ``auto``: subset simulation when Monte Carlo's first batch of realisations
  (``simulation.batch``) sees fewer than :data:`AUTO_MIN_FAILURES` failures
  (FS < 1), Monte Carlo otherwise.
"""

__all__ = ["ESTIMATORS", "AUTO_MIN_FAILURES"]

ESTIMATORS = ("monte-carlo", "subset", "auto")
AUTO_MIN_FAILURES = 10
