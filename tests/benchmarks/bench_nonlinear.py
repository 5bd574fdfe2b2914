"""Benchmark of the nonlinear paths (issue: nonlinear physics).

The bundled insulated shipper (two phase-change packs, radiation inside, a correlation film and
radiation outside), 72 h at 5 min under a daily sine. rcsim against the same model integrated by
scipy's solve_ivp (BDF) with a finite-difference Jacobian (target >= 5x faster):

1. rcsim's own right-hand side of the model (the network in energy form, vectorised numpy) given
   to solve_ivp with the Jacobian left to finite differences: the same model, the same code for
   the physics, a general-purpose integrator. This is the ratio the target is read against.
2. the model written out by hand link by link (tests/shipper_by_hand.py: scalar Python, `ht`'s
   Churchill-Chu; here with rcsim's air properties, so both integrate the same equations), as
   one would without rcsim: the leanest Python right-hand side there is for
   six states. Printed too, with the hold-time difference (an independent check of the physics).

rcsim runs the default path for a nonlinear network (piecewise-exact: closed form between events,
waveform relaxation for radiation and films) and, for reference, its stiff path. Accuracy of all
against the hand-written model integrated by Radau at rtol 1e-10. A second case slices the foam
into 10 layers (24 states), where the hand-written form no longer exists.

A third part times a sweep of the shipper as a user runs one (``rcsim.sweep``, the serial
executor: one worker) against the same sweep with the former hot spots put back (kept in this
file, below, as the baseline: event location by a per-function 32-point bracket and Illinois
regula falsi on ``Regime.state_at``; the film correlation through the ``air_properties`` dict
with h and its four shifted values in five calls; the links' flows evaluated separately at the
start and end of every interval; the sines' particular response computed afresh for every run;
the steady Newton iteration of the time constants on sparse matrices), interleaved, best of several, and prints the ratio, the largest difference between
the two sweeps' tables, and the shares of the run that cProfile gives each part, before and
after.

Run:  python tests/benchmarks/bench_nonlinear.py [--quick] [--sweep-only]
"""

from __future__ import annotations

import argparse
import contextlib
import cProfile
import os
import pstats
import sys
import time

import numpy as np
from scipy.integrate import solve_ivp

import rcsim
from rcsim.limits import excursion_stats
from rcsim.nonlinear import build_terms
from rcsim.transient.energy_model import EnergyModel
from rcsim.transient.initial import given_temperatures

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, ".."))
from shipper_by_hand import hand_written_box  # noqa: E402  (tests/shipper_by_hand.py)
from timing import best_of  # noqa: E402  (tests/benchmarks/timing.py)

SCENARIO = os.path.join(HERE, "..", "..", "scenarios", "cold-box.toml")




def own_rhs_fd(net, t_eval, rtol=1e-6, atol=1e-6):
    """rcsim's right-hand side of ``net`` integrated by solve_ivp BDF, finite-difference Jacobian.

    Returns (seconds, payload temperatures, status)."""
    asm = net.assemble()
    model = EnergyModel(asm, *build_terms(net, asm, []))
    T0 = given_temperatures(net, asm, {}, asm.boundary_values(0.0))   # as rcsim starts a run
    y0 = model.y0(T0[model.ss.massive])
    atol_v = np.concatenate([atol * model.C, np.full(model.ny - model.n, atol * model.C.sum())])

    def run():
        return solve_ivp(model.rhs, (0.0, t_eval[-1]), y0, method="BDF", t_eval=t_eval,
                         rtol=rtol, atol=atol_v)

    seconds, sol = best_of(3, run)
    pos = list(model.ss.massive).index(list(asm.node_names).index("payload"))
    Tm = np.array([model.temperatures(y[:model.n])[0][pos] for y in sol.y.T])
    return seconds, Tm, sol.status


def hold(t, T):
    return excursion_stats(t, T, 8.0, "max")["hold_time [s]"]


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="a shorter sweep, fewer repeats")
    ap.add_argument("--sweep-only", action="store_true", help="only the sweep before/after")
    ap.add_argument("--stiff-flows", action="store_true",
                    help="only the cost of the stiff path's flow correction")
    args = ap.parse_args(argv)
    if args.stiff_flows:
        stiff_flow_correction()
        return
    if not args.sweep_only:
        against_solve_ivp()
        stiff_flow_correction()
    sweep_before_after(runs=20 if args.quick else 40, repeats=2 if args.quick else 4)


