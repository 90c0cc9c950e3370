"""Small probabilities of failure with random fields: subset simulation.

pf = P(FS < 1) is written as a product of conditional probabilities of
nested events Fℓ = {FS ≤ bℓ} (Au & Beck 2001, Probabilistic Engineering
Mechanics 16(4):263-277): each threshold bℓ leaves a fraction p0 (the level
probability) of the level's N samples below it, and the samples of level
ℓ + 1 are Markov chains started from those p0·N seeds. The random input is
the whole standard-normal input of the simulator: the generators' own white
noise of every field of every property and zone (``FieldGenerator.noise``;
the field is a linear map of it, so a moved noise is still a field with the
exact statistics) and one standard normal per single random variable
(θ = ∞). The performance function is :func:`slope.simulate.driver`'s: the
critical FS over the bank, re-searched for every sample (and refined when
asked), so a sample's FS is the one Monte Carlo would give it; level 0 *is*
the first N Monte Carlo realisations.

Markov-chain step: **adaptive conditional sampling** (aCS; Papaioannou,
Betz, Zwirglmaier & Straub 2015, Probabilistic Engineering Mechanics
41:89-103, algorithm 2). A candidate v = ρ⊙u + σ⊙ξ, ξ ~ N(0, I), leaves the
standard-normal density invariant for any 0 < σₖ ≤ 1, ρₖ = √(1 − σₖ²), so it
is accepted whenever FS(v) ≤ bℓ and there is no density ratio to evaluate:
the acceptance rate does not collapse as the dimension grows (tens of
thousands of noise components here), which is where the component-wise
modified Metropolis step of Au & Beck stalls. σₖ = min(1, λ σ̂ₖ) with σ̂ₖ the
spread of the seeds in component k; λ is adapted after every group of
pa·Nc chains (pa = 0.1, at least 10 chains so that a group is a useful
batch of work for the processes) towards the acceptance rate 0.44 by
log λ ← log λ + (â − 0.44)/√i, and carried from level to level (start 0.6),
as the paper recommends. Plain conditional sampling (fixed ρ) was not
chosen: its acceptance depends on how far the level's failure domain is
from the origin, so a fixed ρ that suits level 1 moves the chains of level 5
hardly at all; aCS keeps the acceptance near its target at every level.

Estimator's CoV (Au & Beck 2001, eqs. 27-31): level 0 δ₀² = (1 − p)/(pN);
level ℓ δℓ² = (1 − p)/(pN)(1 + γℓ), γℓ from the correlation of the failure
indicators along the chains; ``cov`` = √Σδℓ² (levels uncorrelated) and
``cov_upper`` = Σδℓ (fully correlated), a bracket. The 95 % interval is
that of a lognormal estimator with this CoV (common practice: the subset
estimate is skewed to the right).

Randomness: level 0 uses the Monte Carlo streams ``realisation_rng(seed, k,
property, zone)``; chain j of level ℓ draws its innovations from
``realisation_rng(seed, ℓ, STREAM, 0, j)`` and the seeds' order from
``realisation_rng(seed, ℓ, STREAM, 1)``. Chains are independent given the
level's threshold and λ, so they are spread over processes (local or a dask
cluster) in any grouping and batch with bit-identical results. Memory: the
seeds of one level and the chains in flight (the states of a level are
never all held: the next seeds are rebuilt by replaying their chains).

Governing surfaces (issue 15): with the per-realisation search on, a sample
whose FS the search lowered is governed by the search's own polyline. The
chains carry it with their state (:mod:`.rare_surfaces`): the seeds of a
level, its samples and its checkpoint hold the polyline and its measured
geometry wherever one governs, so the failures of the last level are
measured, drawn and exported on the surfaces that governed them, as Monte
Carlo's are (:mod:`.failure_geometry`).
"""
from __future__ import annotations

import math
from dataclasses import asdict, dataclass

import numpy as np

from slipfield.fields.properties import field_stream
from slipfield.fields.seeding import realisation_rng

