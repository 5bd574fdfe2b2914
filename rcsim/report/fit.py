"""The report of a fit: estimates with their intervals, how well the model follows the log; of a
fit of several logs at once, the shared and per-log estimates, then one section per log."""

from __future__ import annotations

import hashlib
import os

import numpy as np
import pandas as pd

from .common import (inputs_section, network_section, provenance_items, purpose_of,
                     sha256_of, warning_texts)
from .formatting import number_text, table_from_frame
from .model import Paragraph, Preformatted, Report, Section

__all__ = ["build_fit_report", "FIT_CAUTION"]

FIT_CAUTION = ("A fitted model explains the record it was fitted to: check it against data it "
               "was not fitted to before predicting with it.")


def _estimates(fit, caption="Estimates with their standard errors and 95 % intervals",
               id="fit-estimates", note=""):
    table = fit.table()
    columns = {"key": table.index, "estimate": table["value"].to_numpy(),
               "std error": table["std_error"].to_numpy(),
               "95 % low": table["ci_low"].to_numpy(),
               "95 % high": table["ci_high"].to_numpy(),
               "unit (SI)": table["unit"].to_numpy()}
    if "start" in table:
        columns["start"] = table["start"].to_numpy()
    return table_from_frame(pd.DataFrame(columns), caption, id=id,
                            note=note + "Values in SI units (degC for temperatures; a "
                            "temperature's standard error in K).")


def _quality(fit, id="fit-quality"):
    rmse = pd.Series(fit.rmse_by_column, dtype=float)
    auto = pd.Series(fit.autocorrelation, dtype=float).reindex(rmse.index)
    counts = fit.value_counts().reindex(rmse.index, fill_value=0)
    frame = pd.DataFrame({"log column": rmse.index, "RMSE [K]": rmse.to_numpy(),
                          "lag-1 autocorrelation [-]": auto.to_numpy(),
                          "fitted values": counts["fitted"].to_numpy()})
    note = ("RMSE and autocorrelation over the fitted values. A lag-1 autocorrelation above 0.5 "
            "says the model is too simple for the data.")
    if fit.holdout is not None:
        held = pd.Series(fit.holdout_rmse_by_column, dtype=float).reindex(rmse.index)
        frame["held-out values"] = counts["held out"].to_numpy()
        frame["held-out RMSE [K]"] = held.to_numpy()
        note = (f"Held out, and not fitted: {fit.holdout.describe()}; its RMSE is that of the "
                "prediction there. " + note)
    return table_from_frame(frame, "How well the fitted model follows each measured column",
                            id=id, note=note, missing={"held-out RMSE [K]": "no value"})


