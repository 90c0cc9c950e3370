"""Estimators of the spatial simulation's probability of failure, by name.

``monte-carlo``: crude Monte Carlo over realisations (:func:`.driver.simulate`);
``subset``: subset simulation over the fields' white noise (:mod:`.rare`);
``auto``: subset simulation when Monte Carlo's first batch sees few failures.
The command line builds its choices from :data:`ESTIMATORS` without importing
the simulator (a parser must start in a fraction of a second).
"""
ESTIMATORS = ("monte-carlo", "subset", "auto")
#: ``auto``: subset simulation when Monte Carlo's first batch (``simulation.batch``) has fewer failures (FS < 1).
AUTO_MIN_FAILURES = 10

__all__ = ["ESTIMATORS", "AUTO_MIN_FAILURES"]
