"""Thermostats: what the user wrote (:class:`Thermostat`) and what a run changes
(:class:`ThermostatState`).

A :class:`Thermostat` is a heater or cooler switched on a sensed node's temperature; it is part of
a :class:`rcsim.network.Network` and is never changed by running it. Each run binds the network's
thermostats to its states and works on fresh :class:`ThermostatState` objects (on or off, the
switching log), so running a network twice gives the same result.

``control='on-off'``: a heater comes on when the sensed temperature falls to ``setpoint - band/2``
and goes off when it rises to ``setpoint + band/2`` (a cooler the other way round).
``control='proportional'``: the power goes linearly from full at ``setpoint - band/2`` to zero at
``setpoint + band/2`` for a heater (reversed for a cooler), limited to [0, power]. Power in W,
positive into the node for a heater, out of it for a cooler.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from .base import suggest
from .errors import InputError, NetworkError
from .parts import check_keys
from .units import to_si

__all__ = ["Thermostat", "ThermostatState", "make_thermostat", "add_thermostats_from_scenario",
           "THERMOSTAT_KEYS", "IDEAL_CYCLES_PER_STEP", "IDEAL_BAND_FLOOR", "run_as_ideal",
           "shortest_cycle", "narrowest_switching_band", "IDEAL_SWITCHES"]

#: An on/off thermostat whose shortest possible cycle is below 1/IDEAL_CYCLES_PER_STEP of the
#: output step and that could switch more than IDEAL_SWITCHES times in the run is run as an
#: ideal controller (:func:`run_as_ideal`).
IDEAL_CYCLES_PER_STEP = 10
IDEAL_SWITCHES = 20_000
#: The ideal controller's proportional band is never narrower than this [K]: its power is then
#: the gain times a temperature difference known to 2.2e-16 x |T| (1e-8 of full power at 50 degC).
IDEAL_BAND_FLOOR = 1e-6

THERMOSTAT_KEYS = {"node", "sensor", "mode", "setpoint", "band", "power", "control", "initially"}


@dataclass(frozen=True)
class Thermostat:
    """The settings of a heater or cooler switched on a sensed node's temperature.

    Attributes
    ----------
    name, node, sensor : str
        The thermostat's name, the node its power goes into, the node it senses.
    mode : 'heat' or 'cool'
    setpoint : float
        Middle of the band [degC].
    band : float
        Width of the dead band (on/off) or of the proportional band [K], > 0.
    power : float
        Full power [W], > 0.
    control : 'on-off' or 'proportional'
    initially : 'on', 'off' or None
        The on/off state at t = 0 (None: on when the sensed node is on the wrong side of the
        setpoint).
    where : str
        Key path for messages.
    """

    name: str
    node: str
    sensor: str
    mode: str
    setpoint: float
    band: float
    power: float
    control: str = "on-off"
    initially: str | None = None
    where: str = ""
    #: True when this on/off thermostat is run as an ideal controller (:func:`run_as_ideal`)
    ideal: bool = False

    @property
    def sign(self) -> float:
        """+1 for a heater (power into the node), -1 for a cooler."""
        return 1.0 if self.mode == "heat" else -1.0

    def proportional_power(self, T):
        """Power magnitude [W] of the proportional law at sensed temperature(s) T [degC]."""
        x = (self.setpoint + 0.5 * self.band - T) / self.band      # 1 at the low end, 0 at the top
        if self.mode == "cool":
            x = 1.0 - x
        return np.clip(x, 0.0, 1.0) * self.power

    def fraction_coefficients(self) -> tuple[float, float]:
        """(alpha, beta) with the proportional law's unclipped fraction x = alpha + beta T."""
        half = 0.5 * self.band
        if self.mode == "heat":
            return (self.setpoint + half) / self.band, -1.0 / self.band
        return (half - self.setpoint) / self.band, 1.0 / self.band

    def slope(self, T: float):
        """d(power into the node)/d(sensed temperature) [W/K]: nonzero only for the proportional
        law inside its band (None otherwise)."""
        if self.control != "proportional":
            return None
        if not (self.setpoint - 0.5 * self.band < T < self.setpoint + 0.5 * self.band):
            return None
        return self.sign * (-self.power if self.mode == "heat" else self.power) / self.band

    def bind(self, asm, ss) -> "ThermostatState":
        """A fresh run state for this thermostat in the reduced system ``ss`` of ``asm``."""
        return ThermostatState(self, asm, ss)

    # compatibility with code written before settings and state were separated
    def _proportional(self, T):
        return self.proportional_power(T)