def build_fit_report(fit, scenario=None, *, log_path=None, warnings=None,
                     title: str | None = None, figures: bool = True) -> Report:
    """The report of ``fit`` (a :class:`rcsim.FitResult`, or a fit of several logs at once,
    :class:`rcsim.fitting.JointFit`: its shared and per-log estimates, then one section per log
    with its quality, figure and gaps).

    ``scenario``: the scenario as it was before the fit (default: the fitted scenario's source
    text and network with the estimates written in); ``log_path``: the log file (a list of them
    for several logs), whose SHA-256 then goes into the provenance; ``warnings``: further
    warnings of the command (the fit's own are always listed).
    """
    if hasattr(fit, "records"):
        return _build_joint_report(fit, scenario, log_path=log_path, warnings=warnings,
                                   title=title, figures=figures)
    fitted = fit.fitted_scenario
    base = scenario if scenario is not None else fitted
    name = getattr(base, "name", "") or "scenario"
    heading = title or getattr(base, "title", "") or name
    glance = [("scenario", name), ("log", fit.log_name or "-"),
              ("measured values", _values_text(fit)),
              ("free values", str(len(fit.estimates))),
              ("RMSE", f"{number_text(fit.rmse, 4)} K (over the fitted values)"),
              *_held_out_glance(fit),
              ("model runs", f"{fit.n_evaluations} ({fit.solver} path"
                             f"{f', {fit.n_decompositions} decompositions' if fit.n_decompositions else ''})"),
              ("wall time", f"{number_text(fit.wall_time, 3)} s")]
    sections = [Section("estimates", "Estimates", [_estimates(fit), _quality(fit)])]
    if len(fit.estimates) > 1:
        sections[0].blocks.append(table_from_frame(
            fit.correlation, "Correlation of the estimates", id="fit-correlation", index="key",
            note="Beyond \u00b10.95 the data fix a combination of the two values, not each."))
    if figures:
        from .figures import figure_of

        drawn = fit.plot()
        sections.append(Section("figures", "Figures", [figure_of(
            drawn.figure, "fig-fit", "Measured (dots) and fitted (lines) temperatures, "
                                      "measured \u2212 fitted below.")]))
    more = []
    if fit.gaps is not None and len(fit.gaps):
        more.append(table_from_frame(fit.gaps, "Spans of the log without data", id="fit-gaps"))
    if len(fit.starts):
        more.append(table_from_frame(fit.starts, "Starting points and where they ended",
                                     id="fit-starts", index="start"))
    taus = np.asarray(fit.time_constants if fit.time_constants is not None else [], dtype=float)
    if taus.size:
        more.append(Paragraph("Time constants of the fitted network: " + ", ".join(
            f"{number_text(t / 3600.0, 4)} h" for t in taus[:6]) + "."))
    if more:
        sections.append(Section("details", "Details of the search", more))
    sections += [network_section(fitted), inputs_section(
        fitted, intro="The fitted scenario: the scenario's inputs with the estimates written in.")]
    sections.append(Section("fitted-scenario", "The fitted scenario", [
        Paragraph("The scenario with the estimates written in, as `rcsim fit --write-scenario` "
                  "writes it."), Preformatted(fit.to_toml(), "", "fitted-toml")]))
    extra = [("log file", fit.log_name or "")]
    if log_path is not None:
        extra.append(("log SHA-256", _file_sha256(log_path)))
    return _fit_report(base, name, heading, f"Fit report \u00b7 {name} to {fit.log_name}",
                       glance, sections, list(fit.warnings) + list(warnings or []), extra,
                       fit.to_toml())


def _values_text(fit) -> str:
    """The glance's count of values: those fitted, and those held out where there are."""
    counts = fit.value_counts()
    fitted = int(counts["fitted"].sum())
    total = int(counts["measured"].sum())
    if fit.holdout is None:
        return f"{total} (all fitted)" if fitted == total else f"{total} ({fitted} fitted)"
    return (f"{total}: {fitted} fitted, {int(counts['held out'].sum())} held out in "
            f"{fit.holdout.describe()}")


def _joint_values_text(joint, records) -> str:
    """The values of several logs: those fitted (all logs together) and those held out."""
    counts = [r.value_counts() for r in records.values()]
    held = sum(int(c["held out"].sum()) for c in counts)
    if not held:
        return f"{joint.n_points} (all fitted)"
    measured = sum(int(c["measured"].sum()) for c in counts)
    return f"{measured}: {joint.n_points} fitted, {held} held out (see each log)"


def _held_out_glance(fit) -> list:
    if fit.holdout is None:
        return []
    return [("held-out RMSE", f"{number_text(fit.holdout_rmse, 4)} K (the prediction over the "
                              "held-out values)")]


def _file_sha256(path) -> str:
    with open(path, "rb") as fh:
        return hashlib.sha256(fh.read()).hexdigest()


def _fit_report(base, name, heading, title, glance, sections, warnings, extra, fitted_toml):
    """The report around its sections: warnings, provenance with the fitted scenario's hash, and
    the fit caution (one place for a single log and several)."""
    text = getattr(base, "text", "") or ""
    extra = [*extra, ("fitted scenario SHA-256", sha256_of(fitted_toml))]
    report = Report("fit", heading, title, purpose_of(base), glance, sections,
                    warning_texts(warnings), provenance_items(text, name, extra), text)
    report.extra_caution = FIT_CAUTION
    return report



def _log_facts(res) -> str:
    """One record's numbers in words: values, RMSE, held-out error, Ljung-Box test."""
    text = f"{res.values_text()}; RMSE {number_text(res.rmse, 4)} K over the fitted values"
    if res.holdout is not None and np.isfinite(res.holdout_rmse):
        text += f"; held-out RMSE {number_text(res.holdout_rmse, 4)} K"
    p = res.whiteness_p
    if np.isfinite(p):
        text += (f"; Ljung-Box test of the residuals p = {number_text(p, 3)} ("
                 + ("white" if p >= 0.05 else "not white: the model misses a dynamic of the "
                    "data") + ")")
    return text + "."


