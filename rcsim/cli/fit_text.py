"""The text ``rcsim fit`` and ``rcsim identify`` print: a fit's estimates and quality, a fit of
several logs, a comparison of candidates, the steps of an identification.

Plain strings only; nothing here prints and nothing imports the library's heavy parts at import
time (the commands import this module when ``rcsim --help`` lists them).
"""

from __future__ import annotations

import math

from .format import CAUTION, format_time

__all__ = ["format_fit_summary", "format_joint_summary", "format_comparison", "format_steps",
           "display_unit_of", "estimate_lines", "strong_correlations", "quality_lines",
           "CLOSING"]

#: the closing lines of every fit's text
CLOSING = ["", "check the fitted model against data it was not fitted to before predicting "
               "with it.", CAUTION]


def display_unit_of(kind: str, raw) -> tuple[float, str]:
    """(factor, unit): a value of ``kind`` (SI) times factor is in the unit the scenario used."""
    from ..units import KINDS, registry

    if kind == "temperature":
        return 1.0, "degC"
    si = KINDS[kind][0]
    if isinstance(raw, str):
        parts = raw.strip().split(None, 1)
        if len(parts) == 2:
            ureg = registry()
            try:
                return float(ureg.Quantity(1.0, ureg.parse_units(si)).to(
                    ureg.parse_units(parts[1])).magnitude), parts[1]
            except Exception:  # noqa: BLE001 - pint raises many types; fall back to SI
                pass
    return 1.0, si.replace("**", "^")


def format_fit_summary(sc, res) -> str:
    """The text printed by ``rcsim fit`` for one log."""
    lines = _fit_header(sc, res)
    lines += estimate_lines(sc, res)
    lines.append("")
    per = ", ".join(f"{c} {v:.3g} K" for c, v in res.rmse_by_column.items())
    lines.append(f"  RMSE {res.rmse:.3g} K ({per}); residual lag-1 autocorrelation "
                 + ", ".join(f"{c} {v:.2f}" for c, v in res.autocorrelation.items()))
    lines += quality_lines(res)
    lines.append("  correlations of 0.8 or more: " + (strong_correlations(res.correlation)
                                                       or "none"))
    if res.time_constants is not None and len(res.time_constants):
        tau = ", ".join(format_time(x) for x in list(res.time_constants)[:4])
        lines.append(f"  time constants of the fitted network: {tau}"
                     + (" ..." if len(res.time_constants) > 4 else ""))
    if res.warnings:
        lines.append(f"  {len(res.warnings)} warning(s): see the lines starting with 'warning:'")
    return "\n".join(lines + CLOSING)


def format_joint_summary(sc, joint) -> str:
    """The text printed by ``rcsim fit`` for several logs fitted at once."""
    records = list(joint.records.values())
    counts = [rec.value_counts() for rec in records]
    held = sum(int(c["held out"].sum()) for c in counts)
    values = (f"{joint.n_points} measured values" if not held else
              f"{sum(int(c['measured'].sum()) for c in counts)} measured values ({joint.n_points}"
              f" fitted, {held} held out)")
    lines = [f"{sc.name} fitted to {len(records)} logs at once: {values}; values shared across "
             "the logs, and per log (KEY@log)",
             f"  {len(joint.estimates)} free value(s), {joint.wall_time:.3g} s", ""]
    lines += estimate_lines(sc, joint)
    lines.append("")
    lines.append(f"  RMSE {joint.rmse:.3g} K; log-likelihood {joint.log_likelihood:.6g}, "
                 f"AIC {joint.aic:.6g}, BIC {joint.bic:.6g} ({joint.n_parameters} values "
                 "estimated)")
    for name, rec in joint.records.items():
        counts = rec.value_counts()
        text = f"  {name}: {rec.n_points} values, RMSE {rec.rmse:.3g} K" if rec.holdout is None \
            else (f"  {name}: {int(counts['measured'].sum())} values ({rec.n_points} fitted, "
                  f"{int(counts['held out'].sum())} held out), RMSE {rec.rmse:.3g} K")
        if math.isfinite(rec.holdout_rmse):
            text += f", held-out RMSE {rec.holdout_rmse:.4g} K"
        if math.isfinite(rec.whiteness_p):
            text += f", Ljung-Box p {_p(rec.whiteness_p)}"
        lines.append(text)
    lines += _noise_lines(joint)
    lines.append("  correlations of 0.8 or more: " + (strong_correlations(joint.correlation)
                                                       or "none"))
    if joint.warnings:
        lines.append(f"  {len(joint.warnings)} warning(s): see the lines starting with "
                     "'warning:'")
    return "\n".join(lines + CLOSING)