from ..errors import InputError
from .estimators import AUTO_MIN_FAILURES, ESTIMATORS
from ..reliability.subset import _gamma
from .driver import SEARCHED_GEOMETRY, SEARCHED_VERTICES, _concat, _run_block, simulate
from .engine import stencil
from .problem import RandomProblem
from .rare_store import LevelStore, subset_store_identity
from .rare_surfaces import shift_rows, surfaces_of_rows, take

__all__ = ["SubsetSettings", "NoiseLayout", "GivenNoise", "subset_simulate", "ESTIMATORS",
           "AUTO_MIN_FAILURES", "STREAM"]

#: Stream tag of subset simulation's own random numbers (never a property index).
STREAM = 7_340_021
MIN_SEEDS = 10            # chains per level: σ̂ and γ need several of them
_TARGET_ACCEPTANCE = 0.44  # Papaioannou et al. (2015)
_ADAPT_FRACTION = 0.1      # pa: chains per adaptation step / chains
_ADAPT_MIN = 10            # but at least this many chains per step: a useful batch for the processes
_LAMBDA0 = 0.6


@dataclass(frozen=True)
class SubsetSettings:
    """How subset simulation runs.

    Parameters
    ----------
    level_probability : float, -
        p0, the conditional probability of each intermediate level
        (0 < p0 ≤ 0.5; 0.1 is usual).
    samples_per_level : int
        N; p0·N chains of 1/p0 states each, so p0·N and 1/p0 must be whole
        numbers and p0·N ≥ 10.
    max_levels : int
        Stop (and say so) after this many levels beyond the first.
    threshold : float, -
        pf = P(FS < threshold).
    """

    level_probability: float = 0.1
    samples_per_level: int = 1000
    max_levels: int = 20
    threshold: float = 1.0

    def __post_init__(self):
        p0, n = self.level_probability, self.samples_per_level
        if isinstance(p0, bool) or not isinstance(p0, (int, float)) or not 0.0 < float(p0) <= 0.5:
            raise InputError(f"level_probability (simulation.level_probability, --level-probability): {p0!r}; "
                             "give a probability in (0, 0.5], e.g. 0.1")
        if isinstance(n, bool) or not isinstance(n, (int, np.integer)):
            raise InputError(f"samples_per_level (simulation.samples_per_level, --samples-per-level): {n!r}; "
                             "give a whole number, e.g. 1000")
        nc, ns = float(p0) * int(n), 1.0 / float(p0)
        if abs(ns - round(ns)) > 1e-9:
            raise InputError(f"level_probability (simulation.level_probability, --level-probability): {p0!r}; "
                             "each chain has 1/level_probability states, so give the inverse of a whole number, "
                             "e.g. 0.1, 0.2, 0.25 or 0.5")
        if abs(nc - round(nc)) > 1e-9 or round(nc) < MIN_SEEDS:
            raise InputError(
                f"samples_per_level (simulation.samples_per_level, --samples-per-level): {n} samples at level "
                f"probability {float(p0):g} give {nc:g} chain seeds; samples_per_level x level_probability must "
                f"be a whole number >= {MIN_SEEDS}: e.g. samples_per_level = "
                f"{int(math.ceil(MIN_SEEDS / float(p0)))} or more, a multiple of {int(round(ns))}")
        if int(self.max_levels) < 1:
            raise InputError(f"max_levels: {self.max_levels!r}; give at least 1")
        t = float(self.threshold)
        if not (math.isfinite(t) and t > 0):
            raise InputError(f"threshold: {self.threshold!r}; give a factor of safety > 0 (1 for pf)")
        object.__setattr__(self, "level_probability", float(p0))
        object.__setattr__(self, "samples_per_level", int(n))
        object.__setattr__(self, "max_levels", int(self.max_levels))
        object.__setattr__(self, "threshold", t)

    @property
    def n_chains(self) -> int:
        return int(round(self.level_probability * self.samples_per_level))

    @property
    def chain_length(self) -> int:
        return int(round(1.0 / self.level_probability))

    def describe(self) -> dict:
        return asdict(self)

    @classmethod
    def from_case(cls, simulation: dict, level_probability=None, samples_per_level=None):
        """Settings of a case's ``[simulation]`` table, with CLI overrides."""
        p0 = simulation.get("level_probability", 0.1) if level_probability is None else level_probability
        n = simulation.get("samples_per_level", 1000) if samples_per_level is None else samples_per_level
        return cls(level_probability=p0, samples_per_level=n)


