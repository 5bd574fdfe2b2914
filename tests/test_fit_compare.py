"""Candidate structures compared: log-likelihood, AIC/BIC, held-out error, whiteness, selection,
the [fit] section of a candidate file, the table and figure written out.

Synthetic logs come from scipy.signal.lsim on invented one- and two-node networks; expected
numbers from closed forms written here (Newton cooling, the chi-square survival function with
two degrees of freedom, exp(-Q/2)) and scipy.stats (norm.logpdf).
"""

import math
import os
import warnings

import numpy as np
import pandas as pd
import pytest
import scipy.signal as sig
from scipy import stats

import rcsim
from rcsim.errors import InputError
from rcsim.fitting import FitWarning, ljung_box, parse_holdout, read_candidate

# an invented room: air 2 MJ/K... scaled down to a box: inner 2000 J/K, envelope 8000 J/K,
# 0.5 K/W between them, 1.0 K/W to the room; 50 W heater on from 1 h to 12 h
C1, C2, R12, R2A = 2000.0, 8000.0, 0.5, 1.0

ONE = """
[nodes.M]
capacity = 5000
initial = 20
[boundaries.room]
temperature = 15
[links.out]
between = ["M", "room"]
resistance = 1.0
[sources.heat]
node = "M"
power = 0
"""
TWO = """
[nodes.M]
capacity = 5000
initial = 20
[nodes.E]
capacity = 5000
initial = 18
[boundaries.room]
temperature = 15
[links.in]
between = ["M", "E"]
resistance = 0.5
[links.out]
between = ["E", "room"]
resistance = 0.5
[sources.heat]
node = "M"
power = 0
"""
FREE_ONE = ["nodes.M.capacity", "links.out.resistance", "nodes.M.initial"]
FREE_TWO = ["nodes.M.capacity", "nodes.E.capacity", "links.in.resistance",
            "links.out.resistance", "nodes.M.initial", "nodes.E.initial"]


def two_node_log(seed=0, n=400, dt=120.0, noise=0.05):
    """Log of the two-node box by scipy.signal.lsim; the room and the heater are log columns
    (the heater column drives the scenario's source 'heat')."""
    t = np.arange(n) * dt
    A = [[-1 / (R12 * C1), 1 / (R12 * C1)],
         [1 / (R12 * C2), -1 / (R12 * C2) - 1 / (R2A * C2)]]
    B = [[1 / C1, 0.0], [0.0, 1 / (R2A * C2)]]
    P = np.where((t > 3600) & (t < 12 * 3600), 50.0, 0.0)
    room = 15 + 3 * np.sin(2 * np.pi * t / 86400)
    _, y, _ = sig.lsim(sig.StateSpace(A, B, [[1, 0]], [[0, 0]]), np.column_stack([P, room]), t,
                       X0=[20, 18])
    rng = np.random.default_rng(seed)
    return pd.DataFrame({"time": t, "M": y + rng.normal(0, noise, n), "room": room, "heat": P})


def quiet(fn, *args, **kwargs):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FitWarning)
        return fn(*args, **kwargs)


# -- the numbers of one fit -------------------------------------------------------------------
def test_ljung_box_against_a_hand_computed_case():
    # Q = n (n + 2) sum_k r_k^2 / (n - k), written out in plain Python; with h = 2 lags the
    # chi-square survival function is exp(-Q / 2) (closed form for two degrees of freedom)
    e = [0.3, -0.1, 0.4, 0.2, -0.5, 0.1, 0.0, -0.2, 0.6, -0.3, 0.1, 0.2]
    n = len(e)
    mean = sum(e) / n
    x = [v - mean for v in e]
    den = sum(v * v for v in x)
    r = [sum(x[t] * x[t - k] for t in range(k, n)) / den for k in (1, 2)]
    q = n * (n + 2) * (r[0] ** 2 / (n - 1) + r[1] ** 2 / (n - 2))
    w = ljung_box(e, lags=2)
    assert w.statistic == pytest.approx(q, rel=1e-12)
    assert w.p_value == pytest.approx(math.exp(-q / 2), rel=1e-12)
    assert (w.lags, w.n) == (2, n)
    # missing values are skipped: the same series with holes gives the same test
    holey = e[:4] + [float("nan")] + e[4:]
    assert ljung_box(holey, lags=2).statistic == pytest.approx(q, rel=1e-12)


