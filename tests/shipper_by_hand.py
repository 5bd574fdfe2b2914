"""The bundled insulated shipper (scenarios/cold-box.toml) written out by hand, link by link.

An independent statement of the same physics, for checks and benchmarks: scalar Python, the
Churchill-Chu correlation from the `ht` heat-transfer library with air from a textbook table
(tests/air_table.py: Incropera et al., 6th ed., Table A.4, interpolated; not rcsim's own air
properties), the gel pack's enthalpy curve written out, every value copied from the scenario
file. State: stored energies [J] of payload,
pack_a, pack_b, box_air, liner, shell (pack enthalpy 0 at the start of melting).
"""

from __future__ import annotations

SIGMA = 5.670374419e-8
K0 = 273.15


def hand_written_box(air=None, bay=(25.0, 7.0, 9 * 3600.0), shell_initial=20.0):
    """The bundled shipper's equations written out directly (values from the scenario file).

    ``air(t_degC)`` gives k, nu, Pr and beta of the air at the film temperature; by default the
    textbook table of tests/air_table.py. ``bay`` is the outside sine (mean [degC], amplitude
    [K], time of its peak [s]) and ``shell_initial`` the outer carton's starting temperature
    [degC]: the defaults are scenarios/cold-box.toml; (-6, 4, 8 h) and -8 degC are
    scenarios/cold-box-winter.toml, which is otherwise the same box.
    """
    import math

    import ht

    if air is None:
        from air_table import air

    C = {"payload": 6 * 3600.0, "box_air": 100.0, "liner": 2500.0, "shell": 1200.0}
    L, lo, hi, cs, cl, m = 300e3, -1.5, 0.0, 2000.0, 3600.0, 2.0   # gel-pack row, 2 kg

    def pack_T(H):  # enthalpy (0 at the start of melting) to temperature
        if H < 0:
            return lo + H / (m * cs)
        top = m * (cs * (hi - lo) + L)
        if H > top:
            return hi + (H - top) / (m * cl)
        return lo + H / (m * (cs + L / (hi - lo)))

    def pack_H(T):
        return m * cs * (T - lo)  # the packs start solid

    r_foam = 0.05 / (0.025 * 1.05) + 0.004 / (0.065 * 1.2)
    r_s = (1 - 0.9) / (0.9 * 0.45) + 1 / (0.45 * 0.6) + (1 - 0.9) / (0.9 * 1.0)
    g_sep = 0.06 * 0.08 / 0.01

    def h_vertical(ts, tf, height=0.45):
        if ts == tf:
            return 0.0
        p = air(0.5 * (ts + tf))
        gr = 9.80665 * float(p["beta"]) * abs(ts - tf) * height ** 3 / float(p["nu"]) ** 2
        return ht.Nu_vertical_plate_Churchill(float(p["Pr"]), gr) * float(p["k"]) / height

    def rhs(t, y):
        pay, ha, hb, air, liner, shell = y
        Tpay, Tair, Tl, Tsh = pay / C["payload"], air / C["box_air"], liner / C["liner"], \
            shell / C["shell"]
        Ta, Tb = pack_T(ha), pack_T(hb)
        outside = bay[0] + bay[1] * math.cos(2 * math.pi * (t - bay[2]) / 86400.0)
        q_foam = (Tl - Tsh) / r_foam
        q_film = h_vertical(Tsh, outside) * 1.3 * (Tsh - outside)
        q_rad_out = 0.9 * SIGMA * 1.3 * ((Tsh + K0) ** 4 - (outside + K0) ** 4)
        q_liner_air = 2.5 * 1.0 * (Tl - Tair)
        q_pay_air = 2.5 * 0.45 * (Tpay - Tair)
        q_rad_in = SIGMA * ((Tl + K0) ** 4 - (Tpay + K0) ** 4) / r_s
        q_sa, q_sb = g_sep * (Ta - Tpay), g_sep * (Tb - Tpay)
        q_aa, q_ba = 0.25 * (Ta - Tair), 0.25 * (Tb - Tair)
        return [q_rad_in + q_sa + q_sb - q_pay_air,
                -q_sa - q_aa, -q_sb - q_ba,
                q_liner_air + q_pay_air + q_aa + q_ba,
                -q_foam - q_liner_air - q_rad_in,
                q_foam - q_film - q_rad_out]

    y0 = [C["payload"] * 5.0, pack_H(-3.0), pack_H(-3.0), C["box_air"] * 5.0, C["liner"] * 5.0,
          C["shell"] * shell_initial]
    return rhs, y0, C["payload"]