@contextlib.contextmanager
def _flows_uncorrected():
    """The stiff path with its flow correction switched off (the baseline: flows of the
    solver's states, no stored-energy rates taken from the steps)."""
    from rcsim.transient import stiff

    init = stiff.BalancedFlows.__init__

    def off(self, *args, **kwargs):
        init(self, *args, **kwargs)
        self.active = False

    stiff.BalancedFlows.__init__ = off
    try:
        yield
    finally:
        stiff.BalancedFlows.__init__ = init


def stiff_flow_correction(repeats=7):
    """The shipper on the stiff path (``Scenario.run(solver="stiff")``, default settings):
    with the heat flows corrected towards the stored-energy rates (radiation, a correlation
    film and phase change: chord iterations) against the same run without the correction,
    interleaved, best of ``repeats``."""
    sc = rcsim.load(SCENARIO)
    run = lambda: sc.run(solver="stiff")  # noqa: E731
    run()
    with _flows_uncorrected():
        run()
    on, off = [], []
    for _ in range(repeats):
        t0 = time.perf_counter()
        res_on = run()
        on.append(time.perf_counter() - t0)
        with _flows_uncorrected():
            t0 = time.perf_counter()
            res_off = run()
            off.append(time.perf_counter() - t0)
    t_on, t_off = min(on), min(off)
    diff = (res_on.heat_flows - res_off.heat_flows).abs().max()
    # what the correction no longer does: evaluate the inputs a second time per chunk
    prof = [p for p in sc.network.assemble().profiles]
    t = res_on.heat_flows.index.values
    t_inputs, _ = best_of(20, lambda: np.column_stack([p.value(t) for p in prof]))
    print(f"\nstiff path, the shipper 72 h at 5 min ({t.size} samples), best of {repeats}, "
          "interleaved:")
    print(f"  flows from the states (no correction)   {t_off * 1e3:7.1f} ms")
    print(f"  flows corrected to the energy rates     {t_on * 1e3:7.1f} ms   "
          f"-> {t_on / t_off:.2f}x the uncorrected run")
    print(f"  largest change of a link's flow: {diff.max():.3g} W ({diff.idxmax()}); energy "
          f"balance {res_on.energy_balance:.1e} (uncorrected {res_off.energy_balance:.1e})")
    print(f"  the run's inputs at every sample: {t_inputs * 1e3:.2f} ms (evaluated once per "
          "chunk; the correction reads them from the chunk)")


