"""The continuous-discrete Kalman filter, its discretisation, and the fit with process noise.

References written in this file, independent of rcsim's code: a scalar Kalman recursion for one
node (textbook form, plain Python floats), a multi-output filter as a plain loop over rows, the
closed forms of the scalar Ornstein-Uhlenbeck step (Phi = exp(a dt),
Q = sigma^2 (1 - exp(2 a dt)) / (-2 a)), quadrature of the Van Loan integral, scipy's Riccati
solver, and simulated data made with scipy.signal (lsim, lfilter).
"""

import math
import warnings

import numpy as np
import pandas as pd
import pytest
import scipy.signal as sig
from scipy.integrate import quad_vec, simpson
from scipy.linalg import expm, solve_discrete_are

import rcsim
from conftest import HEATER_BLOCK
from rcsim.fitting import FitWarning
from rcsim.fitting.kalman import (kalman_filter, modal_discretisation, stationary_covariance,
                                  van_loan)
from rcsim.fitting.recurrence import linear_recurrence


# -- the filter against independent recursions ------------------------------------------------
def scalar_filter(r, observed, t, a, sigma2, s2, P0):
    """One node, textbook Kalman filter in floats (closed-form scalar discretisation)."""
    x, P, loglik, innovations = 0.0, P0, 0.0, []
    for k in range(len(r)):
        if observed[k]:
            S = P + s2
            e = r[k] - x
            gain = P / S
            loglik += -0.5 * (math.log(2 * math.pi * S) + e * e / S)
            x, P = x + gain * e, (1 - gain) * P
            innovations.append(e)
        if k < len(r) - 1:
            dt = t[k + 1] - t[k]
            phi = math.exp(a * dt)
            x, P = phi * x, phi * P * phi + sigma2 * (1 - phi * phi) / (-2 * a)
    return loglik, np.array(innovations)


def scalar_stationary(phi, q, s2):
    """The scalar Riccati fixed point P = phi^2 P s2 / (P + s2) + q, solved as a quadratic
    (closed form derived here): P^2 + (s2 - phi^2 s2 - q) P - q s2 = 0, the positive root."""
    b = s2 - phi * phi * s2 - q
    return 0.5 * (-b + math.sqrt(b * b + 4 * q * s2))


@pytest.fixture
def one_node_record():
    rng = np.random.default_rng(1)
    t = np.arange(500) * 60.0
    t[200:] += 30.0                      # one longer step
    r = rng.normal(0.0, 0.3, t.size)
    r[50:60] = np.nan                    # a hole
    observed = np.isfinite(r)
    observed[400:450] = False            # a held-out block
    return t, r, observed


@pytest.mark.parametrize("given_start", [True, False])
def test_kalman_likelihood_equals_a_scalar_recursion(one_node_record, given_start):
    # a one-node network (a = -1/tau) with process and measurement noise; the filter's
    # log-likelihood and innovations equal the scalar recursion's to 1e-9
    t, r, observed = one_node_record
    tau, sigma2, s2 = 3000.0, 1e-4, 0.01
    a = -1.0 / tau
    if given_start:
        P0 = 5.0
        out = kalman_filter(r[:, None], observed[:, None], t, np.array([[a]]), np.array([[1.0]]),
                            np.array([sigma2]), np.array([s2]), np.array([[P0]]))
    else:  # the default start: the stationary prior of the most common step (60 s)
        phi = math.exp(a * 60.0)
        P0 = scalar_stationary(phi, sigma2 * (1 - phi * phi) / (-2 * a), s2)
        out = kalman_filter(r[:, None], observed[:, None], t, np.array([[a]]), np.array([[1.0]]),
                            np.array([sigma2]), np.array([s2]))
    loglik, innovations = scalar_filter(r, observed, t, a, sigma2, s2, P0)
    assert out.log_likelihood == pytest.approx(loglik, rel=1e-9, abs=1e-9)
    got = out.innovations[:, 0]
    np.testing.assert_allclose(got[np.isfinite(got)], innovations, atol=1e-9)
    assert out.n_observed == int(observed.sum())


