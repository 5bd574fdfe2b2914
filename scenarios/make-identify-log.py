"""Write identify-case-log.csv: an invented logger record of a sealed instrument case on a bench.

Inside the case a heater is switched through a few levels while a sensor logs the air inside and
a second one the room; the case's heavy walls store heat. The record is made by
``scipy.signal.lsim`` (not by rcsim) from a two-node network, so ``rcsim identify`` can be checked
against the structure and values that made it:

    C_air  dT_air/dt  = (T_wall - T_air)/R_in + P(t)
    C_wall dT_wall/dt = (T_air - T_wall)/R_in + (T_room(t) - T_wall)/R_out

Generating values: C_air = 3 kJ/K, C_wall = 20 kJ/K, R_in = 0.4 K/W, R_out = 1.2 K/W; both nodes
start at 19.0 degC; room 19.0 degC + 1.5 K sin(2 pi (t - 6 h)/24 h); heater 0 W, 20 W from 2 h,
6 W from 9 h, 0 W from 15 h. Sensor noise (normal, seed 2011) 0.03 K inside and 0.01 K in the
room, rounded to 0.01 K; a row every 2 minutes for 24 h from 2026-05-04T00:00:00.

Run:  python scenarios/make-identify-log.py   (rewrites scenarios/identify-case-log.csv)
"""

import os

import numpy as np
import pandas as pd
import scipy.signal as sig

C_AIR, C_WALL, R_IN, R_OUT, T0 = 3000.0, 20000.0, 0.4, 1.2, 19.0
HEATER = [(0.0, 0.0), (2 * 3600.0, 20.0), (9 * 3600.0, 6.0), (15 * 3600.0, 0.0)]


def main():
    t = np.arange(0.0, 24 * 3600.0 + 1.0, 120.0)
    room = T0 + 1.5 * np.sin(2 * np.pi * (t - 6 * 3600.0) / 86400.0)
    power = np.zeros_like(t)
    for start, p in HEATER:
        power[t >= start] = p
    A = [[-1 / (R_IN * C_AIR), 1 / (R_IN * C_AIR)],
         [1 / (R_IN * C_WALL), -1 / (R_IN * C_WALL) - 1 / (R_OUT * C_WALL)]]
    B = [[1 / C_AIR, 0.0], [0.0, 1 / (R_OUT * C_WALL)]]
    # inputs linear between rows, as a log is read (the heater ramps over the 2 minutes
    # before the row where its new level first shows)
    _, inside, _ = sig.lsim(sig.StateSpace(A, B, [[1.0, 0.0]], [[0.0, 0.0]]),
                            np.column_stack([power, room]), t, X0=[T0, T0])
    rng = np.random.default_rng(2011)
    stamps = pd.Timestamp("2026-05-04T00:00:00") + pd.to_timedelta(t, unit="s")
    df = pd.DataFrame({"time": stamps.strftime("%Y-%m-%dT%H:%M:%S"),
                       "inside": [f"{v:.2f}" for v in inside + rng.normal(0, 0.03, t.size)],
                       "room": [f"{v:.2f}" for v in room + rng.normal(0, 0.01, t.size)],
                       "heater [W]": [f"{v:g}" for v in power]})
    here = os.path.dirname(os.path.abspath(__file__))
    df.to_csv(os.path.join(here, "identify-case-log.csv"), index=False)


if __name__ == "__main__":
    main()