def test_ljung_box_agrees_with_statsmodels_when_installed():
    statsmodels = pytest.importorskip("statsmodels.stats.diagnostic")
    e = np.random.default_rng(2).normal(size=200)
    ref = statsmodels.acorr_ljungbox(e, lags=[7], return_df=True)
    w = ljung_box(e, lags=7)
    assert w.statistic == pytest.approx(float(ref["lb_stat"].iloc[0]), rel=1e-10)
    assert w.p_value == pytest.approx(float(ref["lb_pvalue"].iloc[0]), rel=1e-8)


def test_log_likelihood_aic_bic_of_a_fit():
    # the concentrated Gaussian log-likelihood: each residual ~ N(0, s^2), s^2 = RSS / n
    # (scipy.stats.norm.logpdf summed), k = 6 free values + 1 variance
    res = quiet(rcsim.fit, rcsim.loads(TWO), two_node_log(), FREE_TWO, starts=1)
    r = res.residuals["M"].dropna().to_numpy()
    s = math.sqrt(float(r @ r) / r.size)
    ll = float(np.sum(stats.norm.logpdf(r, scale=s)))
    assert res.log_likelihood == pytest.approx(ll, rel=1e-10)
    assert res.n_parameters == 7
    assert res.aic == pytest.approx(2 * 7 - 2 * ll, rel=1e-10)
    assert res.bic == pytest.approx(7 * math.log(r.size) - 2 * ll, rel=1e-10)
    # the right structure leaves white residuals
    assert res.whiteness.loc["M", "p_value"] > 0.01


def test_known_sigma_gives_the_plain_gaussian_likelihood():
    # with sigma given, l = sum log N(r; 0, sigma) and no variance is estimated
    res = quiet(rcsim.fit, rcsim.loads(TWO), two_node_log(), FREE_TWO, starts=1, sigma="0.05 K")
    r = res.residuals["M"].dropna().to_numpy()
    assert res.log_likelihood == pytest.approx(float(np.sum(stats.norm.logpdf(r, scale=0.05))),
                                               rel=1e-10)
    assert res.n_parameters == 6


def test_held_out_error_equals_the_closed_form_prediction():
    # Newton cooling toward a constant room, T = Ta + (T0 - Ta) exp(-t / (R C)): fitted on the
    # first 70 % of the log; the held-out RMSE is that of the closed form with the estimates on
    # the last 30 %
    t = np.arange(0.0, 6 * 3600.0 + 1, 60.0)
    tau, Ta, T0 = 2500.0, 21.0, 60.0
    y = Ta + (T0 - Ta) * np.exp(-t / tau) + np.random.default_rng(9).normal(0, 0.05, t.size)
    sc = rcsim.loads("""
[nodes.part]
capacity = 900
initial = "50 degC"
[boundaries.air]
temperature = "20 degC"
[links.film]
between = ["part", "air"]
resistance = 2.0
""")
    res = quiet(rcsim.fit, sc, pd.DataFrame({"time": t, "part": y}),
                ["links.film.resistance", "nodes.part.initial", "boundaries.air.temperature"],
                holdout=0.3)
    est = res.estimates["value"]
    model = est["boundaries.air.temperature"] + (est["nodes.part.initial"] -
                                                  est["boundaries.air.temperature"]) * \
        np.exp(-t / (900.0 * est["links.film.resistance"]))
    held = t >= t[-1] - 0.3 * t[-1]
    assert res.holdout_rmse == pytest.approx(np.sqrt(np.mean((y[held] - model[held]) ** 2)),
                                             rel=1e-8)
    assert res.n_points == int((~held).sum())
    assert res.holdout.describe().startswith("the last 30 %")