def loop_filter(r, observed, t, A, H, process, measurement):
    """A textbook multi-output filter, row by row; Phi = expm(A dt) and Q by Simpson's rule on
    expm(A s) Sigma expm(A s)^T over the step (401 points)."""
    n = A.shape[0]
    Sigma = np.diag(process)
    R = np.diag(measurement)
    x, loglik = np.zeros(n), 0.0
    # the same first prior as the filter's default: stationary for the common step (60 s)
    phi = expm(A * 60.0)
    s = np.linspace(0.0, 60.0, 401)
    Qc = simpson([expm(A * si) @ Sigma @ expm(A * si).T for si in s], x=s, axis=0)
    P = solve_discrete_are(phi.T, H.T, Qc, R)
    cache = {60.0: (phi, Qc)}
    innovations = np.full(r.shape, np.nan)
    for k in range(len(t)):
        cols = observed[k]
        if cols.any():
            Ho, Ro = H[cols], R[np.ix_(cols, cols)]
            S = Ho @ P @ Ho.T + Ro
            e = r[k, cols] - Ho @ x
            loglik += -0.5 * (cols.sum() * math.log(2 * math.pi) + math.log(np.linalg.det(S))
                              + e @ np.linalg.solve(S, e))
            K = P @ Ho.T @ np.linalg.inv(S)
            x = x + K @ e
            P = (np.eye(n) - K @ Ho) @ P
            innovations[k, cols] = e
        if k < len(t) - 1:
            dt = t[k + 1] - t[k]
            if dt not in cache:
                ss = np.linspace(0.0, dt, 401)
                cache[dt] = (expm(A * dt), simpson(
                    [expm(A * si) @ Sigma @ expm(A * si).T for si in ss], x=ss, axis=0))
            phi, Q = cache[dt]
            x, P = phi @ x, phi @ P @ phi.T + Q
    return loglik, innovations


def test_two_measured_columns_with_missing_values_match_a_plain_loop():
    # two nodes, both measured, some values missing in one column only: the filter (pattern
    # caching, converged runs jumped over) equals the plain loop
    rng = np.random.default_rng(4)
    C = np.array([2000.0, 8000.0])
    K = np.array([[1 / 0.5, -1 / 0.5], [-1 / 0.5, 1 / 0.5 + 1.0]])
    A = -K / C[:, None]
    H = np.eye(2)
    t = np.arange(300) * 60.0
    t[150:] += 60.0
    r = rng.normal(0.0, 0.2, (t.size, 2))
    r[20:40, 1] = np.nan
    r[100, 0] = np.nan
    observed = np.isfinite(r)
    process, measurement = np.array([2e-5, 5e-6]), np.array([0.01, 0.02])
    out = kalman_filter(r, observed, t, A, H, process, measurement)
    loglik, innovations = loop_filter(r, observed, t, A, H, process, measurement)
    # Simpson's rule on 401 points is good to about 1e-12 relative here
    assert out.log_likelihood == pytest.approx(loglik, rel=1e-9)
    np.testing.assert_allclose(out.innovations, innovations, atol=1e-9, equal_nan=True)


# -- discretisation ---------------------------------------------------------------------------
def test_van_loan_equals_the_scalar_closed_form():
    # Ornstein-Uhlenbeck: Phi = exp(a dt), Q = sigma^2 (1 - exp(2 a dt)) / (-2 a)
    a, sigma2 = -1 / 1800.0, 3e-4
    steps = np.array([10.0, 60.0, 3600.0])
    Phi, Q = van_loan(np.array([[a]]), np.array([[sigma2]]), steps)
    np.testing.assert_allclose(Phi[:, 0, 0], np.exp(a * steps), rtol=1e-13)
    np.testing.assert_allclose(Q[:, 0, 0], sigma2 * (1 - np.exp(2 * a * steps)) / (-2 * a),
                               rtol=1e-12)


def test_van_loan_and_the_modal_form_equal_the_integral():
    # three nodes in a row; Q = int_0^dt expm(A s) Sigma expm(A s)^T ds by adaptive quadrature
    C = np.array([1000.0, 5000.0, 300.0])
    K = np.array([[2.0, -1.0, 0.0], [-1.0, 3.0, -1.0], [0.0, -1.0, 1.5]])
    A = -K / C[:, None]
    Sigma = np.diag([1e-4, 2e-5, 3e-4])
    steps = np.array([30.0, 600.0])
    Phi, Q = van_loan(A, Sigma, steps)
    Phi_m, Q_m = modal_discretisation(A, Sigma, steps)
    for i, dt in enumerate(steps):
        ref, _ = quad_vec(lambda s: expm(A * s) @ Sigma @ expm(A * s).T, 0.0, dt, epsrel=1e-12)
        np.testing.assert_allclose(Q[i], ref, rtol=1e-9, atol=1e-16)
        np.testing.assert_allclose(Q_m[i], ref, rtol=1e-9, atol=1e-16)
        np.testing.assert_allclose(Phi[i], expm(A * dt), rtol=1e-12)
        np.testing.assert_allclose(Phi_m[i], expm(A * dt), rtol=1e-10, atol=1e-14)


