"""Nonlinear element laws evaluated for many link segments at once.

A *segment* of a link runs between two points (nodes or boundaries). When it holds a nonlinear
part (radiation exchange, a film coefficient from a correlation), its heat flow q [W] (positive
from its first to its second point) obeys

    q = f(T_a - q R1, T_b + q R2)

where f is the part's law between its own two faces and R1, R2 [K/W] are the linear parts of the
same segment before and after it. Since df/dT1 > 0 > df/dT2, the left side minus q decreases with
slope at most -1 in q, so the root is unique and lies between 0 and f(T_a, T_b); it is found by a
safeguarded Newton iteration, vectorised over all segments. Derivatives follow by implicit
differentiation:

    dq/dT_a = f1 / (1 + f1 R1 - f2 R2),    dq/dT_b = f2 / (1 + f1 R1 - f2 R2)

with f1 = df/dT1 and f2 = df/dT2 at the solution. Radiation is differentiated exactly; film laws
from correlations by central differences of h (the correlations are not smooth functions of
their inputs at the regime limits).
"""

from __future__ import annotations

import numpy as np
from scipy.constants import zero_Celsius

from .elements import STEFAN_BOLTZMANN

__all__ = ["RadiationLaw", "FilmLaw", "SegmentLaws"]


class RadiationLaw:
    """Grey two-surface exchange q = sigma (T1^4 - T2^4) / R_s, T in kelvin.

    ``exchange_area`` = 1/R_s [m^2] with R_s = (1-e1)/(e1 A1) + 1/(A1 F12) + (1-e2)/(e2 A2)
    (Incropera et al., 6th ed., eq. 13.18, two-surface enclosure); a small body in large
    surroundings has 1/R_s = e1 A1. It was called ``surface_factor`` before, a name that clashes
    with the dimensionless surface factor of ISO 13786; that name is still accepted as a keyword
    and readable as an attribute.
    """

    key = ("radiation",)

    def __init__(self, exchange_area: float | None = None, *, surface_factor: float | None = None):
        if exchange_area is None:
            exchange_area = surface_factor
        if exchange_area is None:
            raise TypeError("RadiationLaw needs exchange_area (1/R_s [m^2])")
        self.exchange_area = exchange_area

    @property
    def surface_factor(self) -> float:
        """The former name of :attr:`exchange_area` [m^2], kept for older code."""
        return self.exchange_area

    @staticmethod
    def flow(params, t1, t2):
        T1 = t1 + zero_Celsius
        T2 = t2 + zero_Celsius
        return params["exchange_area"] * STEFAN_BOLTZMANN * (T1 ** 4 - T2 ** 4)

    @staticmethod
    def derivatives(params, t1, t2):
        k = 4.0 * params["exchange_area"] * STEFAN_BOLTZMANN
        T1 = t1 + zero_Celsius
        T2 = t2 + zero_Celsius
        return k * T1 ** 3, -k * T2 ** 3

    def params(self) -> dict:
        return {"exchange_area": self.exchange_area}


class FilmLaw:
    """Convection film with h from a named correlation: q = h(T_s, T_f) A (T1 - T2).

    ``surface_first`` says whether the surface is the part's first face (the side of the link's
    first point) or its second; it matters for horizontal plates only. ``where`` is the part's
    key path (for messages).
    """

    def __init__(self, correlation, area: float, dims: dict, surface_first: bool = True,
                 where: str = ""):
        self.correlation = correlation
        self.area = area
        self.dims = dims
        self.surface_first = surface_first
        self.where = where
        self.key = ("film", correlation.name, surface_first, dims.get("regime", "auto"))

    def params(self) -> dict:
        out = {"area": self.area}
        out.update({k: v for k, v in self.dims.items() if k != "regime"})
        return out

    def _h(self, params, t1, t2):
        dims = dict(params)
        dims["regime"] = self.key[3]
        ts, tf = (t1, t2) if self.surface_first else (t2, t1)
        return self.correlation.coefficient(ts, tf, dims)

    def flow(self, params, t1, t2):
        return self._h(params, t1, t2) * params["area"] * (t1 - t2)

    def derivatives(self, params, t1, t2):
        d = 1e-4
        t1, t2 = np.broadcast_arrays(np.asarray(t1, dtype=float), np.asarray(t2, dtype=float))
        # h and the four shifted values in one call of the correlation (arrays, not five calls)
        h, h1p, h1m, h2p, h2m = self._h(params, np.stack([t1, t1 + d, t1 - d, t1, t1]),
                                        np.stack([t2, t2, t2, t2 + d, t2 - d]))
        dh1 = (h1p - h1m) / (2 * d)
        dh2 = (h2p - h2m) / (2 * d)
        a = params["area"]
        return a * (h + (t1 - t2) * dh1), a * (-h + (t1 - t2) * dh2)


