"""``slipfield fields fit``: statistics of a property fitted from profile files.

Reads one or more CSV files of readings (header ``x,depth,value``; ``x``
may be left out when each file is one profile), fits them with
:func:`fields.fitting.fit_profiles`, prints a ``[[random]]`` block ready to
paste into a case and, with ``--out DIR``, writes the block, a JSON summary
and two figures (the profiles with their trend, the fitted correlation with
the residuals' sample correlation).
"""
from __future__ import annotations

import csv
import json
import math
from pathlib import Path

import numpy as np

from .errors import InputError
from .fitting import TRENDS, Profile, fit_profiles
from .models import MODEL_NAMES, get_model

__all__ = ["read_profile_csv", "run_fit", "add_fit_parser", "OUTPUT_FILES"]

#: files written by ``--out`` (nothing else is touched in that folder)
OUTPUT_FILES = ("random_block.toml", "fit.json", "fit_profiles.png", "fit_correlation.png")


def read_profile_csv(path):
    """Profiles of one CSV file: header ``x,depth,value`` (``x`` optional).

    Returns
    -------
    list of Profile
        One per distinct x (m), readings sorted by depth.

    Raises
    ------
    InputError
        Missing file or columns, or a row that is not numbers (file and row
        named, counting the header as row 1).
    """
    p = Path(path)
    if not p.is_file():
        raise InputError(f"profile file {str(p)!r} does not exist; give a CSV with columns x,depth,value")
    with p.open(newline="", encoding="utf-8-sig") as fh:
        rows = list(csv.reader(fh))
    if not rows:
        raise InputError(f"{p.name}: the file is empty; give a header x,depth,value and one reading per row")
    head = [h.strip().lower() for h in rows[0]]
    for need in ("depth", "value"):
        if need not in head:
            raise InputError(f"{p.name}: the header has no {need!r} column (found {', '.join(head)}); "
                             "name the columns x,depth,value (x optional)")
    ix = head.index("x") if "x" in head else None
    iz, iv = head.index("depth"), head.index("value")
    data = {}
    for r, row in enumerate(rows[1:], start=2):
        if not any(c.strip() for c in row):
            continue
        try:
            x = float(row[ix]) if ix is not None else 0.0
            z, v = float(row[iz]), float(row[iv])
            if not all(math.isfinite(t) for t in (x, z, v)):
                raise ValueError
        except (ValueError, IndexError):
            raise InputError(f"{p.name}, row {r}: {','.join(row)!r} is not three numbers for "
                             f"{'x,' if ix is not None else ''}depth,value; fix or delete the row") from None
        data.setdefault(x, []).append((z, v))
    if not data:
        raise InputError(f"{p.name}: no readings below the header")
    return [Profile(x, [t[0] for t in d], [t[1] for t in d], name=f"{p.name} at x = {x:g} m")
            for x, d in sorted(data.items())]


def _sample_correlation(fit, profiles, n_bins=25):
    """Sample correlation of the residuals at vertical lags (pairs within a profile)."""
    lags, prods = [], []
    var = fit.sigma ** 2
    for pr in profiles:
        v = np.log(pr.value) if fit.log else pr.value
        m = fit.intercept + fit.gradient * (pr.depth - fit.z_ref)
        r = v - m
        d = np.abs(pr.depth[:, None] - pr.depth[None, :])
        iu = np.triu_indices(r.size)
        lags.append(d[iu])
        prods.append((r[:, None] * r[None, :])[iu] / var)
    lag, prod = np.concatenate(lags), np.concatenate(prods)
    top = min(lag.max(), 4 * fit.theta_v_ci[1], 0.5 * lag.max())
    edges = np.linspace(0, top, n_bins + 1)
    k = np.digitize(lag, edges) - 1
    ok = (k >= 0) & (k < n_bins)
    cnt = np.bincount(k[ok], minlength=n_bins)
    s = np.bincount(k[ok], weights=prod[ok], minlength=n_bins)
    mid = np.where(cnt > 0, np.bincount(k[ok], weights=lag[ok], minlength=n_bins) / np.maximum(cnt, 1), np.nan)
    return mid[cnt > 0], (s / np.maximum(cnt, 1))[cnt > 0], top