@pytest.mark.parametrize("spec, start, end", [
    (0.25, 300.0, 400.0), ("25 %", 300.0, 400.0), ("100 s..200 s", 100.0, 200.0),
    ("..1 min", 0.0, 60.0), (("2 min", None), 120.0, 400.0)])
def test_holdout_forms(spec, start, end):
    span = parse_holdout(spec, np.array([0.0, 100.0, 200.0, 300.0, 400.0]))
    assert (span.start, span.end) == (start, end)


@pytest.mark.parametrize("spec, expected", [
    (1.5, "between 0 and 1"), ("5 h..2 h", "is empty"), ("9 h..10 h", "lies outside the log"),
    ("soon", "neither a fraction nor a time range"), ("1 kg..2 kg", "time")])
def test_bad_holdout(spec, expected):
    with pytest.raises(InputError, match=expected):
        parse_holdout(spec, np.array([0.0, 3600.0, 7200.0]))


# -- candidates ---------------------------------------------------------------------------------
def candidate_file(tmp_path, name="two.toml"):
    path = tmp_path / name
    path.write_text('''# a box whose walls store heat
[fit]   # its own free values
free = ["nodes.M.capacity", "nodes.E.capacity", "links.in.resistance", "links.out.resistance",
        "nodes.M.initial", "nodes.E.initial"]
bounds = { "nodes.M.capacity" = ["100 J/K", ""], "links.in.resistance" = "0.01 K/W..10 K/W" }
label = "two nodes"
''' + TWO, encoding="utf-8")
    return str(path)


def test_a_candidate_file_carries_its_free_values(tmp_path):
    cand = read_candidate(candidate_file(tmp_path))
    assert cand.label == "two nodes"
    assert cand.spec.free[1] == "nodes.E.capacity"
    assert cand.spec.bounds == {"nodes.M.capacity": ("100 J/K", None),
                                "links.in.resistance": ("0.01 K/W", "10 K/W")}
    assert "[fit]" not in cand.scenario.text and "# a box whose walls store heat" in \
        cand.scenario.text
    # rcsim.fit reads the free values from the file
    res = quiet(rcsim.fit, candidate_file(tmp_path), two_node_log(), starts=1)
    assert list(res.estimates.index) == list(cand.spec.free)
    assert res.estimates.loc["nodes.M.capacity", "value"] == pytest.approx(C1, rel=0.02)


def test_arguments_override_a_fit_section_as_the_command_line_does(tmp_path):
    """rcsim.fit(..., free=...) wins over the candidate file's [fit] section (which frees the two
    capacities only), as `rcsim fit --free` does, and one FitWarning names what it overrode. The
    log is the two-node box by scipy.signal.lsim (C1 = 2000 J/K, R12 = 0.5 K/W), so the
    estimates come back near the values that made it."""
    path = tmp_path / "two.toml"
    path.write_text('[fit]\nfree = ["nodes.M.capacity", "nodes.E.capacity"]\nsigma = "5 K"\n'
                    + TWO, encoding="utf-8")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        res = rcsim.fit(str(path), two_node_log(), free=FREE_TWO, sigma=0.05, starts=1)
    notes = [str(w.message) for w in caught if str(w.message).startswith("note:")]
    assert notes == ["note: two.toml: the arguments override its [fit] section's free (free=), "
                     "sigma (sigma=)"]
    assert all(issubclass(w.category, FitWarning) for w in caught
               if str(w.message).startswith("note:"))
    assert list(res.estimates.index) == FREE_TWO
    # the values of the lsim log (C1, R12 at the top of this file), within 2 %
    assert res.estimates.loc["nodes.M.capacity", "value"] == pytest.approx(C1, rel=0.02)
    assert res.estimates.loc["links.in.resistance", "value"] == pytest.approx(R12, rel=0.02)
    # the section alone: its two capacities; an argument it does not say is no override
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        res = rcsim.fit(str(path), two_node_log(), starts=1, noise="measurement")
    assert not [w for w in caught if str(w.message).startswith("note:")]
    assert list(res.estimates.index) == ["nodes.M.capacity", "nodes.E.capacity"]