class ThermostatState:
    """What a run changes: the thermostat's states in the reduced system, on or off, its log.

    The settings stay in :attr:`settings`; their fields are readable here too (``state.power``).
    """

    def __init__(self, settings: Thermostat, asm, ss):
        self.settings = settings
        pos_m = {int(i): p for p, i in enumerate(ss.massive)}
        for key, name in (("node", settings.node), ("sensor", settings.sensor)):
            i = asm.node_names.index(name)
            if i not in pos_m:
                raise NetworkError(f"thermostat {settings.name!r}: {key} {name!r} has no heat "
                                   "capacity", settings.where, "give the node a capacity")
        self.node_idx = pos_m[asm.node_names.index(settings.node)]     # state indices
        self.sensor_idx = pos_m[asm.node_names.index(settings.sensor)]
        self.n = ss.n
        self.on = False
        self.log_t: list = []      # times [s] of the start and of every switching
        self.log_on: list = []     # the state from each of those times on

    # the settings, read through
    name = property(lambda self: self.settings.name)
    node = property(lambda self: self.settings.node)
    sensor = property(lambda self: self.settings.sensor)
    mode = property(lambda self: self.settings.mode)
    control = property(lambda self: self.settings.control)
    setpoint = property(lambda self: self.settings.setpoint)
    band = property(lambda self: self.settings.band)
    power = property(lambda self: self.settings.power)
    sign = property(lambda self: self.settings.sign)

    def reset(self, t0: float, Tm) -> None:
        """Start a run at ``t0`` with state temperatures ``Tm``: on or off from ``initially`` or
        the sensed temperature, and switched at once when the band contradicts that."""
        st = self.settings
        T = float(Tm[self.sensor_idx])
        if st.initially is not None:
            self.on = st.initially == "on"
        elif st.mode == "heat":
            self.on = T < st.setpoint
        else:
            self.on = T > st.setpoint
        # a state given with ``initially`` that the band already contradicts (a heater on above
        # its cut-out, off below its cut-in; a cooler the other way round) switches at once
        half = 0.5 * st.band
        if self.on and (T >= st.setpoint + half if st.mode == "heat"
                        else T <= st.setpoint - half):
            self.on = False
        elif not self.on and (T <= st.setpoint - half if st.mode == "heat"
                              else T >= st.setpoint + half):
            self.on = True
        self.log_t = [t0]
        self.log_on = [self.on]

    def power_now(self, Tm) -> float:
        """Power magnitude [W] now, from the state temperatures ``Tm``."""
        if self.control == "proportional":
            return float(self.settings.proportional_power(Tm[self.sensor_idx]))
        return self.power if self.on else 0.0

    def power_vector(self, t, Tm) -> np.ndarray:
        v = np.zeros(self.n)
        v[self.node_idx] = self.sign * self.power_now(Tm)
        return v

    def slope(self, T: float):
        return self.settings.slope(T)

    def jacobian_entry(self, Tm):
        """(row, col, dP/dT) in state indices, or None (see :meth:`Thermostat.slope`)."""
        d = self.settings.slope(float(Tm[self.sensor_idx]))
        return None if d is None else (self.node_idx, self.sensor_idx, d)

    def event_value(self, t, Tm):
        """Switching function of the on/off law (None for proportional control)."""
        if self.control != "on-off":
            return None
        return float(Tm[self.sensor_idx]) - self.threshold()

    def threshold(self) -> float:
        """Sensed temperature [degC] at which the on/off law switches next: the top of the band
        for a heater that is on or a cooler that is off, the bottom otherwise."""
        rising = self.on == (self.mode == "heat")
        return self.setpoint + (0.5 if rising else -0.5) * self.band

    def switch(self, t: float, Tm=None) -> None:
        """Switch at time ``t`` [s]."""
        self.on = not self.on
        self.log_t.append(t)
        self.log_on.append(self.on)

    def set_switches(self, times) -> None:
        """Replace the log after the start by switchings at ``times`` [s] (alternating)."""
        first = self.log_on[0]
        self.log_t = [self.log_t[0]] + list(times)
        self.log_on = [first if k % 2 == 0 else not first for k in range(len(self.log_t))]

    def power_history(self, t: np.ndarray, Tm_rows: np.ndarray) -> np.ndarray:
        """Power [W, positive into the node] at the sample times (rows of state temperatures)."""
        if self.control == "proportional":
            return self.sign * self.settings.proportional_power(Tm_rows[:, self.sensor_idx])
        idx = np.searchsorted(np.asarray(self.log_t), t, side="right") - 1
        on = np.asarray(self.log_on)[np.clip(idx, 0, None)]
        return self.sign * self.power * on

    def on_time(self, t_end: float) -> float:
        """Time on [s] from the start of the log to ``t_end`` (on/off control)."""
        times = np.append(np.asarray(self.log_t, dtype=float), t_end)
        return float(np.sum(np.diff(times) * np.asarray(self.log_on, dtype=float)))

    def switch_count(self) -> int:
        return max(0, len(self.log_t) - 1)


