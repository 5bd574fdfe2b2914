"""Write cabinet-week.csv: an invented hourly weather record of a sunny week in July.

The record drives ``outdoor-cabinet.toml``. It is made here from simple formulas (not by rcsim,
and not measured), for a site at 37.4 N, 6.0 W on the local summer clock (UTC+02:00):

* global horizontal irradiance from the clear-sky relation of Haurwitz (1945),
  GHI = 1098 cos z exp(-0.057 / cos z) W/m^2, the sun's zenith angle z from Cooper's declination
  and the hour angle in local solar time (Duffie & Beckman, Solar Engineering of Thermal
  Processes, ch. 1), times a cloud factor: 0.55 in the afternoon of the fourth day (a cloud
  bank), 0.9 on the last day (haze);
* air temperature rising as a half cosine from its minimum at 06:30 to its maximum at 17:00 and
  falling back (the usual asymmetric daily shape), daily means 27-31 degC, 16 K swing;
* dew point near 13 degC; an afternoon breeze of up to 4 m/s (5.5 m/s under the clouds);
* sky cover 5 % when clear, 70 % under the cloud bank, 20 % in the haze.

Small noise (normal, seed 2026) is added to temperatures and wind, and values are rounded as a
station would log them. Timestamps carry their UTC offset.

Run:  python scenarios/make-cabinet-week.py   (rewrites scenarios/cabinet-week.csv)
"""

import os

import numpy as np
import pandas as pd

LATITUDE, LONGITUDE, OFFSET_HOURS = 37.4, -6.0, 2.0
START = pd.Timestamp("2026-07-06T00:00:00+02:00")
DAYS = 7
DAILY_MEAN = [27.5, 28.5, 30.0, 27.0, 29.0, 31.0, 30.0]     # degC
HALF_SWING = 8.0                                             # K
T_MIN, T_MAX = 6.5, 17.0                                     # local clock hours


def cos_zenith(stamps: pd.DatetimeIndex) -> np.ndarray:
    """cos z of the sun (Duffie & Beckman eqs. 1.6.1, 1.6.2 and 1.5.3, from memory)."""
    day = stamps.day_of_year.to_numpy()
    b = 2 * np.pi * (day - 1) / 365
    equation_of_time = 229.2 * (0.000075 + 0.001868 * np.cos(b) - 0.032077 * np.sin(b)
                                - 0.014615 * np.cos(2 * b) - 0.04089 * np.sin(2 * b))  # min
    utc_hours = stamps.hour.to_numpy() + stamps.minute.to_numpy() / 60 - OFFSET_HOURS
    solar_hours = utc_hours + LONGITUDE / 15 + equation_of_time / 60
    omega = np.radians(15 * (solar_hours - 12))
    delta = np.radians(23.45 * np.sin(2 * np.pi * (284 + day) / 365))
    phi = np.radians(LATITUDE)
    return np.sin(phi) * np.sin(delta) + np.cos(phi) * np.cos(delta) * np.cos(omega)


def daily_shape(hour: np.ndarray) -> np.ndarray:
    """-1 at the minimum (06:30), +1 at the maximum (17:00), half cosines in between."""
    rising = (hour >= T_MIN) & (hour < T_MAX)
    phase = np.where(rising, (hour - T_MIN) / (T_MAX - T_MIN),
                     ((hour - T_MAX) % 24) / (24 - (T_MAX - T_MIN)))
    return np.where(rising, -np.cos(np.pi * phase), np.cos(np.pi * phase))


def main() -> None:
    rng = np.random.default_rng(2026)
    stamps = START + pd.to_timedelta(np.arange(DAYS * 24 + 1), unit="h")
    hour = stamps.hour.to_numpy().astype(float)
    day = np.minimum((stamps - START).days.to_numpy(), DAYS - 1)
    cos_z = cos_zenith(stamps)
    up = cos_z > 0.01
    ghi = np.where(up, 1098.0 * cos_z * np.exp(-0.057 / np.where(up, cos_z, 1.0)), 0.0)
    cloud_bank = (day == 3) & (hour >= 12) & (hour <= 18)
    haze = day == 6
    ghi *= np.where(cloud_bank, 0.55, np.where(haze, 0.9, 1.0))
    cover = np.where(cloud_bank, 70.0, np.where(haze, 20.0, 5.0))
    mean = np.asarray(DAILY_MEAN)[day]
    air = mean + HALF_SWING * daily_shape(hour) + rng.normal(0.0, 0.2, hour.size)
    dew = 13.0 + 1.5 * np.sin(2 * np.pi * day / 7) + rng.normal(0.0, 0.4, hour.size)
    breeze = np.clip(np.sin(np.pi * (hour - 11) / 10), 0.0, None) * ((hour >= 11) & (hour <= 21))
    wind = 1.2 + np.where(cloud_bank, 4.3, 2.8) * breeze + rng.normal(0.0, 0.25, hour.size)
    frame = pd.DataFrame({
        "time": stamps.strftime("%Y-%m-%dT%H:%M") + "+02:00",
        "T_air [degC]": np.round(air, 1),
        "T_dew [degC]": np.round(dew, 1),
        "GHI [W/m^2]": np.round(ghi, 0).astype(int),
        "wind [m/s]": np.round(np.clip(wind, 0.3, None), 1),
        "cloud [%]": cover.astype(int),
    })
    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "cabinet-week.csv")
    frame.to_csv(path, index=False)
    print(f"wrote {path} ({len(frame)} rows)")


if __name__ == "__main__":
    main()