def test_arguments_override_every_candidate_in_a_comparison(tmp_path):
    """In a comparison the arguments override each candidate's section too (the command line's
    rule, for every candidate), each override named once with the candidate's file."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        cmp = rcsim.fit([(rcsim.loads(ONE), {"free": ["nodes.M.capacity"], "label": "one"}),
                         candidate_file(tmp_path)], two_node_log(), free=FREE_ONE,
                        bounds={"nodes.M.capacity": ("100 J/K", None)}, starts=1)
    notes = sorted(str(w.message) for w in caught if str(w.message).startswith("note:"))
    assert len(notes) == 2
    # the file's bounds differ from the argument's; the pair says no bounds, so only free
    assert notes[1] == ("note: two.toml: the arguments override its [fit] section's free "
                        "(free=), bounds (bounds=)")
    assert notes[0].endswith("the arguments override its [fit] section's free (free=)")
    # both fitted FREE_ONE (the two-node file's own six keys overridden)
    assert list(cmp.fits["one"].estimates.index) == FREE_ONE
    assert list(cmp.fits["two nodes"].estimates.index) == FREE_ONE


@pytest.mark.parametrize("section, expected", [
    ("[fit]\nfre = ['nodes.M.capacity']\n", "unknown key 'fre'.*free"),
    ("[fit]\nnoise = 'loud'\n", "noise must be one of"),
    ("[fit]\nbounds = { 'nodes.M.capacity' = [1] }\n", "a bound is"),
    ("fit = 3\n", "fit must be a table"),
])
def test_bad_fit_sections(tmp_path, section, expected):
    path = tmp_path / "bad.toml"
    path.write_text(section + ONE, encoding="utf-8")
    with pytest.raises(InputError, match=expected):
        read_candidate(str(path))


def test_two_candidates_compared_and_the_right_one_selected(tmp_path):
    log = two_node_log()
    one = rcsim.loads(ONE)
    cmp = quiet(rcsim.fit, [(one, {"free": FREE_ONE, "label": "one node"}),
                            candidate_file(tmp_path)], log, holdout=0.2, starts=1)
    table = cmp.table
    assert list(table.index) == ["one node", "two nodes"]
    assert cmp.selected == "two nodes" and table.loc["two nodes", "selected"]
    assert table.loc["one node", "states"] == 1 and table.loc["two nodes", "states"] == 2
    assert table.loc["two nodes", "free_values"] == 6
    assert table.loc["two nodes", "delta_bic"] == 0.0 and table.loc["one node", "delta_bic"] > 100
    assert "lowest BIC" in cmp.reason and "held-out RMSE" in cmp.reason
    assert table.loc["two nodes", "rmse_holdout"] < table.loc["one node", "rmse_holdout"] / 10
    # the one-node residuals follow each other; the two-node ones are white
    assert table.loc["one node", "whiteness_p"] < 1e-6 < table.loc["two nodes", "whiteness_p"]
    # each row is its fit's numbers
    for label, fit in cmp.fits.items():
        assert table.loc[label, "bic"] == fit.bic
    # written out: the table (read back) and the selected scenario (loads, holds the estimates)
    written = pd.read_csv(cmp.to_csv(tmp_path / "cmp.csv"), index_col="candidate")
    assert written.loc["two nodes", "bic"] == pytest.approx(table.loc["two nodes", "bic"])
    path = cmp.write_selected(tmp_path / "selected.toml")
    back = rcsim.load(path)
    assert back.si_value("nodes.E.capacity") == pytest.approx(
        cmp.selected_fit.estimates.loc["nodes.E.capacity", "value"], rel=1e-9)
    assert [f for f in os.listdir(tmp_path) if f.endswith(".tmp")] == []


def test_selection_by_held_out_error_and_the_figure(tmp_path):
    import matplotlib.pyplot as plt

    cmp = quiet(rcsim.fitting.compare, [(rcsim.loads(ONE), {"label": "one", "free": FREE_ONE}),
                                        (rcsim.loads(TWO), {"label": "two", "free": FREE_TWO})],
                two_node_log(), holdout="10 h..", select="holdout", starts=1)
    assert cmp.selected == "two" and cmp.reason.startswith("lowest held-out RMSE")
    drawn = cmp.plot()
    try:
        for label, fit in cmp.fits.items():
            line = drawn.lines[f"fit:{label}"]
            np.testing.assert_allclose(line.get_ydata(), fit.curve["M"].to_numpy())
            np.testing.assert_allclose(line.get_xdata(), fit.curve.index.to_numpy() / 3600.0)
        assert drawn.spans and drawn.time_unit == "h"
    finally:
        plt.close(drawn.figure)


def test_candidates_must_measure_the_same_values():
    # a log with the envelope measured too: one candidate leaves it out, the other fits it
    log = two_node_log()
    log["E"] = log["M"] - 1.0
    with pytest.raises(InputError, match="fit different measured values"):
        quiet(rcsim.fit, [(rcsim.loads(ONE), {"free": FREE_ONE, "ignore": ["E"]}),
                          (rcsim.loads(TWO), {"free": FREE_TWO})], log, starts=1)


def test_comparison_options_are_checked():
    with pytest.raises(InputError, match="select must be one of"):
        rcsim.fitting.compare([rcsim.loads(ONE)], two_node_log(), FREE_ONE, select="best")
    with pytest.raises(InputError, match="needs a held-out span"):
        rcsim.fitting.compare([rcsim.loads(ONE)], two_node_log(), FREE_ONE, select="holdout")
    with pytest.raises(InputError, match="frees no value"):
        rcsim.fit([rcsim.loads(ONE), rcsim.loads(TWO)], two_node_log())


def test_selection_by_likelihood_ratio_tests_against_the_chi_square_closed_form():
    # forward selection over candidates of 3, 5 and 7 estimated values (2 df per step). With
    # 2 degrees of freedom the chi-square survival function is exp(-x/2) (closed form):
    # 3 -> 5 values: LR = 2 (4 - 0) = 8, p = exp(-4) = 0.0183 < 0.05: kept;
    # 5 -> 7 values: LR = 2 (5 - 4) = 2, p = exp(-1) = 0.368: not significant, stop.
    # (The 5-value candidate 'b2' is less likely than 'b' and is not the one tested.)
    from rcsim.fitting.compare import choose

    table = pd.DataFrame({"parameters": [3, 5, 5, 7], "log_likelihood": [0.0, 4.0, 3.0, 5.0],
                          "rmse_holdout": [np.nan] * 4, "whiteness_p": [np.nan] * 4,
                          "noise": ["measurement"] * 4}, index=["a", "b", "b2", "c"])
    best, reason = choose(table, "lr")
    assert best == "b"
    assert f"'b' over 'a': LR 8 on 2 df, p = {math.exp(-4):.3g}, kept" in reason
    assert f"'c' over 'b': LR 2 on 2 df, p = {math.exp(-1):.3g}, not significant" in reason
    # a first extension that is not significant leaves the smallest candidate selected
    table.loc["b", "log_likelihood"] = 0.5             # LR 1, p = exp(-0.5) = 0.607
    table.loc["b2", "log_likelihood"] = 0.2
    assert choose(table, "lr")[0] == "a"
    # candidates of one size: no test applies; the most likely is taken and the reason says so
    same = table.assign(parameters=4)
    best, reason = choose(same, "lr")
    assert best == "c" and "no likelihood-ratio test applies" in reason