def shortest_cycle(thermostat: Thermostat, sensor_capacity: float) -> float:
    """The shortest on/off cycle possible [s]: with its band b swept at the rate the heat flow
    difference allows, on for b C / (P - Q) and off for b C / Q (Q the loss, 0 < Q < P), a cycle
    lasts at least 4 b C / P (at Q = P/2). C is the sensed node's capacity."""
    return 4.0 * thermostat.band * sensor_capacity / thermostat.power


def narrowest_switching_band(thermostat: Thermostat, sensor_capacity: float, step: float,
                             duration: float) -> float:
    """The narrowest band [K] an on/off thermostat is switched with (:func:`run_as_ideal`).

    Below it, its shortest cycle (:func:`shortest_cycle`) is under 1/IDEAL_CYCLES_PER_STEP of
    the output step ``step`` *and* it could switch more than IDEAL_SWITCHES times over
    ``duration`` (two switchings per cycle); and never below IDEAL_BAND_FLOOR.
    """
    per_kelvin = 4.0 * sensor_capacity / thermostat.power          # cycle [s] per K of band
    by_step = step / (IDEAL_CYCLES_PER_STEP * per_kelvin)
    by_count = 2.0 * duration / (IDEAL_SWITCHES * per_kelvin)
    return max(IDEAL_BAND_FLOOR, min(by_step, by_count))


def run_as_ideal(thermostats, capacity_of, step: float, duration: float):
    """The thermostats to run and the names of those made ideal.

    The rule: an on/off thermostat whose band is narrower than
    :func:`narrowest_switching_band` (its shortest possible cycle below a tenth of the output
    step ``step`` [s] and more than 20,000 switchings possible over ``duration`` [s], or a band
    below :data:`IDEAL_BAND_FLOOR`) switches faster than the output can show, at a cost without
    bound; it is run as an *ideal controller*: the average of its switching, a proportional law
    over its band (widened to :data:`IDEAL_BAND_FLOOR` if narrower). It delivers the same heat
    and keeps the sensed temperature inside the same band as the switching would; its
    switchings are not counted. A proportional band narrower than IDEAL_BAND_FLOOR is widened
    to it (listed too). ``capacity_of(node)`` gives a node's capacity [J/K].
    """
    out, ideal = [], []
    for th in thermostats:
        if th.control == "on-off" and th.band < narrowest_switching_band(
                th, capacity_of(th.sensor), step, duration):
            th = replace(th, control="proportional", band=max(th.band, IDEAL_BAND_FLOOR),
                         ideal=True)
            ideal.append(th.name)
        elif th.control == "proportional" and th.band < IDEAL_BAND_FLOOR:
            th = replace(th, band=IDEAL_BAND_FLOOR)      # its power would be rounding noise
            ideal.append(th.name)
        out.append(th)
    return tuple(out), ideal


def make_thermostat(name, spec: dict, where: str, nodes) -> Thermostat:
    """Validate a thermostat description (scenario or API) into a :class:`Thermostat`."""
    check_keys(spec, THERMOSTAT_KEYS, ["node", "setpoint", "band", "power"], where)
    node = spec["node"]
    if node not in nodes:
        raise NetworkError(f"unknown node {node!r}", f"{where}.node", suggest(node, list(nodes)))
    sensor = spec.get("sensor", node)
    if sensor not in nodes:
        raise NetworkError(f"unknown node {sensor!r}", f"{where}.sensor",
                           suggest(sensor, list(nodes)))
    mode = spec.get("mode", "heat")
    if mode not in ("heat", "cool"):
        raise InputError(f"mode must be 'heat' or 'cool', got {mode!r}", f"{where}.mode")
    control = spec.get("control", "on-off")
    if control not in ("on-off", "proportional"):
        raise InputError(f"control must be 'on-off' or 'proportional', got {control!r}",
                         f"{where}.control")
    setpoint = to_si(spec["setpoint"], "temperature", f"{where}.setpoint")
    band = to_si(spec["band"], "temperature_difference", f"{where}.band")
    if band <= 0:
        raise InputError(f"the band must be wider than zero, got {spec['band']!r}",
                         f"{where}.band", "an on/off thermostat needs a dead band, e.g. '1 K'")
    power = to_si(spec["power"], "power", f"{where}.power")
    if power <= 0:
        raise InputError("power must be positive (use mode = 'cool' for a cooler)",
                         f"{where}.power")
    initially = spec.get("initially")
    if initially not in (None, "on", "off"):
        raise InputError(f"initially must be 'on' or 'off', got {initially!r}",
                         f"{where}.initially")
    return Thermostat(name, node, sensor, mode, setpoint, band, power, control, initially, where)


def add_thermostats_from_scenario(net, table: dict) -> None:
    """Add the thermostats of a scenario's [thermostats] table to ``net``."""
    for name, spec in table.items():
        w = f"thermostats.{name}"
        if not isinstance(spec, dict):
            raise InputError("expected a table", w)
        net.add_thermostat(name, where=w, **spec)