def against_solve_ivp():
    sc = rcsim.load(SCENARIO)
    t_pw, res = best_of(5, sc.run)
    t_st, res_st = best_of(3, lambda: sc.run(solver="stiff"))
    assert res.meta["solver"].startswith("piecewise"), res.meta["solver"]
    t = res.time
    # reference: the hand-written model, Radau at rtol 1e-10. The accuracy compared here is the
    # integrators', so the reference takes rcsim's air properties (passed in on purpose: the
    # textbook air table that shipper_by_hand uses by default differs by ~1.5 % in nu, which
    # moves the payload by ~1 mK; test_piecewise checks that difference separately)
    from rcsim.correlations import air_properties

    rhs, y_hand, c_pay = hand_written_box(air=air_properties)
    scale = np.array([c_pay, 4000, 4000, 100, 2500, 1200.0])
    ref = solve_ivp(rhs, (0.0, t[-1]), y_hand, method="Radau", t_eval=t, rtol=1e-10,
                    atol=1e-10 * scale)
    T_ref = ref.y[0] / c_pay
    h_ref = hold(t, T_ref)
    t_own, T_own, status = own_rhs_fd(sc.network, t)
    t_hand, sol_hand = best_of(3, lambda: solve_ivp(rhs, (0.0, t[-1]), y_hand, method="BDF",
                                                    t_eval=t, rtol=1e-6, atol=1e-6 * scale))
    T_hand = sol_hand.y[0] / c_pay
    info = res.run_info
    print(f"insulated shipper, 72 h at 5 min output, {info.states} states: two phase-change "
          "packs, radiation inside and out, a correlation film (rtol = atol = 1e-6 throughout)")
    print(f"  {'':58s} {'time':>8s}   {'hold time':>11s}   {'max |dT| payload':>16s}")

    def row(label, sec, T):
        print(f"  {label:58s} {sec:7.3f}s   {hold(t, T) / 3600:9.4f} h   "
              f"{np.abs(T - T_ref).max():12.2e} K")

    row("rcsim, piecewise-exact path (the default here)", t_pw,
        res.temperatures["payload"].to_numpy())
    row("rcsim, stiff path (BDF, analytic sparse Jacobian)", t_st,
        res_st.temperatures["payload"].to_numpy())
    row(f"same model (rcsim's RHS), solve_ivp BDF + FD Jacobian [{status}]", t_own, T_own)
    row("model written by hand, solve_ivp BDF + FD Jacobian", t_hand, T_hand)
    print(f"  reference: the hand-written model, Radau rtol 1e-10: hold time {h_ref / 3600:.4f} h")
    print(f"  -> piecewise vs the same model in solve_ivp + FD Jacobian: {t_own / t_pw:5.1f}x "
          "(target >= 5x)")
    print(f"  -> piecewise vs the model written by hand in solve_ivp:     {t_hand / t_pw:5.1f}x")
    print(f"  -> piecewise vs rcsim's stiff path:                         {t_st / t_pw:5.1f}x")
    print(f"     piecewise: {info.stats.sweeps} sweeps, {info.stats.events} events, "
          f"{info.stats.grid_points} grid "
          f"points, energy balance {res.energy_balance:.1e}")
    # at equal accuracy: tighten the baseline until its error is no larger than rcsim's
    err_pw = np.abs(res.temperatures["payload"].to_numpy() - T_ref).max()
    for tol in (1e-7, 3e-8, 1e-8, 3e-9):
        t_eq, T_eq, _ = own_rhs_fd(sc.network, t, rtol=tol, atol=tol)
        err_eq = np.abs(T_eq - T_ref).max()
        if err_eq <= err_pw:
            break
    print(f"  -> at equal accuracy (the same model in solve_ivp at rtol = atol = {tol:.0e}: "
          f"{t_eq:.3f}s, max |dT| {err_eq:.1e} K): {t_eq / t_pw:.1f}x")

    with open(SCENARIO, encoding="utf-8") as fh:
        text = fh.read()
    old = 'thickness = "50 mm", area = "1.05 m^2" }'
    assert old in text
    sliced = rcsim.scenario.loads(text.replace(old, old[:-2] + ", slices = 10 }"),
                                  name="cold-box-sliced.toml", base_dir=os.path.dirname(SCENARIO))
    t_pw2, res2 = best_of(3, sliced.run)
    t_own2, T_own2, status2 = own_rhs_fd(sliced.network, t)
    T2 = res2.temperatures["payload"].to_numpy()
    print(f"\nthe same shipper with its foam in 10 slices: {res2.run_info.states} states")
    print(f"  rcsim, piecewise-exact path {t_pw2:7.3f}s   hold {hold(t, T2) / 3600:.4f} h")
    print(f"  same model, solve_ivp BDF + FD Jacobian {t_own2:7.3f}s   hold "
          f"{hold(t, T_own2) / 3600:.4f} h   max |dT| payload {np.abs(T2 - T_own2).max():.1e} K "
          f"[{status2}]")
    print(f"  -> ratio {t_own2 / t_pw2:.1f}x (target >= 5x)")


# -- the sweep, before and after ------------------------------------------------------------
VARY = {"links.foam.parts[0].conduction.thickness": "normal(50 mm, 5 mm)",   # as bench_sweep
        "nodes.payload.mass": "normal(6 kg, 0.5 kg)",
        "boundaries.bay.temperature.sine.mean": "normal(25 degC, 2 K)"}

#: parts of a run whose cProfile share is printed: label -> function names (inclusive time)
PARTS = {
    "piecewise path (all its sweeps)": ("solve",),
    "event location": ("locate_event", "former_locate_event"),
    "hump test between grid points": ("find_dips",),
    "closed-form stretches (modes over the grid)": ("_stretch",),
    "film correlation (h, air properties)": ("natural_convection_coefficient",
                                             "former_natural_convection_coefficient"),
    "time constants (steady Newton + modes)": ("time_constants_at",),
}