@pytest.mark.parametrize("q, s2", [(1e-4, 1e-2), (1e-10, 1e-2), (1e-2, 1e-6)])
def test_stationary_covariance_equals_scipys_riccati_solver(q, s2):
    C = np.array([1000.0, 5000.0, 300.0])
    K = np.array([[2.0, -1.0, 0.0], [-1.0, 3.0, -1.0], [0.0, -1.0, 1.5]])
    Phi = expm(-K / C[:, None] * 60.0)
    Q = np.eye(3) * q * 60.0
    H = np.array([[1.0, 0.0, 0.0]])
    R = np.array([[s2]])
    P = stationary_covariance(Phi, Q, H, R)
    ref = solve_discrete_are(Phi.T, H.T, Q, R)
    np.testing.assert_allclose(P, ref, rtol=1e-9, atol=1e-12 * np.abs(ref).max())


@pytest.mark.parametrize("pattern", ["one", "runs", "random"])
def test_linear_recurrence_equals_a_loop(pattern):
    # x_{k+1} = F_k x_k + v_k with complex eigenvalues: the modal (lfilter) and banded ways
    rng = np.random.default_rng(0)
    n, N = 3, 800
    F = np.stack([rng.uniform(-0.5, 0.5, (n, n)) for _ in range(3)])
    index = {"one": np.zeros(N - 1, int),
             "runs": np.r_[np.zeros(300, int), np.ones(300, int), np.full(N - 601, 2)],
             "random": rng.integers(0, 3, N - 1)}[pattern]
    v = rng.normal(size=(N - 1, n))
    x0 = rng.normal(size=n)
    ref = np.empty((N, n))
    ref[0] = x0
    for k in range(N - 1):
        ref[k + 1] = F[index[k]] @ ref[k] + v[k]
    np.testing.assert_allclose(linear_recurrence(F, index, v, x0), ref, atol=1e-12)


# -- the fit with process noise ---------------------------------------------------------------
# an invented block: 1794 J/K, 1.5 K/W, starting at 6 degC in a 20 degC room, 10 W from 2 h to
# 5 h; its temperature wanders by process noise (an Ornstein-Uhlenbeck deviation, stationary
# spread about 0.2 K) and is measured with 0.05 K of noise
C_TRUE, R_TRUE, T0_TRUE = 1794.0, 1.5, 6.0
SPAN, DT = 8 * 3600.0, 120.0
BLOCK = HEATER_BLOCK
FREE = ["nodes.block.capacity", "links.skin.resistance", "nodes.block.initial"]


def noisy_block_log(seed, sigma_process=0.0055, sigma_measurement=0.05):
    """Deterministic part by scipy.signal.lsim (inputs linear between samples, as a log
    column drives a source), process noise as an AR(1) sequence by lfilter with the exact
    scalar discretisation, measurement noise added."""
    t = np.arange(0.0, SPAN + 1, DT)
    tau = R_TRUE * C_TRUE
    power = np.where((t >= 7200) & (t < 18000), 10.0, 0.0)
    system = sig.StateSpace([[-1 / tau]], [[1 / tau, 1 / C_TRUE]], [[1.0]], [[0.0, 0.0]])
    _, y, _ = sig.lsim(system, np.column_stack([np.full(t.size, 20.0), power]), t, X0=[T0_TRUE])
    rng = np.random.default_rng(seed)
    a = math.exp(-DT / tau)
    w = rng.normal(0.0, math.sqrt(sigma_process ** 2 * tau / 2 * (1 - a * a)), t.size)
    deviation = sig.lfilter([0.0, 1.0], [1.0, -a], w)
    return pd.DataFrame({"time": t, "block": y + deviation +
                         rng.normal(0.0, sigma_measurement, t.size), "heater": power})


