"""Radiation exchange among grey diffuse surfaces: enclosures and one surface seeing surroundings.

An *enclosure* of N opaque, grey, diffuse surfaces with uniform radiosity J_i is the radiosity
network of Incropera et al. [1]_ section 13.3: each surface's blackbody emissive power
E_b,i = sigma T_i^4 joins its radiosity node through the surface resistance (1 - e_i)/(e_i A_i), and
radiosity nodes join each other through space resistances 1/(A_i F_ij). The network is linear in
E_b, so eliminating the radiosities gives, exactly and for all temperatures,

    q_i = sum_j M_ij E_b,j = sum_j S_ij sigma (T_i^4 - T_j^4)

with M symmetric, rows summing to zero, and S_ij = -M_ij >= 0 the *exchange areas* [m^2] (the
total exchange areas of Hottel's zone method). An enclosure is thus a set of two-surface grey-body
exchanges, one per pair, each of the form sigma (T_i^4 - T_j^4) / R with 1/R = S_ij: this is how
it joins a network (see :meth:`Enclosure.pairs`). Black surfaces (emissivity 1) have J = E_b;
*reradiating* (adiabatic, "insulated") surfaces have no surface resistance and no net flow; their
temperature follows from J = sigma T^4. Large surroundings are a surface of infinite area
(black whatever their emissivity).

One surface (emissivity e, area A) seeing several large or black surroundings at T_j with view
factors F_j (sum at most 1) is the star network of one surface resistance and space resistances
1/(A F_j); its exact result is (Incropera et al. [1]_ eq. 13.21 generalised)

    q = e sigma A sum_j F_j (T^4 - T_j^4)

:func:`surroundings_exchange_areas` gives that star as pairwise exchange areas: e A F_j between
the surface and each surrounding and (1 - e) A F_j F_k between two surroundings (radiation of one
reflected by the surface onto the other). The part 1 - sum F_j of the view not listed is taken to
see surroundings at the surface's own temperature (it exchanges nothing with the surface).

Temperatures are in degC at the interface (kelvin inside), flows in W, areas in m^2.

References
----------
.. [1] F. P. Incropera, D. P. DeWitt, T. L. Bergman, A. S. Lavine, *Fundamentals of Heat and Mass
   Transfer*, 6th ed., Wiley, 2007, sections 13.2-13.3 (eqs. 13.18-13.25, radiosity networks,
   the reradiating surface). Cited from memory.
.. [2] H. C. Hottel, A. F. Sarofim, *Radiative Transfer*, McGraw-Hill, 1967, ch. 3 and 7 (total
   exchange areas). Cited from memory.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .elements import STEFAN_BOLTZMANN
from .errors import InputError
from .viewfactors.enclosures import check_view_factors

__all__ = [
    "STEFAN_BOLTZMANN",
    "surface_resistance",
    "space_resistance",
    "Enclosure",
    "exchange_areas",
    "net_heat_flows",
    "surroundings_exchange_areas",
    "surface_to_surroundings",
    "SurroundingsExchange",
    "separate_links_flow",
    "separate_links_excess",
    "linearised_conductance",
    "check_emissivity",
]

_ZERO_CELSIUS = 273.15
_BLACK = 1.0 - 1e-9   # emissivities above this are treated as black (J = E_b)


def _kelvin(t):
    return np.asarray(t, dtype=float) + _ZERO_CELSIUS


def surface_resistance(emissivity, area):
    r"""Surface resistance of a grey diffuse surface (1 - e)/(e A) [1/m^2].

    Source: Incropera et al. [1]_ eq. 13.19.

    >>> round(surface_resistance(0.8, 0.5), 6)
    0.5
    """
    e = np.asarray(emissivity, dtype=float)
    out = (1.0 - e) / (e * np.asarray(area, dtype=float))
    return float(out) if out.ndim == 0 else out


def space_resistance(area, view_factor):
    r"""Space (geometric) resistance 1/(A_i F_ij) [1/m^2]. Source: Incropera et al. [1]_ eq. 13.20.

    >>> space_resistance(2.0, 0.25)
    2.0
    """
    out = 1.0 / (np.asarray(area, dtype=float) * np.asarray(view_factor, dtype=float))
    return float(out) if out.ndim == 0 else out


def check_emissivity(value, where: str = "emissivity") -> float:
    """Return ``value`` as a float in (0, 1], else raise :class:`InputError`.

    >>> check_emissivity(0.9)
    0.9
    """
    try:
        e = float(value)
    except (TypeError, ValueError):
        raise InputError(f"emissivity must be a number, got {value!r}", where) from None
    if not (0.0 < e <= 1.0):
        raise InputError(f"emissivity must be in (0, 1], got {e:g}", where,
                         "a grey surface has 0 < emissivity <= 1: polished metal about 0.05, "
                         "paint and foam about 0.9")
    return e


class Enclosure:
    """A grey diffuse enclosure of N surfaces, reduced exactly to exchange areas.

    Parameters
    ----------
    areas : sequence of float
        Surface areas [m^2]; ``inf`` for large surroundings (black whatever the emissivity;
        their row of view factors is 0 apart from 1 on the diagonal).
    emissivities : sequence of float
        Emissivities in (0, 1]; ignored (may be NaN) for reradiating surfaces.
    view_factors : (N, N) array
        F_ij; checked for reciprocity and summation (closed enclosure) by
        :func:`rcsim.viewfactors.check_view_factors` with ``tolerance``.
    names : sequence of str, optional
        Surface names, used in messages.
    reradiating : sequence of bool, optional
        True for adiabatic surfaces (no net flow; their temperature is an output).
    where : str
        Key path used in messages.

    Attributes
    ----------
    exchange : (N, N) array
        M with q = M E_b [m^2] (rows and columns of reradiating surfaces are zero).
    exchange_areas : (N, N) array
        S_ij = -M_ij (i != j), symmetric, zero diagonal [m^2].
    active : (K,) int array
        Indices of the surfaces with a temperature (not reradiating).

    Examples
    --------
    Two concentric spheres: the exchange area is the inverse of the series resistances
    (1-e1)/(e1 A1) + 1/(A1 F12) + (1-e2)/(e2 A2) (Incropera et al. [1]_ eq. 13.18):

    >>> from rcsim.viewfactors import concentric_spheres
    >>> a, f = concentric_spheres(0.1, 0.2)
    >>> enc = Enclosure(a, [0.5, 0.5], f)
    >>> s12 = enc.exchange_areas[0, 1]
    >>> round(float(s12), 6), round(float(1 / (1 / (0.5 * a[0]) + 0.5 / (0.5 * a[1]))), 6)
    (0.055851, 0.055851)
    """

    def __init__(self, areas, emissivities, view_factors, *, names=None, reradiating=None,
                 where: str = "enclosure", tolerance: float = 0.01):
        A, F = check_view_factors(areas, view_factors, names=names, closed=True,
                                  tolerance=tolerance, where=f"{where}.view_factors")
        n = A.size
        self.names = tuple(names) if names is not None else tuple(f"surface {i}" for i in range(n))
        rerad = np.zeros(n, dtype=bool) if reradiating is None else \
            np.asarray(reradiating, dtype=bool)
        if rerad.shape != (n,):
            raise InputError(f"reradiating must give one true/false per surface ({n})",
                             f"{where}.reradiating")
        eps = np.asarray(emissivities, dtype=float)
        if eps.shape != (n,):
            raise InputError(f"{eps.size} emissivities for {n} surfaces", f"{where}.emissivities")
        big = np.isinf(A)
        if (big & rerad).any():
            raise InputError("large surroundings (infinite area) cannot be reradiating",
                             f"{where}.reradiating")
        for i in np.flatnonzero(~rerad & ~big):
            check_emissivity(eps[i], f"{where}.emissivities[{i}] ({self.names[i]!r})")
        self.areas, self.view_factors, self.reradiating = A, F, rerad
        self.emissivities = np.where(big, 1.0, np.where(rerad, np.nan, eps))
        self.active = np.flatnonzero(~rerad)
        if self.active.size == 0:
            raise InputError("every surface is reradiating, so nothing drives the exchange",
                             f"{where}.reradiating", "give at least one surface a temperature")
        self._reduce(where)

    # -- the reduction ---------------------------------------------------------------------
    def _space_conductances(self):
        """g_ij = A_i F_ij [m^2], symmetrised (infinite areas: the finite side's value)."""
        A, F = self.areas, self.view_factors
        fin = np.isfinite(A)
        Af = np.where(fin[:, None], np.where(fin, A, 0.0)[:, None] * F, np.nan)
        g = np.where(fin[:, None] & fin[None, :], 0.5 * (Af + Af.T),
                     np.where(fin[:, None], Af, Af.T))
        g = np.nan_to_num(g, nan=0.0)
        np.fill_diagonal(g, 0.0)
        return g

    def _check_reradiating_reach(self, g, where: str) -> None:
        """Every reradiating surface must see, directly or through others, a surface with a
        temperature; otherwise its radiosity is undefined (a singular network)."""
        from scipy.sparse.csgraph import connected_components

        _, label = connected_components(g > 0, directed=False)
        anchored = set(label[self.active].tolist())
        stuck = [self.names[i] for i in np.flatnonzero(self.reradiating)
                 if label[i] not in anchored]
        if stuck:
            raise InputError(f"reradiating surfaces {', '.join(map(repr, stuck[:4]))} see no "
                             "surface with a temperature", f"{where}.view_factors",
                             "a reradiating surface needs a view to a heated or cooled one")

    def _reduce(self, where: str) -> None:
        n = self.areas.size
        g = self._space_conductances()
        L = np.diag(g.sum(axis=1)) - g
        eps = self.emissivities
        black = ~self.reradiating & (eps > _BLACK)
        unknown = np.flatnonzero(~black)                # grey and reradiating: J unknown
        known = np.flatnonzero(black)
        gs = np.zeros(n)
        grey = ~black & ~self.reradiating
        gs[grey] = eps[grey] * self.areas[grey] / (1.0 - eps[grey])   # 1 / surface resistance
        X = np.zeros((n, n))                             # J = X E_b
        X[known, known] = 1.0
        if unknown.size:
            a_uu = L[np.ix_(unknown, unknown)] + np.diag(gs[unknown])
            rhs = np.zeros((unknown.size, n))
            rhs[np.arange(unknown.size), unknown] = gs[unknown]
            rhs[:, known] = -L[np.ix_(unknown, known)]
            self._check_reradiating_reach(g, where)
            X[unknown] = np.linalg.solve(a_uu, rhs)
        M = np.zeros((n, n))
        M[grey] = gs[grey, None] * (np.eye(n)[grey] - X[grey])
        M[black] = L[black] @ X
        M[:, self.reradiating] = 0.0
        S = -0.5 * (M + M.T)
        np.fill_diagonal(S, 0.0)
        S = np.maximum(S, 0.0)                           # round-off only
        self.exchange_areas = S
        self.exchange = np.diag(S.sum(axis=1)) - S
        self._radiosity_map = X

    # -- evaluation ------------------------------------------------------------------------
    def _active_kelvin(self, temperatures):
        T = np.asarray(temperatures, dtype=float)
        n, k = self.areas.size, self.active.size
        if T.shape[-1:] == (n,):
            T = T[..., self.active]
        elif T.shape[-1:] != (k,):
            raise InputError(f"expected {n} surface temperatures (or {k} without the reradiating "
                             f"ones) in the last axis, got shape {T.shape}", "temperatures")
        return T + _ZERO_CELSIUS

    def heat_flows(self, temperatures):
        """Net heat flow leaving each surface [W], shape (..., N); 0 for reradiating ones.

        ``temperatures`` [degC] has shape (..., N) (entries of reradiating surfaces unused) or
        (..., K) with K the active surfaces.
        """
        Tk = self._active_kelvin(temperatures)
        Ma = self.exchange[np.ix_(self.active, self.active)]
        q = np.zeros(Tk.shape[:-1] + (self.areas.size,))
        q[..., self.active] = (STEFAN_BOLTZMANN * Tk ** 4) @ Ma.T
        return q

    def jacobian(self, temperatures):
        """dq_i/dT_j [W/K], shape (..., N, N) (rows and columns of reradiating surfaces zero)."""
        Tk = self._active_kelvin(temperatures)
        n, act = self.areas.size, self.active
        d = 4.0 * STEFAN_BOLTZMANN * Tk ** 3
        J = np.zeros(Tk.shape[:-1] + (n, n))
        J[..., act[:, None], act[None, :]] = self.exchange[np.ix_(act, act)] * d[..., None, :]
        return J

    def radiosities(self, temperatures):
        """Radiosity J of every surface [W/m^2], shape (..., N)."""
        Tk = self._active_kelvin(temperatures)
        return (STEFAN_BOLTZMANN * Tk ** 4) @ self._radiosity_map[:, self.active].T

    def surface_temperatures(self, temperatures):
        """All surface temperatures [degC]: the given ones and those of reradiating surfaces
        (sigma T^4 = J, Incropera et al. [1]_ section 13.3.3)."""
        Tk = self._active_kelvin(temperatures)
        out = (self.radiosities(temperatures) / STEFAN_BOLTZMANN) ** 0.25 - _ZERO_CELSIUS
        out[..., self.active] = Tk - _ZERO_CELSIUS
        return out

    def pairs(self, threshold: float = 0.0):
        """(i, j, S_ij) for every pair i < j of active surfaces with S_ij > ``threshold`` [m^2].

        Each pair is one grey-body exchange sigma S_ij (T_i^4 - T_j^4), the ``surface_factor`` of
        a two-surface radiation law; together they reproduce :meth:`heat_flows` exactly.
        """
        act = self.active
        out = []
        for a, i in enumerate(act):
            for j in act[a + 1:]:
                s = float(self.exchange_areas[i, j])
                if s > threshold:
                    out.append((int(i), int(j), s))
        return out

    def linearised_conductances(self, temperatures):
        """Pair conductances [W/K] linearised at ``temperatures`` [degC]: (..., K, K) for the
        active surfaces, G_ij = S_ij sigma (T_i^2 + T_j^2)(T_i + T_j), zero diagonal (see
        :func:`linearised_conductance`); G_ij (T_i - T_j) is the exact pair flow there."""
        Tk = self._active_kelvin(temperatures)
        Ti, Tj = Tk[..., :, None], Tk[..., None, :]
        S = self.exchange_areas[np.ix_(self.active, self.active)]
        return S * STEFAN_BOLTZMANN * (Ti * Ti + Tj * Tj) * (Ti + Tj)

    def heat_flows_through(self, node_temperatures, series_resistances, *, tol: float = 1e-9,
                           iterations: int = 50):
        """Flows when each active surface sits behind a linear resistance from its node.

        Solves theta = T - R q(theta) for the face temperatures theta (Newton, vectorised over the
        leading axes), then dq/dT = (I + J_q R)^-1 J_q by implicit differentiation (J_q the
        enclosure's own Jacobian at theta). This is the core of a multi-terminal law whose
        terminals are nodes joined to the radiating faces by conduction or contact parts.

        Parameters
        ----------
        node_temperatures : (..., K) array
            Temperatures of the nodes behind the K active surfaces [degC].
        series_resistances : (K,) array
            Resistance from each node to its face [K/W] (0: the node is the face).

        Returns
        -------
        q : (..., K) array
            Heat flow leaving each active surface [W].
        dq_dT : (..., K, K) array
            d q_i / d T_node,j [W/K].
        faces : (..., K) array
            Face temperatures [degC].
        """
        T = np.asarray(node_temperatures, dtype=float)
        R = np.asarray(series_resistances, dtype=float)
        k = self.active.size
        if T.shape[-1:] != (k,) or R.shape != (k,):
            raise InputError(f"expected {k} node temperatures and {k} resistances (one per "
                             "surface with a temperature)", "series_resistances")
        if (R < 0).any() or not np.isfinite(R).all():
            raise InputError("series resistances must be finite and non-negative",
                             "series_resistances")
        Ma = self.exchange[np.ix_(self.active, self.active)]
        eye = np.eye(k)
        Tk = T + _ZERO_CELSIUS
        th = Tk.copy()
        for _ in range(iterations):
            q = (STEFAN_BOLTZMANN * th ** 4) @ Ma.T
            jq = Ma * (4.0 * STEFAN_BOLTZMANN * th ** 3)[..., None, :]
            resid = th - Tk + R * q
            step = np.linalg.solve(eye + R[:, None] * jq, resid[..., None])[..., 0]
            # keep every face above half its kelvin temperature (a damped step)
            limit = np.max(np.abs(step) / (0.5 * th), axis=-1, keepdims=True)
            th = th - step / np.maximum(1.0, limit)
            if np.all(np.abs(step) <= tol * (1.0 + np.abs(th))):
                break
        q = (STEFAN_BOLTZMANN * th ** 4) @ Ma.T
        jq = Ma * (4.0 * STEFAN_BOLTZMANN * th ** 3)[..., None, :]
        dq = np.linalg.solve(eye + jq * R[None, :], jq)
        return q, dq, th - _ZERO_CELSIUS


def exchange_areas(areas, emissivities, view_factors, reradiating=None):
    """Exchange areas S [m^2] of a grey diffuse enclosure (see :class:`Enclosure`).

    >>> import numpy as np
    >>> s = exchange_areas([1.0, 1.0], [1.0, 1.0], [[0.0, 1.0], [1.0, 0.0]])
    >>> s.tolist()
    [[0.0, 1.0], [1.0, 0.0]]
    """
    return Enclosure(areas, emissivities, view_factors, reradiating=reradiating).exchange_areas


def net_heat_flows(temperatures, areas, emissivities, view_factors, reradiating=None):
    """Net heat flow leaving each surface [W] at ``temperatures`` [degC] (see :class:`Enclosure`).

    >>> round(float(net_heat_flows([100.0, 0.0], [1.0, 1.0], [1.0, 1.0],
    ...                            [[0.0, 1.0], [1.0, 0.0]])[0]), 2)
    783.72
    """
    return Enclosure(areas, emissivities, view_factors,
                     reradiating=reradiating).heat_flows(temperatures)


# -- one surface seeing several surroundings ----------------------------------------------------
def _check_sees(emissivity, area, view_factors, where):
    e = check_emissivity(emissivity, f"{where}.emissivity")
    try:
        a = float(area)
    except (TypeError, ValueError):
        raise InputError(f"area must be a number, got {area!r}", f"{where}.area") from None
    if not (a > 0 and np.isfinite(a)):
        raise InputError(f"area must be positive, got {area!r}", f"{where}.area")
    F = np.atleast_1d(np.asarray(view_factors, dtype=float))
    if F.ndim != 1 or F.size == 0:
        raise InputError("sees needs at least one view factor", f"{where}.sees")
    for j, f in enumerate(F):
        if not (0.0 < f <= 1.0):
            raise InputError(f"view factor {f:g} outside (0, 1]", f"{where}.sees[{j}].view_factor")
    total = float(F.sum())
    if total > 1.0 + 1e-9:
        raise InputError(f"view factors sum to {total:.4g} > 1", f"{where}.sees",
                         "a surface cannot send more than all its radiation; lower them so "
                         "they sum to 1 at most")
    return e, a, F


def surroundings_exchange_areas(emissivity, area, view_factors, where: str = "radiation"):
    """Exchange areas [m^2] of one grey surface seeing black (or large) surroundings.

    Returns
    -------
    to_surroundings : (n,) array
        e A F_j: the surface to each surrounding.
    between : (n, n) array
        (1 - e) A F_j F_k: between two surroundings, by reflection off the surface (zero
        diagonal). Between two boundaries it changes no node and may be left out of a network.

    Notes
    -----
    The star network (one surface resistance (1-e)/(eA), space resistances 1/(A F_j), and
    1/(A(1 - sum F)) to surroundings at the surface's own temperature) reduced to a mesh: the
    conductance between two ends is the product of their conductances to the star's centre over
    the sum of all of them, A/(1-e) (closed form derived here).

    >>> t, b = surroundings_exchange_areas(0.5, 1.0, [0.5, 0.5])
    >>> t.tolist(), b.tolist()
    ([0.25, 0.25], [[0.0, 0.125], [0.125, 0.0]])
    """
    e, a, F = _check_sees(emissivity, area, view_factors, where)
    between = (1.0 - e) * a * np.outer(F, F)
    np.fill_diagonal(between, 0.0)
    return e * a * F, between


@dataclass
class SurroundingsExchange:
    """Result of :func:`surface_to_surroundings` (flows in W, derivatives in W/K).

    ``surface`` leaves the surface; ``received`` reaches each surrounding (it sums to
    ``surface``); ``d_surface`` = dq/dT_surface; ``d_surroundings`` = dq/dT_j.
    """

    surface: np.ndarray
    received: np.ndarray
    d_surface: np.ndarray
    d_surroundings: np.ndarray


def surface_to_surroundings(surface_temperature, surroundings_temperatures, emissivity, area,
                            view_factors, where: str = "radiation") -> SurroundingsExchange:
    r"""Exact exchange of one grey surface with black (or large) surroundings.

    .. math:: q = \varepsilon\sigma A\sum_j F_j (T^4 - T_j^4)

    Parameters
    ----------
    surface_temperature : float or (...,) array
        T [degC].
    surroundings_temperatures : (..., n) array
        T_j [degC].
    emissivity, area : float
        Of the surface; 0 < e <= 1, A > 0 [m^2].
    view_factors : (n,) array
        F_j, each in (0, 1], summing to at most 1.

    Notes
    -----
    Source: Incropera et al. [1]_ eq. 13.21 (small surface, large surroundings) with the
    surroundings split by view factor; the star network of :func:`surroundings_exchange_areas`
    gives the same.

    Examples
    --------
    >>> r = surface_to_surroundings(20.0, [-10.0, 10.0], 0.9, 1.0, [0.5, 0.5])
    >>> round(float(r.surface), 2), round(float(r.received.sum()), 2)
    (90.51, 90.51)
    """
    to, between = surroundings_exchange_areas(emissivity, area, view_factors, where)
    Ts = _kelvin(surface_temperature)
    Tj = _kelvin(surroundings_temperatures)
    if Tj.shape[-1:] != to.shape:
        raise InputError(f"{to.size} view factors but {Tj.shape[-1:]} surroundings temperatures",
                         f"{where}.sees")
    ebs = STEFAN_BOLTZMANN * Ts ** 4
    ebj = STEFAN_BOLTZMANN * Tj ** 4
    direct = to * (ebs[..., None] - ebj)
    reflected = ebj @ between - between.sum(axis=0) * ebj  # sum_k B_jk (E_k - E_j)
    return SurroundingsExchange(
        surface=direct.sum(axis=-1),
        received=direct + reflected,
        d_surface=4.0 * STEFAN_BOLTZMANN * to.sum() * Ts ** 3,
        d_surroundings=-4.0 * STEFAN_BOLTZMANN * to * Tj ** 3,
    )


def separate_links_flow(surface_temperature, surroundings_temperatures, emissivity, area,
                        view_factors):
    r"""Flow [W] when each surrounding is a separate grey-body link with its own surface resistance.

    .. math:: q = \sum_j \frac{\sigma (T^4 - T_j^4)}{(1-\varepsilon)/(\varepsilon A) + 1/(A F_j)}

    Each link carries the whole surface resistance, and the links sit in parallel, so the
    surface's own resistance is in effect divided among them: the flow comes out too large (the
    surface too close to its surroundings) whenever e < 1 and F_j < 1. Kept to measure that
    error and to warn about it (see :func:`separate_links_excess`).

    >>> round(float(separate_links_flow(20.0, [-10.0, 10.0], 0.5, 1.0, [0.5, 0.5])), 2)
    67.05
    """
    Ts = _kelvin(surface_temperature)
    Tj = _kelvin(surroundings_temperatures)
    F = np.asarray(view_factors, dtype=float)
    e, a = float(emissivity), float(area)
    r = (1.0 - e) / (e * a) + 1.0 / (a * F)
    return (STEFAN_BOLTZMANN * (Ts[..., None] ** 4 - Tj ** 4) / r).sum(axis=-1)


def separate_links_excess(emissivity, view_factors) -> float:
    r"""How much too large separate links make the flow, as a fraction, when every surrounding
    has the same temperature:

    .. math:: \frac{\sum_j F_j / (\varepsilon + (1-\varepsilon) F_j)}{\sum_j F_j} - 1

    (each link's conductance e A F_j / (e + (1 - e) F_j) against e A F_j; closed form derived
    here). Zero for a black surface or a single link with F = 1.

    >>> round(separate_links_excess(0.5, [0.5, 0.5]), 4)
    0.3333
    """
    e = float(emissivity)
    F = np.asarray(view_factors, dtype=float)
    return float((F / (e + (1.0 - e) * F)).sum() / F.sum() - 1.0)


def linearised_conductance(exchange_area, first_temperature, second_temperature):
    r"""Conductance [W/K] of a grey exchange sigma S (T1^4 - T2^4) linearised at T1, T2 [degC].

    .. math:: G = S\sigma (T_1^2 + T_2^2)(T_1 + T_2)

    so that G (T1 - T2) equals the exact flow at those temperatures (Incropera et al. [1]_ eq. 1.9).

    >>> round(linearised_conductance(1.0, 30.0, 20.0), 4)
    6.0131
    """
    T1, T2 = _kelvin(first_temperature), _kelvin(second_temperature)
    s = np.asarray(exchange_area, dtype=float)
    out = s * STEFAN_BOLTZMANN * (T1 * T1 + T2 * T2) * (T1 + T2)
    return float(out) if out.ndim == 0 else out