def profile_shares(func):
    """{part: share of the run's time} under cProfile (inclusive times of PARTS' functions)."""
    prof = cProfile.Profile()
    prof.enable()
    func()
    prof.disable()
    stats = pstats.Stats(prof).stats
    total = max(v[3] for v in stats.values())
    out = {}
    for label, names in PARTS.items():
        found = [v[3] for k, v in stats.items() if k[2] in names
                 and (k[2] != "solve" or k[0].endswith("piecewise.py"))]
        out[label] = sum(found) / total
    return out


def sweep_before_after(runs=40, repeats=4):
    sc = rcsim.load(SCENARIO)

    def go():
        return rcsim.sweep(sc, VARY, samples=runs, seed=1, executor="serial")

    now = go()                                    # warm-up, and the table
    with former_hot_spots():
        before = go()
    wall = {"before": [], "now": []}
    cpu = {"before": [], "now": []}
    for _ in range(repeats):                      # interleaved: load elsewhere hits both alike
        for label in ("before", "now"):
            ctx = former_hot_spots() if label == "before" else contextlib.nullcontext()
            with ctx:
                w0, c0 = time.perf_counter(), time.process_time()
                go()
                wall[label].append(time.perf_counter() - w0)
                cpu[label].append(time.process_time() - c0)
    with former_hot_spots():
        shares_before = profile_shares(go)
    shares_now = profile_shares(go)
    num = now.select_dtypes("number")
    diff = (num - before.select_dtypes("number")).abs()
    temps = [c for c in num.columns if c.startswith(("min.", "max."))]
    hold = [c for c in num.columns if c.startswith(("hold_time.", "time_out"))]
    res_now = sc.run()
    with former_hot_spots():
        res_before = sc.run()
    dT = np.abs(res_now.temperatures.to_numpy() - res_before.temperatures.to_numpy()).max()
    one = {"before": [], "now": []}                # one run of the shipper (its network kept)
    for _ in range(3 * repeats):
        for label in ("before", "now"):
            ctx = former_hot_spots() if label == "before" else contextlib.nullcontext()
            with ctx:
                c0 = time.process_time()
                sc.run()
                one[label].append(time.process_time() - c0)
    wb, wn, cb, cn = min(wall["before"]), min(wall["now"]), min(cpu["before"]), min(cpu["now"])
    print(f"\nsweep of the shipper, {runs} runs, serial executor (one worker), best of {repeats} "
          f"interleaved; load average {os.getloadavg()[0]:.1f}")
    print(f"  former hot spots put back   {wb / runs * 1e3:7.1f} ms/run wall, "
          f"{cb / runs * 1e3:7.1f} ms/run processor")
    print(f"  now                         {wn / runs * 1e3:7.1f} ms/run wall, "
          f"{cn / runs * 1e3:7.1f} ms/run processor")
    print(f"  -> {wb / wn:.2f}x wall, {cb / cn:.2f}x processor time")
    ob, on = min(one["before"]), min(one["now"])
    print(f"  one run of the shipper (its network kept, as repeated runs do): {ob * 1e3:.1f} ms "
          f"before, {on * 1e3:.1f} ms now, processor time: {ob / on:.2f}x")
    print(f"  largest differences between the two sweeps: min/max temperatures "
          f"{diff[temps].to_numpy().max():.1e} K, hold times {diff[hold].to_numpy().max():.1e} s;"
          f" one run's histories, every node: max |dT| {dT:.1e} K (tolerance 1e-6)")
    print(f"  {'share of the sweep under cProfile':44s} {'before':>7s} {'now':>7s}")
    for label in PARTS:
        print(f"    {label:42s} {100 * shares_before[label]:6.1f}% {100 * shares_now[label]:6.1f}%")
    per_call(sc)


