"""From the energy-form state to what a run records: temperatures of chosen nodes, chunks for
the recorder, liquid fractions and thermostat powers, the thermostats' table."""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..recording import Chunk
from .energy_model import EnergyModel

__all__ = ["OutputMap", "chunk_from_states", "extras_of", "thermostat_table"]


class OutputMap:
    """Temperatures of chosen nodes from solver states, without forming every node."""

    def __init__(self, model: EnergyModel, out_nodes: np.ndarray):
        ss = model.ss
        pos_m, pos_z = ss.state_of, ss.eliminated_of
        self.out_nodes = np.asarray(out_nodes, dtype=np.int64)
        is_m = np.asarray([int(i) in pos_m for i in self.out_nodes], dtype=bool)
        self.cols_m = np.flatnonzero(is_m)
        self.state_m = np.asarray([pos_m[int(i)] for i in self.out_nodes[is_m]], dtype=np.int64)
        self.cols_z = np.flatnonzero(~is_m)
        rows_z = np.asarray([pos_z[int(i)] for i in self.out_nodes[~is_m]], dtype=np.int64)
        self.R = ss.R[rows_z] if rows_z.size else np.zeros((0, ss.n))
        self.D = ss.D[rows_z] if rows_z.size else np.zeros((0, ss.n_inputs))

    def temperatures(self, Tm: np.ndarray, w: np.ndarray) -> np.ndarray:
        out = np.empty((Tm.shape[0], self.out_nodes.size))
        out[:, self.cols_m] = Tm[:, self.state_m]
        if self.cols_z.size:
            out[:, self.cols_z] = Tm @ self.R.T + w @ self.D.T
        return out


def chunk_from_states(model: EnergyModel, t: np.ndarray, Y: np.ndarray, H0_sum: float,
                      out_map: OutputMap, extras_fn=None) -> Chunk:
    """Build a recorder chunk from solver states (rows of Y) at times t."""
    n = model.n
    H = Y[:, :n]
    Tm = H / model.C[None, :]
    for i in model.phase_idx:
        Tm[:, i] = model.phase[i].temperature_array(H[:, i])
    if model.profiles:
        w = np.column_stack([p.value(t) for p in model.profiles])
    else:
        w = np.zeros((t.size, 0))
    extras = extras_fn(t, Tm, Y) if extras_fn is not None else {}
    return Chunk(t=t, T=out_map.temperatures(Tm, w), u=w[:, :model.M], s=w[:, model.M:],
                 e_links=Y[:, n:n + model.nb], e_sources=Y[:, n + model.nb:],
                 e_stored=H.sum(axis=1) - H0_sum, extras=extras)


def extras_of(model: EnergyModel):
    """The function giving a chunk's extra histories: liquid fractions and thermostat powers."""

    def extras_fn(t, Tm, Y):
        ex = {}
        if model.phase:
            ex["liquid_fraction"] = np.column_stack(
                [model.phase[i].liquid_fraction_array(Y[:, i]) for i in model.phase_idx])
        if model.controllers:
            ex["thermostat_power"] = np.column_stack(
                [c.power_history(t, Tm) for c in model.controllers])
        return ex

    return extras_fn


def thermostat_table(controllers, t_out, recorder):
    """Duty cycle, on-time [s], switches and energy [J] of each thermostat over the run."""
    span = float(t_out[-1] - t_out[0])
    energy = recorder.last_energy.sources[-len(controllers):]
    rows = []
    for c, e in zip(controllers, energy):
        on_time = c.on_time(float(t_out[-1])) if c.control == "on-off" else float("nan")
        duty = on_time / span if c.control == "on-off" else abs(float(e)) / (c.power * span)
        switches = float(c.switch_count())
        if c.settings.ideal:   # the average of fast switching: its on-time, switchings uncounted
            on_time, switches = duty * span, float("nan")
        control = "on-off (ideal)" if c.settings.ideal else c.control
        rows.append({"thermostat": c.name, "node": c.node, "mode": c.mode, "control": control,
                     "duty": duty, "on_time [s]": on_time, "switches": switches,
                     "energy [J]": abs(float(e))})
    return pd.DataFrame(rows)