# ----------------------------------------------------------- the random input
class NoiseLayout:
    """Where each field's white noise sits in one sample's standard-normal vector.

    Block ``(i, z)`` (property i in zone z) holds the generator's
    ``noise_size`` normals, or 1 for a single random variable.
    """

    def __init__(self, problem: RandomProblem):
        self.blocks = {}
        off = 0
        for i, p in enumerate(problem.properties):
            for z in problem.zones_of(i):
                # each zone's field has its own box (slope.simulate.field_box), so its own noise size
                size = 1 if p.single else problem.generator(i, z).noise_size
                if size is None:
                    raise InputError(f"simulation.field_method = {problem.field_method!r}: subset simulation "
                                     "moves the fields' white noise, which this generator draws inside GSTools; "
                                     "use 'fft', 'cholesky' or 'kl'")
                self.blocks[(i, z)] = (off, size)
                off += size
        # site data with measurement errors: the simulated errors are random input too
        from .conditioning import conditioner

        for i, p in enumerate(problem.properties):
            for z in problem.zones_of(i):
                c = conditioner(problem, i, z)
                if c is not None and np.any(c.cov.nugget > 0):
                    self.blocks[("error", i, z)] = (off, c.cells.size)
                    off += c.cells.size
        self.size = off

    def draw(self, problem, seed, indices) -> np.ndarray:
        """The noise of Monte Carlo realisations ``indices``, as the engine draws it: ``(s, size)``."""
        from slipfield.fields.conditioning import NOISE_STREAM

        idx = [int(k) for k in indices]
        out = np.empty((len(idx), self.size))
        for key, (off, size) in self.blocks.items():
            if key[0] == "error":  # as DataCovariance.noise draws them, before scaling
                out[:, off:off + size] = [realisation_rng(seed, k, *key[1:], NOISE_STREAM).standard_normal(size)
                                          for k in idx]
                continue
            i, z = key
            if problem.properties[i].single:
                out[:, off] = [realisation_rng(seed, k, i, z).standard_normal() for k in idx]
            else:
                out[:, off:off + size] = problem.generator(i, z).noise(seed, idx, stream=field_stream(i, z))
        return out


class GivenNoise:
    """White noise given row by row, accepted by the engine in place of a seed.

    ``keys[r]`` places row r in the dense generators' blocks (bit-identical
    fields whatever the batch).
    """

    def __init__(self, layout: NoiseLayout, U, keys):
        self.layout, self.U, self.keys = layout, np.asarray(U, float), np.asarray(keys, np.int64)

    def measurement_errors(self, cond, indices, stream):
        """Simulated measurement errors of a :class:`~.conditioning.ZoneConditioner` for rows ``indices``."""
        rows = np.asarray(list(indices), dtype=np.int64)
        off, size = self.layout.blocks[("error", *stream)]
        return self.U[rows, off:off + size] * np.sqrt(cond.cov.nugget)

    def standard_normals(self, problem, indices, i, z):
        rows = np.asarray(list(indices), dtype=np.int64)
        off, size = self.layout.blocks[(i, z)]
        u = self.U[rows, off:off + size]
        if problem.properties[i].single:
            return u[:, :, None]
        gen = problem.generator(i, z)
        return gen.grid.reshape(gen.fields_from_noise(u, keys=self.keys[rows]))