def per_call(sc):
    """The two hot spots alone, before and now, on what one run of the shipper gives them:
    every event location of the run, and the outside film over the run's grid (h with its
    derivatives, as the reference conductances need, and h alone, as the flows do)."""
    from rcsim import correlations
    from rcsim.transient import piecewise

    calls = []
    locate = piecewise.locate_event

    def keep(*a):
        calls.append(a)
        return locate(*a)

    piecewise.locate_event = keep
    try:
        res = sc.run()
    finally:
        piecewise.locate_event = locate

    def each(func, repeats=30):
        best = float("inf")
        for _ in range(5):
            c0 = time.process_time()
            for _ in range(repeats):
                for a in calls:
                    func(*a)
            best = min(best, (time.process_time() - c0) / repeats / len(calls))
        return best

    t_old, t_new = each(former_locate_event), each(locate)
    worst = max(abs(former_locate_event(*a)[0] - locate(*a)[0]) / max(1.0, a[2]) for a in calls)
    print(f"  event location, the {len(calls)} calls of one run: {t_old * 1e6:.0f} us before, "
          f"{t_new * 1e6:.0f} us now per call ({t_old / t_new:.1f}x processor time); event "
          f"times agree to {worst:.1e} of their interval")
    shell = res.temperatures["shell"].to_numpy()
    bay = res.boundary_temperatures["bay"].to_numpy()
    law, params = next((lw, p) for _, lw, p in sc.network.assemble().nl.groups
                       if lw.key[0] == "film")
    t1, t2 = shell[:, None], bay[:, None]

    def timed(func, repeats=200):
        best = float("inf")
        for _ in range(5):
            c0 = time.process_time()
            for _ in range(repeats):
                func()
            best = min(best, (time.process_time() - c0) / repeats)
        return best

    def film():
        law.flow(params, t1, t2), law.derivatives(params, t1, t2)

    d_new = np.asarray(law.derivatives(params, t1, t2))
    f_new = timed(film)
    with former_hot_spots():
        d_old = np.asarray(law.derivatives(params, t1, t2))
        f_old = timed(film)
    print(f"  outside film over the grid ({shell.size} points), h and its derivatives: "
          f"{f_old * 1e6:.0f} us before, {f_new * 1e6:.0f} us now ({f_old / f_new:.1f}x); "
          f"largest relative difference {np.abs(d_new / d_old - 1).max():.1e}")


@contextlib.contextmanager
def former_hot_spots():
    """The former event location, film correlation, flows, particular response and steady
    Newton, put back for the duration (the baseline of the before/after ratio)."""
    from rcsim import correlations, laws, nonlinear
    from rcsim.transient import piecewise

    solver = piecewise.PiecewiseSolver
    saved = (piecewise.locate_event, correlations.natural_convection_coefficient,
             laws.FilmLaw.derivatives, solver._flows, solver._particular, nonlinear.DENSE_NEWTON)
    piecewise.locate_event = former_locate_event
    correlations.natural_convection_coefficient = former_natural_convection_coefficient
    laws.FilmLaw.derivatives = former_film_derivatives
    solver._flows = former_flows
    solver._particular = former_particular
    nonlinear.DENSE_NEWTON = -1                   # sparse matrices at every size
    try:
        yield
    finally:
        (piecewise.locate_event, correlations.natural_convection_coefficient,
         laws.FilmLaw.derivatives, solver._flows, solver._particular,
         nonlinear.DENSE_NEWTON) = saved


def former_locate_event(reg, t0, h, z0, FR, dF, vals_end, dips=None):
    """The former event location: per event function, a 32-point bracket on
    ``Regime.state_at``, then Illinois regula falsi, then a check past the root."""
    xtol = 1e-6 * max(1.0, h)
    fired = np.flatnonzero(vals_end > 0.0)
    probe = np.full(fired.size, np.nan)
    if dips:
        fired = np.concatenate([fired, list(dips)]).astype(np.int64)
        probe = np.concatenate([probe, list(dips.values())])
    rows = reg.CevV[fired]
    f0 = rows @ z0 + reg.dev[fired]
    if (f0 > 0.0).any():
        return t0 + min(h, xtol), int(fired[int(np.argmax(f0))])
    with np.errstate(divide="ignore", invalid="ignore"):
        guess = np.where(np.isnan(probe), f0 / (f0 - vals_end[fired]), probe / h)
    best_t, best_e = None, None
    for k in np.argsort(guess):
        row, d = rows[k], reg.dev[fired[k]]

        def f(tau, row=row, d=d):
            return float(row @ reg.state_at(t0, tau, h, z0, FR, dF) + d)

        lo, hi = 0.0, h
        if best_t is not None:
            hi = best_t - t0 - xtol
            if hi <= 0.0 or f(hi) <= 0.0:
                continue
        taus = hi * np.arange(1, 33) / 32.0
        if not np.isnan(probe[k]) and probe[k] < hi:
            taus = np.union1d(taus, [probe[k]])
        vals = reg.state_at(t0, taus, h, z0, FR, dF) @ row + d
        i = int(np.argmax(vals > 0.0))
        if vals[i] <= 0.0:
            continue
        lo, hi = (taus[i - 1] if i else 0.0), taus[i]
        root = _former_root_in_bracket(f, lo, hi, float(vals[i - 1]) if i else float(f0[k]),
                                       float(vals[i]), 0.25 * xtol)
        t_hi = min(hi, root + 0.5 * xtol)
        if f(t_hi) <= 0.0:
            t_hi = hi
        best_t, best_e = t0 + t_hi, int(fired[k])
    return best_t, best_e