def _figures(fit, profiles, folder):
    from matplotlib.figure import Figure

    fig = Figure(figsize=(5.0, 6.0))
    ax = fig.add_subplot()
    zmax = max(pr.depth.max() for pr in profiles)
    zz = np.linspace(0, zmax, 100)
    for pr in profiles:
        ax.plot(pr.value, pr.depth, ".", ms=3, label=pr.name)
    t = fit.trend_at(zz)
    ax.plot(t, zz, "k-", lw=1.5, label="fitted trend")
    if fit.log:
        band = (t * np.exp(-1.96 * fit.sigma), t * np.exp(1.96 * fit.sigma))
    else:
        band = (t - 1.96 * fit.sigma, t + 1.96 * fit.sigma)
    ax.plot(band[0], zz, "k--", lw=0.8, label="trend ± 1.96 σ")
    ax.plot(band[1], zz, "k--", lw=0.8)
    ax.invert_yaxis()
    ax.set_xlabel("measured value (property units)")
    ax.set_ylabel("depth below ground (m)")
    ax.set_title(f"{fit.n_points} readings, {fit.trend} trend, COV {fit.cov:.2f}")
    ax.legend(fontsize=7)
    fig.tight_layout()
    fig.savefig(folder / "fit_profiles.png", dpi=120)

    lag, rho_hat, top = _sample_correlation(fit, profiles)
    fig = Figure(figsize=(6.0, 4.0))
    ax = fig.add_subplot()
    tau = np.linspace(0, top, 200)
    kw = {} if fit.nu is None else {"nu": fit.nu}
    ax.plot(lag, rho_hat, "o", ms=4, label="residuals (sample, within profiles)")
    ax.plot(tau, get_model(fit.model, theta_h=fit.theta_v, **kw).rho(tau / fit.theta_v), "k-",
            label=f"{fit.model}, θv = {fit.theta_v:.3g} m (REML)")
    for end, style in zip(fit.theta_v_ci, ("--", ":")):
        ax.plot(tau, get_model(fit.model, theta_h=end, **kw).rho(tau / end), "k" + style, lw=0.8,
                label=f"θv = {end:.3g} m ({fit.level:.0%} interval end)")
    ax.axhline(0, color="0.6", lw=0.5)
    ax.set_xlabel("vertical lag τ (m)")
    ax.set_ylabel("correlation ρ(τ)")
    ax.legend(fontsize=7)
    fig.tight_layout()
    fig.savefig(folder / "fit_correlation.png", dpi=120)


def _output_folder(out: Path) -> Path:
    """``--out`` checked up front: a folder (new or existing) without any of :data:`OUTPUT_FILES`."""
    if out.is_symlink() or (out.exists() and not out.is_dir()):
        raise InputError(f"--out {str(out)!r} is {'a symbolic link' if out.is_symlink() else 'an existing file'}, "
                         "not a folder; give a folder name")
    taken = [n for n in OUTPUT_FILES if (out / n).exists()]
    if taken:
        raise InputError(f"--out {str(out)!r} already holds {', '.join(taken)}; choose another "
                         "folder (slipfield never overwrites files)")
    return out


def run_fit(args) -> int:
    """Fit the profiles named on the command line and print/write the results."""
    out = None if args.out is None else _output_folder(Path(args.out))  # checked before any work
    profiles = []
    for f in args.files:
        profiles += read_profile_csv(f)
    xs = [pr.x for pr in profiles]
    if len(set(xs)) != len(xs):
        raise InputError("two profiles stand at the same x; give each file an x column with the "
                         "profile's position (m), or merge the readings into one profile")
    if args.nu is not None and args.model != "matern":
        raise InputError(f"--nu is the Matérn smoothness; the {args.model} model has none: drop --nu "
                         "or use --model matern")
    if args.theta_h is not None and len(set(xs)) > 1:
        raise InputError("--theta-h is for a single profile; with profiles at several x the fit "
                         "estimates θh: drop --theta-h")
    fit = fit_profiles(profiles, model=args.model, trend=args.trend, log=args.log, nu=args.nu,
                       level=args.level)
    th = args.theta_h
    if th is not None and not (th > 0 and math.isfinite(th)):
        raise InputError(f"--theta-h must be > 0 (m), got {th!r}")
    block = fit.random_block(args.material, args.property, theta_h=th)
    if out is not None:
        out.mkdir(parents=True, exist_ok=True)
        _figures(fit, profiles, out)
        (out / "fit.json").write_text(json.dumps(fit.to_dict(), indent=2) + "\n")
        (out / "random_block.toml").write_text(block)
    print(block, end="")
    if out is not None:
        print(f"# wrote {', '.join(OUTPUT_FILES)} to {out}")
    return 0


def add_fit_parser(sub):
    """Add ``fit`` to the ``fields`` subcommands."""
    f = sub.add_parser("fit", help="fit trend, COV and scales of fluctuation to profiles",
                       description="Fit the trend with depth, the COV and θv (θh with profiles at "
                                   "several x) to CSV profiles (columns x,depth,value) by "
                                   "restricted maximum likelihood, and print a [[random]] block.")
    f.add_argument("files", nargs="+", help="CSV files with columns x,depth,value (x optional)")
    f.add_argument("--model", default="exponential", choices=list(MODEL_NAMES),
                   help="correlation model (default exponential)")
    f.add_argument("--nu", type=float, help="Matérn smoothness ν (matern only)")
    f.add_argument("--trend", default="linear", choices=list(TRENDS),
                   help="mean constant or linear with depth (default linear)")
    f.add_argument("--log", action="store_true",
                   help="fit the logarithm of the values (a lognormal property)")
    f.add_argument("--level", type=float, default=0.95,
                   help="confidence level of the θ intervals (default 0.95)")
    f.add_argument("--material", default="MATERIAL", help="material name written in the block")
    f.add_argument("--property", default="PROPERTY", help="property written in the block (c, phi, su...)")
    f.add_argument("--theta-h", type=float,
                   help="θh (m) to write when the profiles cannot estimate it (one x)")
    f.add_argument("--out", help="folder for random_block.toml, fit.json and the two figures")
    f.set_defaults(func=run_fit)
    return f