def _evaluate(problem, layout, U, keys, refine, batch):
    """Simulator's per-realisation results (``driver._run_block``) for the noise rows U."""
    parts = []
    for a in range(0, U.shape[0], batch):
        src = GivenNoise(layout, U[a:a + batch], keys[a:a + batch])
        # the searched surfaces' sparse rows are numbered within the batch: renumbered as rows of U
        parts.append(shift_rows(_run_block(problem, src, 0, src.U.shape[0], refine), a))
    return _concat(parts)


def _fs_rank(fs):
    # no valid surface: ranked safe (never a seed), counted and reported
    return np.where(np.isfinite(fs), fs, np.inf)


# ------------------------------------------------------------------ chains
def _rngs(seed, level, chains):
    return [realisation_rng(seed, level, STREAM, 0, int(j)) for j in chains]


def _propose(u, rho, sigma, xi):
    return rho * u + sigma * xi


def _worker_problem(problem):
    """The problem in a task: itself, or loaded once per worker from the file the run shipped it in."""
    if not isinstance(problem, str):
        return problem
    from . import driver

    held = driver._WORKER_PROBLEM.get(problem)
    if held is None:
        import pickle

        import numba

        with open(problem, "rb") as fh:
            held = pickle.load(fh)
        driver._WORKER_PROBLEM.clear()  # one problem per worker, as Monte Carlo's blocks
        driver._WORKER_PROBLEM[problem] = held
        numba.set_num_threads(1)  # the workers already use every core; results do not depend on it
    return held


def _run_chains(problem, layout, seed, level, chains, u0, y0, c0, s0, b, rho, sigma, n_steps, refine, batch):
    """Advance chains ``chains`` (global numbers) from their seeds ``u0`` for ``n_steps`` steps.

    ``problem`` is the RandomProblem or the path it was shipped to (local
    processes); ``s0`` the seeds' searched surfaces (:mod:`.rare_surfaces`;
    None where a bank surface governs). Returns dict: ``fs``, ``crit``
    (n_steps + 1, k) (row 0: the seeds), ``accepted`` (n_steps, k) bool,
    ``surfaces`` {(step, position in ``chains``): searched surface} of the
    states a searched surface governs (step 0: the seeds), ``counts`` of the
    evaluations.
    """
    problem = _worker_problem(problem)
    rngs = _rngs(seed, level, chains)
    u, y, c = np.array(u0, float), np.array(y0, float), np.array(c0, int)
    fs, crit, acc = [y.copy()], [c.copy()], []
    # a chain keeps its state's surface while it stays put and takes the candidate's when it moves
    cur = list(s0)
    surf = {(0, j): s for j, s in enumerate(cur) if s is not None}
    counts = {"n": 0, "nonconv": 0, "inadm": 0, "none": 0, "refined": 0}
    keys = np.asarray(chains, np.int64)
    for _ in range(n_steps):
        xi = np.stack([r.standard_normal(layout.size) for r in rngs])
        v = _propose(u, rho, sigma, xi)
        ev = _evaluate(problem, layout, v, keys, refine, batch)
        counts["n"] += v.shape[0]
        for k in ("nonconv", "inadm", "none"):
            counts[k] += int(ev[k].sum())
        counts["refined"] += int(ev["refined"].sum()) if "refined" in ev else 0
        yv = _fs_rank(ev["fs"])
        ok = yv <= b
        u[ok], y[ok], c[ok] = v[ok], yv[ok], ev["crit"][ok]
        found = surfaces_of_rows(ev.get(SEARCHED_VERTICES), ev.get(SEARCHED_GEOMETRY))
        for j in np.flatnonzero(ok):
            cur[j] = found.get(int(j))
        surf.update({(len(fs), j): s for j, s in enumerate(cur) if s is not None})
        fs.append(y.copy())
        crit.append(c.copy())
        acc.append(ok)
    return {"fs": np.array(fs), "crit": np.array(crit),
            "accepted": np.array(acc, bool).reshape(n_steps, len(chains)), "surfaces": surf, "counts": counts}