def _former_root_in_bracket(f, lo, hi, f_lo, f_hi, xtol, max_iter=60):
    side = 0
    root = hi
    for _ in range(max_iter):
        width = hi - lo
        if width <= xtol:
            return hi
        t = lo - f_lo * width / (f_hi - f_lo)
        if not (lo < t < hi):
            t = 0.5 * (lo + hi)
        ft = f(t)
        slope = (f_hi - f_lo) / width
        root = t - ft / slope
        if abs(ft) <= slope * xtol:
            return min(max(root, lo), hi)
        if ft > 0.0:
            hi, f_hi = t, ft
            if side == 1:
                f_lo *= 0.5
            side = 1
        else:
            lo, f_lo = t, ft
            if side == -1:
                f_hi *= 0.5
            side = -1
    return root


def former_natural_convection_coefficient(geometry, surface_temperature, fluid_temperature,
                                          length, surface_faces="up"):
    """The former film coefficient: the full ``air_properties`` dict, then Ra, Pr and the
    correlation with fractional powers."""
    from rcsim.correlations import GRAVITY, air_properties, nusselt_horizontal_plate

    ts = np.asarray(surface_temperature, dtype=float)
    tf = np.asarray(fluid_temperature, dtype=float)
    props = air_properties(0.5 * (ts + tf))
    dT = np.abs(ts - tf)
    ra = GRAVITY * props["beta"] * dT * length ** 3 / (props["nu"] * props["alpha"])
    pr = props["Pr"]
    if geometry == "vertical-plate":
        c0, c1 = 0.825, 0.492
    elif geometry == "horizontal-cylinder":
        c0, c1 = 0.60, 0.559
    if geometry == "horizontal-plate":
        hot = ts > tf
        nu = nusselt_horizontal_plate(ra, hot if surface_faces == "up" else ~hot)
        nu0 = 0.0
    else:
        nu = (c0 + 0.387 * ra ** (1 / 6) / (1 + (c1 / pr) ** (9 / 16)) ** (8 / 27)) ** 2
        nu0 = c0 ** 2
    h = nu * props["k"] / length
    limit = nu0 * props["k"] / length
    return np.where(dT > 0, h, limit) if np.ndim(h) else (float(h) if dT > 0 else float(limit))


def former_film_derivatives(self, params, t1, t2):
    """The former film derivatives: h and four shifted values in five calls."""
    d = 1e-4
    h = self._h(params, t1, t2)
    dh1 = (self._h(params, t1 + d, t2) - self._h(params, t1 - d, t2)) / (2 * d)
    dh2 = (self._h(params, t1, t2 + d) - self._h(params, t1, t2 - d)) / (2 * d)
    a = params["area"]
    return a * (h + (t1 - t2) * dh1), a * (-h + (t1 - t2) * dh2)


def former_flows(self, Tg):
    """The former remainders: the links' flows at the start and at the end of every interval,
    evaluated separately."""
    seg = self.seg
    ta_r, tb_r = seg.ends(Tg[:-1], self._WR)
    ta_l, tb_l = seg.ends(Tg[1:], self._WL)
    qR = seg.flows(ta_r, tb_r, self.grid[:-1], "right")
    qL = seg.flows(ta_l, tb_l, self.grid[1:], "left")
    return qR - self.g * (ta_r - tb_r), qL - self.g * (ta_l - tb_l)


def former_particular(self, reg, j, j_end, t_c):
    """The former particular response: computed afresh at every run's local times."""
    s = np.concatenate([[t_c], self.grid[j + 1:j_end + 1]])
    return reg.particular(s, with_rate=True)


if __name__ == "__main__":
    main()