@pytest.mark.slow
def test_process_noise_intervals_cover_the_truth_where_deterministic_ones_do_not():
    # 95 % intervals should hold the truth in about 95 % of records. With a wandering state
    # the deterministic fit's residuals follow each other and its intervals are far too narrow;
    # the stochastic fit's are honest. Over 12 seeds x 2 values (capacity, resistance):
    sc = rcsim.loads(BLOCK)
    truth = {"nodes.block.capacity": C_TRUE, "links.skin.resistance": R_TRUE}
    inside = {"measurement": 0, "process": 0}
    total = 0
    for seed in range(12):
        log = noisy_block_log(seed)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", FitWarning)
            fits = {"measurement": rcsim.fit(sc, log, FREE, starts=1),
                    "process": rcsim.fit(sc, log, FREE, starts=1, noise="process")}
        for kind, res in fits.items():
            for key, value in truth.items():
                row = res.estimates.loc[key]
                inside[kind] += row["ci_low"] <= value <= row["ci_high"]
        total += len(truth)
    rates = {k: v / total for k, v in inside.items()}
    print(f"coverage of 95 % intervals over {total}: {rates}")   # reported with -s
    assert rates["process"] >= 0.8, rates
    assert rates["measurement"] <= 0.6, rates


def test_process_noise_fit_reports_noise_and_white_innovations():
    log = noisy_block_log(3)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FitWarning)
        res = rcsim.fit(rcsim.loads(BLOCK), log, FREE, starts=1, noise="process", holdout=0.2)
    assert res.noise == "process"
    noise = res.noise_estimates
    # the values that made the log (0.0055 K/s^0.5 and 0.05 K) inside their intervals
    assert noise.loc["process.block", "ci_low"] <= 0.0055 <= noise.loc["process.block", "ci_high"]
    assert noise.loc["measurement.block", "ci_low"] <= 0.05 <= \
        noise.loc["measurement.block", "ci_high"]
    # one-step-ahead residuals of the right model are white (Ljung-Box)
    assert res.whiteness.loc["block", "p_value"] > 0.01
    # a process-noise model predicts one step ahead better than it simulates
    assert res.rmse < res.simulation_rmse
    # held out: the last 20 % of rows are not in the residuals but are scored
    held = res.holdout_residuals["block"].to_numpy()
    assert np.isfinite(held).sum() > 0 and np.isnan(res.residuals["block"].to_numpy()[-5:]).all()
    # k = 3 free values + 1 process + 1 measurement noise; AIC = 2k - 2l
    assert res.n_parameters == 5
    assert res.aic == pytest.approx(2 * 5 - 2 * res.log_likelihood)


def test_process_noise_fit_on_the_engine_path_equals_the_direct_one():
    # the skin given as a film (h, area) makes its value an indirect one, so the engine's exact
    # path runs the model; R = 1 / (h A) is the same model as a free resistance, so both fits
    # reach the same likelihood and capacity
    film = BLOCK.replace('resistance = "1 K/W"',
                         'parts = [ { convection = { h = "10 W/(m^2*K)", area = "0.1 m^2" } } ]')
    log = noisy_block_log(5)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FitWarning)
        direct = rcsim.fit(rcsim.loads(BLOCK), log, FREE, starts=1, noise="process")
        engine = rcsim.fit(rcsim.loads(film), log, ["nodes.block.capacity",
                                                    "links.skin.parts[0].convection.h",
                                                    "nodes.block.initial"], starts=1,
                           noise="process")
    assert engine.log_likelihood == pytest.approx(direct.log_likelihood, abs=1e-3)
    h = engine.estimates.loc["links.skin.parts[0].convection.h", "value"]
    assert 1.0 / (h * 0.1) == pytest.approx(direct.estimates.loc["links.skin.resistance",
                                                                 "value"], rel=1e-3)
    assert engine.estimates.loc["nodes.block.capacity", "value"] == pytest.approx(
        direct.estimates.loc["nodes.block.capacity", "value"], rel=1e-3)


def test_process_noise_needs_a_linear_network():
    sc = rcsim.loads("""
[nodes.block]
capacity = "1.2 kJ/K"
initial = "10 degC"
[boundaries.room]
temperature = "20 degC"
[links.skin]
between = ["block", "room"]
parts = [ { radiation = { emissivity = 0.9, area = "0.1 m^2" } } ]
""")
    log = pd.DataFrame({"time": np.arange(0, 3600, 60.0), "block": np.linspace(10, 15, 60)})
    with pytest.raises(rcsim.InputError, match="process noise needs a linear network"):
        rcsim.fit(sc, log, ["nodes.block.capacity"], noise="process")
