"""Names and defaults of the per-realisation search, without importing the simulator.

The command line builds ``--refine-search``'s choices from here (a parser
must start in a fraction of a second), the case schema its
``[simulation] refine_search`` values and defaults, and
:class:`slope.simulate.refinement.RefineSettings` checks against the same
names.

Default window (case files and the command line)
------------------------------------------------
The per-realisation search is on by default (``dynamic-programming``) for
realisations *near failure*: bank FS in ``[1, 1 + DEFAULT_MARGIN)``. The
search only lowers FS, so a realisation with bank FS < 1 already fails and
searching it cannot change pf; one far above 1 would need the search to
lower its FS by more than the margin. The margin 0.10 is about the measured 95th percentile of FS_bank / FS_free
(the bank's circles by Bishop over the per-realisation dynamic-programming
search by Spencer, every realisation searched): 1.086 on the levee demo
(undrained, 300 realisations; 1.091-1.096 before slice sides followed the
paths' bends), 1.077-1.107 on Griffiths & Fenton's (2004) undrained slope
(C 0.2; θ 2, 5, 10 m; COV 0.5, 0.5, 0.25; 400 each). pf with the free
search therefore counts the refinements inside the window only: a
realisation the free search would lower by more than 10 % from a bank FS of
1.10 or more keeps its bank FS. Measured, the failures of the
search-everything run this misses: levee 1 of 58, Griffiths & Fenton 4 of
125, 2 of 35 and 0 of 26.
``scripts/bench_mechanisms.py`` prints these
figures and the CPU the window adds.
"""

#: searches of a realisation after the bank (``RefineSettings.search``, ``[simulation] refine_search``)
REFINE_SEARCHES = ("nelder-mead", "dynamic-programming")
#: the value that switches the per-realisation search off (case file and ``--refine-search``)
REFINE_OFF = "off"
#: the search a case file gets when it names none
DEFAULT_REFINE_SEARCH = "dynamic-programming"
#: realisations with bank FS in [FAILURE_FS, FAILURE_FS + DEFAULT_MARGIN) are searched by default
DEFAULT_MARGIN = 0.10
#: pf counts FS < 1: the lower end of a case's window (searching below it cannot change pf)
FAILURE_FS = 1.0
DEFAULT_REFINE_BELOW = FAILURE_FS + DEFAULT_MARGIN

__all__ = ["REFINE_SEARCHES", "REFINE_OFF", "DEFAULT_REFINE_SEARCH", "DEFAULT_MARGIN", "FAILURE_FS",
           "DEFAULT_REFINE_BELOW"]