def _replay(layout, seed, level, chain, u0, rho, sigma, accepted, step):
    """State of ``chain`` after ``step`` steps, from its seed and acceptances (no FS evaluated)."""
    r = _rngs(seed, level, [chain])[0]
    u = np.array(u0, float)[None]
    for t in range(step):
        v = _propose(u, rho, sigma, r.standard_normal(layout.size)[None])
        if accepted[t]:
            u = v
    return u[0]


def _map(fn, calls, n_jobs, scheduler):
    """``fn(*args)`` for each argument tuple, in order (:func:`~.executors.run_tasks`: here, joblib or dask)."""
    from .executors import run_tasks

    return list(run_tasks(fn, calls, n_jobs=n_jobs, scheduler=scheduler))


def _split(items, parts):
    k = max(1, min(parts, len(items)))
    return [a for a in np.array_split(np.asarray(items), k) if a.size]


# ------------------------------------------------------------------ levels
def _level_from_samples(fs, st: SubsetSettings, chains_shape, level):
    """Threshold, probability and CoV of one level from its samples' FS (see module doc)."""
    N, nc, t = st.samples_per_level, st.n_chains, st.threshold
    order = np.argsort(fs, kind="stable")
    n_fail = int((fs < t).sum())
    final = n_fail >= nc or level >= st.max_levels
    info = {"level": level, "n_failed": n_fail}
    if final:
        b, ind = t, fs < t
        p = n_fail / N
    else:
        lo, hi = fs[order[nc - 1]], fs[order[nc]]
        if not np.isfinite(lo):
            info["stop"] = (f"level {level}: fewer than {nc} of {N} samples have a valid critical surface; "
                            "the level cannot be split")
            return info
        if fs[order[0]] == lo:
            info["stop"] = (f"level {level}: the {nc} lowest FS are all equal ({lo:.6g}); the FS does not separate "
                            "the samples (capped or constant FS), so no further level can be formed")
            return info
        if lo == hi:
            # a tie at the quantile (a chain that stayed put repeats its state): the level is
            # {FS <= lo}, its probability the fraction at or below it; seeds the nc lowest
            b = float(lo)
            ind = fs <= b
            p = float(ind.mean())
        else:
            b = 0.5 * (lo + hi)
            ind = fs <= b
            p = nc / N
    if p == 0:
        delta2 = math.inf
        gam = float("nan")
    elif chains_shape is None:
        gam = 0.0
        delta2 = (1.0 - p) / (p * N)
    else:
        gam = _gamma(ind.reshape(chains_shape).astype(float), p)
        delta2 = (1.0 - p) / (p * N) * (1.0 + gam)
    info.update(threshold=float(b), probability=float(p), cov=math.sqrt(delta2), gamma=float(gam),
                final=bool(final), seeds=order[:nc])
    return info