class SegmentLaws:
    """All nonlinear segments of a network, grouped by law so each group evaluates as arrays.

    Parameters
    ----------
    segments : list of (segment index, law, R1, R2)
    """

    def __init__(self, segments):
        self.seg = np.asarray([s[0] for s in segments], dtype=np.int64)
        self.R1 = np.asarray([s[2] for s in segments], dtype=float)
        self.R2 = np.asarray([s[3] for s in segments], dtype=float)
        self.laws = [s[1] for s in segments]     # the law of each segment, in order
        groups: dict = {}
        for pos, (_, law, _, _) in enumerate(segments):
            groups.setdefault(law.key, []).append((pos, law))
        self.groups = []
        for items in groups.values():
            pos = np.asarray([p for p, _ in items], dtype=np.int64)
            law = items[0][1]
            names = list(law.params())
            params = {k: np.asarray([lw.params()[k] for _, lw in items], dtype=float)
                      for k in names}
            self.groups.append((pos, law, params))

    def __len__(self) -> int:
        return self.seg.size

    def _value(self, t1, t2):
        """f of every segment's law at face temperatures t1, t2 (no derivatives)."""
        f = np.empty(np.broadcast_shapes(t1.shape, t2.shape))
        for pos, law, params in self.groups:
            f[..., pos] = law.flow(params, t1[..., pos], t2[..., pos])
        return f

    def flows(self, ta, tb):
        """Flows q only (cheaper than :meth:`solve` when no segment has series resistances)."""
        if not (self.R1.any() or self.R2.any()):
            return self._value(np.asarray(ta, dtype=float), np.asarray(tb, dtype=float))
        return self.solve(ta, tb)[0]

    def _law(self, t1, t2):
        """f, f1, f2 of every segment's law at face temperatures t1, t2 (shape (..., n))."""
        f = np.empty(np.broadcast_shapes(t1.shape, t2.shape))
        f1 = np.empty_like(f)
        f2 = np.empty_like(f)
        for pos, law, params in self.groups:
            a, b = t1[..., pos], t2[..., pos]
            f[..., pos] = law.flow(params, a, b)
            d1, d2 = law.derivatives(params, a, b)
            f1[..., pos] = d1
            f2[..., pos] = d2
        return f, f1, f2

    def solve(self, ta, tb, iterations: int = 60, tol: float = 1e-10):
        """Flows q and dq/dTa, dq/dTb for end temperatures ta, tb (arrays (..., n))."""
        ta = np.asarray(ta, dtype=float)
        tb = np.asarray(tb, dtype=float)
        R1, R2 = self.R1, self.R2
        f0, f1, f2 = self._law(ta, tb)
        if not (R1.any() or R2.any()):
            return f0, f1, f2
        lo = np.minimum(0.0, f0)
        hi = np.maximum(0.0, f0)
        q = f0 / (1.0 + f1 * R1 - f2 * R2)
        for _ in range(iterations):
            f, f1, f2 = self._law(ta - q * R1, tb + q * R2)
            g = f - q
            lo = np.where(g > 0, q, lo)
            hi = np.where(g < 0, q, hi)
            slope = 1.0 + f1 * R1 - f2 * R2
            step = g / slope
            q_new = q + step
            outside = (q_new < lo) | (q_new > hi)
            q_new = np.where(outside, 0.5 * (lo + hi), q_new)
            done = np.abs(q_new - q) <= tol * (1.0 + np.abs(q))
            q = q_new
            if done.all():
                break
        f, f1, f2 = self._law(ta - q * R1, tb + q * R2)
        slope = 1.0 + f1 * R1 - f2 * R2
        return q, f1 / slope, f2 / slope

    def linear_guess(self, ta, tb):
        """Conductance of each segment at the given end temperatures (for a first guess)."""
        q, da, _ = self.solve(ta, tb)
        return np.maximum(da, 1e-12)