def quality_lines(res) -> list[str]:
    """Held-out error, the Ljung-Box test and the noise estimates of a fit (when it has them)."""
    lines = []
    if res.noise == "process" or res.holdout is not None:
        text = f"  log-likelihood {res.log_likelihood:.6g}, AIC {res.aic:.6g}, BIC {res.bic:.6g}"
        if res.noise == "process":
            text += (f"; the deterministic run's RMSE {res.simulation_rmse:.3g} K (the RMSE "
                     "above is of the one-step-ahead predictions)")
        lines.append(text)
    if res.holdout is not None:
        lines.append(f"  held out: {res.holdout.describe()}: RMSE {res.holdout_rmse:.4g} K "
                     f"over {_held_points(res)} values")
    if res.whiteness is not None and len(res.whiteness):
        tests = ", ".join(f"{c} Q {row['statistic']:.4g} on {int(row['lags'])} lags, "
                          f"p {_p(row['p_value'])}" for c, row in res.whiteness.iterrows())
        lines.append(f"  Ljung-Box test of the residuals: {tests} ("
                     + ("white" if res.whiteness_p >= 0.05 else "not white: the model misses a "
                        "dynamic of the data") + ")")
    return lines + _noise_lines(res)


def _noise_lines(res) -> list[str]:
    if res.noise != "process" or res.noise_estimates is None:
        return []
    parts = []
    for key, row in res.noise_estimates.iterrows():
        unit = "K/s^0.5" if str(key).startswith("process.") else "K"
        parts.append(f"{key} {row['value']:.4g} {unit}")
    return ["  noise (Kristensen, Madsen & Jorgensen 2004 stochastic model): " + ", ".join(parts)]


def _compared_values(cmp) -> str:
    """The values each candidate was fitted to, and those held out where there are."""
    points = int(cmp.table["points"].iloc[0])
    fit = cmp.selected_fit
    records = list(fit.records.values()) if hasattr(fit, "records") else [fit]
    held = sum(int(r.value_counts()["held out"].sum()) for r in records)
    return f"{points} measured values fitted, {held} held out" if held else \
        f"{points} measured values"


def _held_points(res) -> int:
    held = res.holdout_residuals
    if held is None:
        return 0
    import numpy as np

    return int(np.isfinite(held.to_numpy(dtype=float)).sum())


def _p(p: float) -> str:
    if not math.isfinite(p):
        return "n/a"
    return "< 1e-12" if p < 1e-12 else f"{p:.3g}"


def _fit_header(sc, res) -> list[str]:
    def described(columns):
        return ", ".join(f"{c}" if res.targets[c] == c else f"{c} -> {res.targets[c]}"
                         for c in columns)

    # what drives the model: the boundary columns, then the columns that drive sources
    driving = list(res.inputs.columns) + [c for c in res.targets if c not in res.inputs.columns
                                          and c not in res.measured.columns]
    cols, inputs = described(res.measured.columns), described(driving)
    noise = "; with process noise (Kalman filter)" if res.noise == "process" else ""
    return [f"{sc.name} fitted to {res.log_name}: {res.values_text(cols)}"
            f"{'; measured inputs: ' + inputs if inputs else ''}{noise}",
            f"  {len(res.estimates)} free value(s), {len(res.starts)} start(s), "
            f"{res.n_evaluations} model runs ({res.solver} path, {res.n_decompositions} "
            f"decompositions)" + (f", {res.wall_time:.3g} s" if res.wall_time > 0 else ""),
            ""]