def subset_simulate(problem, settings: SubsetSettings, seed, *, n_jobs=1, batch=100, store=None, resume=False,
                    scheduler=None, refine=None, progress=False, store_identity=None):
    """Subset simulation of pf = P(FS < threshold) over the simulator's whole random input.

    Parameters
    ----------
    problem : RandomProblem
    settings : SubsetSettings
    seed : int
    n_jobs : int
        Local processes (results identical for any value).
    batch : int
        Samples evaluated together (memory ~ batch × surfaces × slices).
    store : str, optional
        Folder of the level checkpoints (:class:`~.rare_store.LevelStore`).
    resume : bool
        Continue the run held in ``store`` from its last finished level (it
        must be of the same problem, seed and settings); without it a
        ``store`` holding a run is refused.
    scheduler : dask.distributed.Client, optional
    refine : RefineSettings, optional
        As :func:`slope.simulate.simulate`.
    progress : bool
        Print one line per finished level.
    store_identity : dict, optional
        More identity for the store (e.g. the case's fingerprint).

    Returns
    -------
    SubsetResult
    """
    from .refinement import RefineSettings
    from .rare_result import SubsetResult

    if not isinstance(problem, RandomProblem):
        raise InputError("subset_simulate: problem must be a RandomProblem")
    if not isinstance(settings, SubsetSettings):
        raise InputError("subset_simulate: settings must be a SubsetSettings")
    seed, n_jobs, batch = int(seed), int(n_jobs), int(batch)
    if seed < 0 or n_jobs < 1 or batch < 1:
        raise InputError(f"subset_simulate: seed >= 0, n_jobs >= 1, batch >= 1 needed (got {seed}, {n_jobs}, {batch})")
    if refine is not None and not isinstance(refine, RefineSettings):
        refine = RefineSettings(below=refine) if not isinstance(refine, dict) else RefineSettings(**refine)
    layout = NoiseLayout(problem)
    st = settings
    ckpt = None
    if store is not None:
        ckpt = LevelStore(store, subset_store_identity(problem, seed, st, refine, store_identity))
        resume = ckpt.open(resume=resume)
    state = ckpt.load() if resume else None
    counts = {"n": 0, "nonconv": 0, "inadm": 0, "none": 0, "refined": 0}
    levels, lam = [], _LAMBDA0
    if state is not None:
        levels, lam, counts = state["levels"], state["lambda"], state["counts"]
    # the problem goes to the workers once (a file for local processes, scattered on a cluster),
    # not pickled with every group of chains
    shipped = problem
    if scheduler is not None:
        shipped = scheduler.scatter(problem, broadcast=True)
    elif n_jobs > 1:
        from .driver import _await_workers, _ship

        stencil(problem)
        _await_workers()
        shipped = _ship(problem)
    try:
        level0_fs = []  # Monte Carlo's FS of level 0 (when computed in this call, not resumed)
        final, stop = _levels(problem, shipped, st, seed, layout, ckpt, state, levels, lam, counts, n_jobs,
                              batch, scheduler, refine, progress, resume, store_identity, level0_fs)
    finally:
        if isinstance(shipped, str):
            from .driver import _unship

            _unship(shipped)
    return SubsetResult.build(problem=problem, settings=st, seed=seed, levels=levels, counts=counts,
                              stop=stop, final=final, layout=layout, refine=refine,
                              level0_fs=level0_fs[0] if level0_fs else None)


