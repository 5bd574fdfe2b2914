"""Write fit-block-log.csv: an invented logger record of an aluminium block warming in a room.

The record is made by the closed-form solution of one lumped node (not by rcsim), so a fit of
``fit-block.toml`` to it can be checked against the values that made it:

    C dT/dt = (T_room(t) - T)/R + P(t),   T_room = a + b t (a linear drift),  P piecewise constant

On a piece with constant P the solution is T = T_p + (T(t_s) - T_p(t_s)) exp(-(t - t_s)/tau),
tau = R C, with the particular solution T_p(t) = a + b (t - tau) + P R.

Generating values: C = 1794 J/K (2.0 kg of aluminium at 897 J/(kg*K)), R = 1.5 K/W, T(0) = 6.0 degC;
room 20.0 degC drifting to 21.5 degC over 12 h; heater 8 W from 3 h to 7 h. Logger noise
(normal, seed 2026) 0.05 K on the block and 0.01 K on the room air (an averaged reading: noise in
a column that drives the model passes into the fit unseen, biasing it slightly), both rounded to
0.01 K; rows every minute from
2026-03-02T08:00:00, with the rows of 03:20 to 03:59 missing and a few empty cells.

Run:  python scenarios/make-fit-block-log.py   (rewrites scenarios/fit-block-log.csv)
"""

import os

import numpy as np
import pandas as pd

C, R, T0 = 1794.0, 1.5, 6.0
A_ROOM, END = 20.0, 12 * 3600.0
B_ROOM = 1.5 / END
HEATER = [(0.0, 0.0), (3 * 3600.0, 8.0), (7 * 3600.0, 0.0)]  # (from, power)


def block_temperature(t):
    tau = R * C
    out = np.empty_like(t)
    T_start = T0
    edges = [h[0] for h in HEATER] + [np.inf]
    for (ts, p), te in zip(HEATER, edges[1:]):
        def particular(x):
            return A_ROOM + B_ROOM * (x - tau) + p * R
        sel = (t >= ts) & (t < te)
        out[sel] = particular(t[sel]) + (T_start - particular(ts)) * np.exp(-(t[sel] - ts) / tau)
        if np.isfinite(te):
            T_start = particular(te) + (T_start - particular(ts)) * np.exp(-(te - ts) / tau)
    return out


def main():
    t = np.arange(0.0, END + 1.0, 60.0)
    rng = np.random.default_rng(2026)
    block = np.round(block_temperature(t) + rng.normal(0.0, 0.05, t.size), 2)
    room = np.round(A_ROOM + B_ROOM * t + rng.normal(0.0, 0.01, t.size), 2)
    stamps = pd.Timestamp("2026-03-02T08:00:00") + pd.to_timedelta(t, unit="s")
    df = pd.DataFrame({"time": stamps.strftime("%Y-%m-%dT%H:%M:%S"),
                       "block": [f"{v:.2f}" for v in block], "room": [f"{v:.2f}" for v in room]})
    df.loc[[95, 431, 600], "block"] = ""     # the logger missed a reading
    df.loc[[512], "room"] = ""
    df = df.drop(index=range(200, 240))       # 40 minutes without any row
    here = os.path.dirname(os.path.abspath(__file__))
    df.to_csv(os.path.join(here, "fit-block-log.csv"), index=False)


if __name__ == "__main__":
    main()
