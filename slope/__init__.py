"""slipfield's slope package: sections, methods of slices, reliability and the
random limit-equilibrium simulator.

The public API is small; everything else is reachable through the
subpackages (``case``, ``methods``, ``search``, ``reliability``, ``simulate``
— the simulator, whose ``simulate`` function shares its name —, ``report``,
``commands``). Names load on first use, so ``import
slipfield.slope`` stays fast::

    from slipfield.slope import load_case, deterministic, random_problem
    from slipfield.slope.simulate import simulate
    case = load_case("cases/levee_soft_clay.toml")
    det = deterministic(case)                       # FS by every method, per hypothesis
    problem = random_problem(case, det, "undrained")
    result = simulate(problem, 500, seed=1)         # pf, pf_interval, fs per realisation
"""
from slipfield.fields._lazy import lazy_exports

_WHERE = {
    "load_case": "case.build",
    "deterministic": "case.analyses",
    "single_variable_reliability": "case.analyses",
    "random_problem": "case.analyses",
    "run_case": "commands.run",
    "export_realisations": "commands.export",
    "factor_of_safety": "methods",
    "InputError": "errors",
}

__all__ = sorted(_WHERE)


__getattr__, __dir__ = lazy_exports(globals(), _WHERE)