def _levels(problem, shipped, st, seed, layout, ckpt, state, levels, lam, counts, n_jobs, batch,
            scheduler, refine, progress, resume, store_identity, level0_fs):
    """The level loop of :func:`subset_simulate` (fills ``levels`` and ``counts``): (final samples, stop message)."""
    N, nc, ns = st.samples_per_level, st.n_chains, st.chain_length
    gen_stats = {"acceptance": None, "lambda": None}  # of the chains that made the current level
    if state is None:
        mc = simulate(problem, N, seed, n_jobs=n_jobs, batch=batch, scheduler=scheduler, refine=refine,
                      store=None if ckpt is None else ckpt.level0_dir(), resume=resume,
                      store_identity=store_identity)
        fs, crit = _fs_rank(mc.fs), mc.critical_index.copy()
        # the searched surfaces of the level's samples (by flat sample number), carried to the seeds
        surfaces = surfaces_of_rows(mc.searched_vertices, mc.searched_geometry)
        level0_fs.append(np.asarray(mc.fs, float))
        counts.update(n=N, nonconv=mc.n_nonconverged, inadm=mc.n_inadmissible, none=mc.n_no_valid,
                      refined=mc.n_refined)
        chains_shape, level, replay = None, 0, None
    else:
        level = len(levels) - 1
    stop = final = None
    while True:
        if state is None:
            info = _level_from_samples(fs, st, chains_shape, level)
            if "stop" in info:
                stop = info["stop"]
                final = None
                break
            seeds_idx = info.pop("seeds")
            info.update(gen_stats)
            if info["final"]:
                levels.append(info)
                final = {"fs": fs, "crit": crit, "chains_shape": chains_shape, "replay": replay,
                         "surfaces": surfaces}
                break
            # the seeds' noise: Monte Carlo streams at level 0, replayed chains above
            if replay is None:
                U = layout.draw(problem, seed, seeds_idx)
            else:
                U = np.stack([_replay(layout, seed, level, *replay.locate(k)) for k in seeds_idx])
            seeds = {"u": U, "fs": fs[seeds_idx], "crit": crit[seeds_idx], "threshold": info["threshold"],
                     "surfaces": take(surfaces, seeds_idx)}
            levels.append(info)
            if ckpt is not None:
                ckpt.save(levels, lam, counts, seeds)
        else:
            seeds, state = state["seeds"], None
        if progress:
            last = levels[-1]
            print(f"subset level {last['level']}: threshold FS {last['threshold']:.4g}, "
                  f"P = {last['probability']:.3g}", flush=True)
        # ---- next level: chains from the seeds
        level += 1
        b = seeds["threshold"]
        perm = realisation_rng(seed, level, STREAM, 1).permutation(nc)
        U0, Y0, C0 = seeds["u"][perm], seeds["fs"][perm], seeds["crit"][perm]
        S0 = [seeds["surfaces"].get(int(i)) for i in perm]
        spread = U0.std(axis=0, ddof=1)
        n_a = max(_ADAPT_MIN, int(round(_ADAPT_FRACTION * nc)))
        res_fs = np.empty((ns, nc))
        res_crit = np.empty((ns, nc), int)
        res_acc = np.empty((ns - 1, nc), bool)
        lams, accs = [], []
        surfaces = {}
        for r, a in enumerate(range(0, nc, n_a), start=1):
            sigma = np.minimum(1.0, lam * spread)
            rho = np.sqrt(1.0 - sigma * sigma)
            grp = np.arange(a, min(a + n_a, nc))
            calls = [(shipped, layout, seed, level, g, U0[g], Y0[g], C0[g], [S0[j] for j in g], b, rho, sigma,
                      ns - 1, refine, batch) for g in _split(grp, n_jobs if scheduler is None else len(grp))]
            for g, out in zip([c[4] for c in calls], _map(_run_chains, calls, n_jobs, scheduler)):
                res_fs[:, g], res_crit[:, g], res_acc[:, g] = out["fs"], out["crit"], out["accepted"]
                # chain j state t is sample t*nc + j of the new level (as fs below)
                surfaces.update({t * nc + int(g[j]): srf for (t, j), srf in out["surfaces"].items()})
                for k in counts:
                    counts[k] += out["counts"][k]
            a_hat = float(res_acc[:, grp].mean())
            lams.append(lam)
            accs.append(a_hat)
            lam = math.exp(math.log(lam) + (a_hat - _TARGET_ACCEPTANCE) / math.sqrt(r))
        gen_stats = {"acceptance": float(res_acc.mean()), "lambda": [float(x) for x in lams],
                     "acceptance_per_group": accs}
        # samples of the new level, chain j state t at flat index t*nc + j
        fs, crit = res_fs.ravel(), res_crit.ravel()
        chains_shape = (ns, nc)
        replay = _Replay(U0, res_acc, lams, n_a, spread, nc)
    return final, stop


class _Replay:
    """What rebuilding a state of the current level needs: seeds, acceptances, proposal scales."""

    def __init__(self, U0, accepted, lams, n_a, spread, nc):
        self.U0, self.accepted, self.lams, self.n_a, self.spread, self.nc = U0, accepted, lams, n_a, spread, nc

    def locate(self, flat):
        t, j = divmod(int(flat), self.nc)
        sigma = np.minimum(1.0, self.lams[j // self.n_a] * self.spread)
        rho = np.sqrt(1.0 - sigma * sigma)
        return j, self.U0[j], rho, sigma, self.accepted[:, j], t

    def state(self, layout, seed, level, flat):
        return _replay(layout, seed, level, *self.locate(flat))


# the θ sweep with subset simulation lives in rare_sweep (kept importable from here)
from .rare_sweep import theta_sweep_rare  # noqa: E402,F401