def estimate_lines(sc, res) -> list[str]:
    """The estimates with their 95 % intervals, in the units the scenario wrote them in
    (a key ``KEY@log`` is the value of one log)."""
    width = max([len(k) for k in res.estimates.index] + [3])
    lines = [f"  {'key':<{width}}  {'estimate':>12}  {'std error':>10}  "
             f"{'95 % interval':>25}  unit"]
    for k, row in res.estimates.iterrows():
        key = k.split("@", 1)[0]
        kind = res.units[key]
        factor, unit = display_unit_of(kind, sc.value(key))
        if kind == "temperature":
            unit = "degC (std error in K)"
        lines.append(f"  {k:<{width}}  {row['value'] * factor:>12.5g}  "
                     f"{row['std_error'] * factor:>10.3g}  {row['ci_low'] * factor:>11.5g} .. "
                     f"{row['ci_high'] * factor:<11.5g}  {unit}")
    return lines


def strong_correlations(corr) -> str:
    """Pairs of estimates correlated by 0.8 or more, as text."""
    keys = list(corr.index)
    strong = []
    for i in range(len(keys)):
        for j in range(i + 1, len(keys)):
            c = corr.iloc[i, j]
            if math.isfinite(c) and abs(c) >= 0.8:
                strong.append(f"{keys[i]} ~ {keys[j]} {c:+.3f}")
    return "; ".join(strong)


def _number(x, digits: int = 6) -> str:
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return "-"
    return f"{x:.{digits}g}"


def _table(rows: list[list[str]], header: list[str], left: int = 0) -> list[str]:
    """Rows under a header, column ``left`` (a name) and the last (a mark) left-aligned."""
    widths = [max(len(r[i]) for r in rows + [header]) for i in range(len(header))]
    last = len(header) - 1

    def line(cells):
        return ("  " + "  ".join(c.ljust(w) if i in (left, last) else c.rjust(w)
                                 for i, (c, w) in enumerate(zip(cells, widths)))).rstrip()

    return [line(header)] + [line(r) for r in rows]


def format_comparison(cmp) -> str:
    """The comparison table of ``rcsim fit --candidate ...`` and the selected candidate."""
    t = cmp.table
    header = ["candidate", "states", "free", "log-lik", "AIC", "BIC", "dBIC", "RMSE [K]",
              "held-out [K]", "Ljung-Box p", ""]
    rows = [[str(name), str(int(r["states"])), str(int(r["free_values"])),
             _number(r["log_likelihood"]), _number(r["aic"]), _number(r["bic"]),
             _number(r["delta_bic"], 4), _number(r["rmse_fit"], 4),
             _number(r["rmse_holdout"], 4), _p(float(r["whiteness_p"])),
             "selected" if r["selected"] else ""] for name, r in t.iterrows()]
    noise = "process noise (Kalman filter)" if (t["noise"] == "process").all() else \
        "measurement noise" if (t["noise"] == "measurement").all() else "mixed noise models"
    lines = [f"{len(t)} candidates compared ({noise}; {_compared_values(cmp)} each):"]
    lines += _table(rows, header)
    lines.append(f"selected {cmp.selected!r} by {_CRITERIA[cmp.criterion]}: {cmp.reason}")
    return "\n".join(lines)


_CRITERIA = {"bic": "BIC", "aic": "AIC", "holdout": "the held-out RMSE",
             "lr": "likelihood-ratio tests"}


def format_steps(ident) -> str:
    """The path of ``rcsim identify``: its steps as a table, the path in words, the selected
    structure's estimates."""
    s = ident.steps
    header = ["step", "structure", "nodes", "free", "log-lik", "AIC", "BIC", "LR p",
              "held-out [K]", "Ljung-Box p", ""]
    rows = [[str(int(r["step"])), str(r["structure"]), str(int(r["nodes"])),
             str(int(r["free_values"])), _number(r["log_likelihood"]), _number(r["aic"]),
             _number(r["bic"]), _p(float(r["p_value"])), _number(r["rmse_holdout"], 4),
             _p(float(r["whiteness_p"])),
             "selected" if r["selected"] else "kept" if r["accepted"] else ""]
            for _, r in s.iterrows()]
    lines = ident.path.splitlines()[:1] + [f"{len(s)} structures fitted in "
                                           f"{ident.wall_time:.3g} s:"]
    lines += _table(rows, header, left=1)
    lines += ident.path.splitlines()[1:]
    lines += [f"  note: {n}" for n in ident.notes]
    return "\n".join(lines)