def _log_section(i, name, res, joint, figures) -> Section:
    """The section of one log of a fit of several: its own values, quality, figure, gaps."""
    own = joint.table()
    own = own[[k.endswith(f"@{name}") for k in own.index]]
    blocks = [Paragraph(_log_facts(res))]
    if len(own):
        frame = pd.DataFrame({"key": own.index, "estimate": own["value"].to_numpy(),
                              "std error": own["std_error"].to_numpy(),
                              "95 % low": own["ci_low"].to_numpy(),
                              "95 % high": own["ci_high"].to_numpy(),
                              "unit (SI)": own["unit"].to_numpy()})
        blocks.append(table_from_frame(frame, f"The values of {name} alone", id=f"fit-own-{i}"))
    blocks.append(_quality(res, id=f"fit-quality-{i}"))
    if figures:
        from .figures import figure_of

        drawn = res.plot()
        blocks.append(figure_of(drawn.figure, f"fig-fit-{i}", f"{name}: measured (dots) and "
                                "fitted (lines) temperatures, measured \u2212 fitted below."))
    if res.gaps is not None and len(res.gaps):
        blocks.append(table_from_frame(res.gaps, f"Spans of {name} without data",
                                       id=f"fit-gaps-{i}"))
    return Section(f"log-{i}", f"Log {i}: {name}", blocks)


def _build_joint_report(joint, scenario, *, log_path, warnings, title, figures) -> Report:
    """The report of one scenario fitted to several logs at once (a JointFit)."""
    records = dict(joint.records)
    first = next(iter(records.values()))
    fitted = joint.fitted_scenario
    base = scenario if scenario is not None else fitted
    name = getattr(base, "name", "") or "scenario"
    heading = title or getattr(base, "title", "") or name
    logs = ", ".join(records)
    glance = [("scenario", name), ("logs", f"{len(records)}: {logs}"),
              ("measured values", _joint_values_text(joint, records)),
              ("free values", f"{len(joint.estimates)} (shared, and KEY@log for one log's own)"),
              ("RMSE", f"{number_text(joint.rmse, 4)} K"),
              ("log-likelihood", f"{number_text(joint.log_likelihood, 6)} (AIC "
                                 f"{number_text(joint.aic, 6)}, BIC {number_text(joint.bic, 6)})"),
              ("wall time", f"{number_text(joint.wall_time, 3)} s")]
    blocks = [_estimates(joint, note="Shared across the logs, then each log's own values "
                                     "(KEY@log). ")]
    if len(joint.estimates) > 1:
        blocks.append(table_from_frame(
            joint.correlation, "Correlation of the estimates", id="fit-correlation", index="key",
            note="Beyond \u00b10.95 the data fix a combination of the two values, not each."))
    sections = [Section("estimates", "Estimates", blocks)]
    sections += [_log_section(i, rec, res, joint, figures)
                 for i, (rec, res) in enumerate(records.items(), 1)]
    sections += [network_section(fitted), inputs_section(
        fitted, intro="The fitted scenario: the scenario's inputs with the shared estimates and "
                      "the first log's own values written in.")]
    sections.append(Section("fitted-scenario", "The fitted scenario", [
        Paragraph(f"The scenario with the shared estimates and the own values of {first.log_name} "
                  "written in, as `rcsim fit --write-scenario` writes it."),
        Preformatted(first.to_toml(), "", "fitted-toml")]))
    paths = [] if log_path is None else (list(log_path) if isinstance(log_path, (list, tuple))
                                         else [log_path])
    extra = [("log files", logs)]
    extra += [(f"SHA-256 of {os.path.basename(os.fspath(path))}", _file_sha256(path))
              for path in paths]
    title = f"Fit report \u00b7 {name} to {len(records)} logs at once"
    return _fit_report(base, name, heading, title, glance, sections,
                       list(joint.warnings) + list(warnings or []), extra, first.to_toml())
