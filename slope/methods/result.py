"""Result of a method of slices: factors of safety and their status."""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

__all__ = ["FSResult", "FLAG_NAMES", "NEGATIVE_NORMAL", "SMALL_M_ALPHA",
           "THRUST_OUTSIDE", "NONPOSITIVE", "INVALID_SURFACE", "NEGATIVE_STRENGTH",
           "BEYOND_POLE"]

#: effective base normal force below zero on at least one slice
NEGATIVE_NORMAL = 1
#: Bishop / Janbu: m_alpha = cos(a) + sin(a) tan(phi) / F <= 0.2 on a slice
SMALL_M_ALPHA = 2
#: Spencer / Morgenstern-Price: line of thrust below the base or above the
#: ground at an interior slice boundary
THRUST_OUTSIDE = 4
#: F not positive or not finite (no driving moment, or the solver diverged)
NONPOSITIVE = 8
#: the surface was rejected when the bank was built (see ``bank.reason``)
INVALID_SURFACE = 16
#: Spencer / Morgenstern-Price: slice bases whose Mohr-Coulomb strength
#: c l + N' tan(phi) is negative (effective normal tension beyond the apex of
#: the envelope, so the base would push the mass along its motion) cancel
#: more than half of the strength of the other bases
#: (:data:`slope.methods.gle.NEGATIVE_STRENGTH_FRACTION`). No soil can do
#: this; unlike a small negative N' (NEGATIVE_NORMAL, tolerated by the
#: searches under cohesive crests) it marks a spurious root of the
#: equilibrium equations (e.g. on circles with no driving moment, whose
#: physical F is unbounded).
NEGATIVE_STRENGTH = 32

#: Spencer / Morgenstern-Price: on a slice, F cos(a) + tan(phi) sin(a) - lam
#: f (tan(phi) cos(a) - F sin(a)) <= 0 (Spencer: F cos(a - theta) + tan(phi)
#: sin(a - theta) <= 0), the analogue of Bishop's m_alpha <= 0: the slice's
#: interslice resultant has turned past the normal to its base, so the root
#: was reached across a pole of the slice forces (infinite Q on that slice).
#: Such roots exist between every two poles and depend on where Newton
#: starts; none is on the physical branch of Spencer's (1967) F(theta) curves.
BEYOND_POLE = 64

FLAG_NAMES = {
    NEGATIVE_NORMAL: "negative effective base normal force",
    SMALL_M_ALPHA: "m_alpha <= 0.2 on a slice",
    THRUST_OUTSIDE: "line of thrust outside the slice",
    NONPOSITIVE: "factor of safety not positive or not finite",
    INVALID_SURFACE: "surface rejected by the slice bank",
    NEGATIVE_STRENGTH: "negative shear strength on slice bases",
    BEYOND_POLE: "interslice resultant past the normal to a slice base",
}


@dataclass
class FSResult:
    """Factors of safety of a bank of surfaces for many strength samples.

    Every factor of safety comes with its status: ``converged`` (the
    iteration met its tolerance) and ``admissible`` (no flag raised). Use
    :meth:`status` for the counts, :meth:`critical` for the smallest
    trustworthy factor of safety per sample.

    Attributes
    ----------
    method : str
        Method name (``ordinary``, ``bishop``, ``janbu``, ``spencer``,
        ``morgenstern-price``).
    fs : ndarray, shape (n_samples, n_surfaces), -
        Factor of safety (the last iterate where not converged; NaN for
        rejected surfaces).
    converged : ndarray of bool, shape (n_samples, n_surfaces)
    admissible : ndarray of bool, shape (n_samples, n_surfaces)
        True where ``flags == 0``.
    flags : ndarray of int, shape (n_samples, n_surfaces)
        Bit mask of the reasons a solution is inadmissible, see
        :data:`FLAG_NAMES`.
    iterations : ndarray of int, shape (n_samples, n_surfaces)
    lam : ndarray or None, shape (n_samples, n_surfaces), -
        Interslice force ratio: ``X = lam * f(x) * E`` (Spencer: ``tan`` of
        the interslice force inclination). None for the other methods.
    f0 : ndarray or None
        Janbu's correction factor applied to the uncorrected value.
    normal_eff : ndarray or None, shape (n_samples, n_surfaces, n_slices), kN/m
        Effective base normal force ``N - u l`` (on request).
    E, X : ndarray or None, shape (n_samples, n_surfaces, n_slices + 1), kN/m
        Interslice normal and shear force at the slice boundaries (on request,
        Spencer / Morgenstern-Price). ``E`` pushes toward +x' on the slice
        downslope of the boundary; ``X`` pushes that slice downward.
    thrust_y : ndarray or None, shape (n_samples, n_surfaces, n_slices + 1), m
        Elevation of the line of thrust at the boundaries (NaN at the two ends,
        where ``E = 0``).
    """

    method: str
    fs: np.ndarray
    converged: np.ndarray
    flags: np.ndarray
    iterations: np.ndarray
    lam: np.ndarray | None = None
    f0: np.ndarray | None = None
    normal_eff: np.ndarray | None = None
    E: np.ndarray | None = None
    X: np.ndarray | None = None
    thrust_y: np.ndarray | None = None
    options: dict = field(default_factory=dict)

    @property
    def admissible(self) -> np.ndarray:
        return self.flags == 0

    @property
    def ok(self) -> np.ndarray:
        """Converged and admissible, shape (n_samples, n_surfaces)."""
        return self.converged & (self.flags == 0)

    def status(self) -> dict:
        """Counts of the status of all (sample, surface) results.

        Returns
        -------
        dict
            ``total``, ``converged``, ``not_converged``, ``admissible``,
            ``inadmissible``, ``ok`` (converged and admissible) and one count
            per flag name (a result may carry several flags).
        """
        out = {
            "total": int(self.fs.size),
            "converged": int(self.converged.sum()),
            "not_converged": int((~self.converged).sum()),
            "admissible": int((self.flags == 0).sum()),
            "inadmissible": int((self.flags != 0).sum()),
            "ok": int(self.ok.sum()),
        }
        for bit, name in FLAG_NAMES.items():
            out[name] = int(((self.flags & bit) != 0).sum())
        return out

    def summary(self) -> str:
        """One-paragraph text of :meth:`status`."""
        s = self.status()
        parts = [f"{self.method}: {s['total']} results, {s['ok']} converged and admissible",
                 f"{s['not_converged']} not converged", f"{s['inadmissible']} inadmissible"]
        reasons = [f"{name}: {s[name]}" for name in FLAG_NAMES.values() if s[name]]
        text = ", ".join(parts)
        if reasons:
            text += " (" + "; ".join(reasons) + ")"
        return text

    def critical(self, require_ok: bool = True):
        """Smallest factor of safety over the surfaces, per sample.

        Parameters
        ----------
        require_ok : bool
            Consider only converged, admissible results (default). Samples
            with none get NaN and index -1; count them with ``np.isnan``.

        Returns
        -------
        fs_min : ndarray, shape (n_samples,), -
        index : ndarray of int, shape (n_samples,)
            Surface index of the minimum.
        """
        mask = self.ok if require_ok else np.isfinite(self.fs)
        masked = np.where(mask, self.fs, np.inf)
        index = np.argmin(masked, axis=1)
        fs_min = np.take_along_axis(masked, index[:, None], axis=1)[:, 0]
        none = ~mask.any(axis=1)
        fs_min = np.where(none, np.nan, fs_min)
        index = np.where(none, -1, index)
        return fs_min, index
