"""One rule for the values terrahop accepts: numbers, ranges and positions.

Every entry point (``link``, ``screen``, ``sheet``, ``heights``, link files,
site files, the Python API) checks its numbers here, so a value refused in one
place is refused everywhere, with the same sentence.  Pure: no click, no I/O.

Each range in :data:`LIMITS` says why it is what it is: a source, or "common
practice" for a trade fact, or "from memory" for a recalled figure.  The
README table "Limits and refused values" lists the same ranges.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, overload

import numpy as np
from numpy.typing import ArrayLike

from .errors import InputError

__all__ = [
    "Limit",
    "LIMITS",
    "MIN_PATH_M",
    "check_number",
    "check_numbers",
    "check_k_pair",
    "position_problem",
    "position_problems",
    "normalise_lon",
    "normalise_positions",
    "too_close",
    "same_place_problem",
]


@dataclass(frozen=True)
class Limit:
    """Closed range [low, high] of one setting (``low_open``: low itself refused), its unit and reason."""

    low: float
    high: float
    unit: str
    reason: str
    low_open: bool = False

    def describe(self) -> str:
        """'between 0 and 1000 m' or 'above 0 and at most 20 MHz'."""
        unit = f" {self.unit}" if self.unit else ""
        if self.low_open:
            return f"above {self.low:g} and at most {self.high:g}{unit}"
        return f"between {self.low:g} and {self.high:g}{unit}"

    @overload
    def holds(self, value: np.ndarray) -> np.ndarray: ...
    @overload
    def holds(self, value: np.floating) -> np.bool_: ...
    def holds(self, value: np.ndarray | np.floating) -> np.ndarray | np.bool_:
        """Whether each value lies in the range (an array for an array, a numpy bool for a scalar)."""
        above = value > self.low if self.low_open else value >= self.low
        return above & (value <= self.high)


#: Setting name -> its accepted range.  Names are those of the link file keys
#: and of the Python types; the CLI flag is the same name with dashes.
LIMITS: dict[str, Limit] = {
    # Radio
    "freq_ghz": Limit(0.03, 1000.0, "GHz",
                      "ITU-R P.676-12 (gases) and P.838-3 (rain) stop at 1000 GHz; below 30 MHz ground "
                      "and sky waves, which terrahop does not model, carry the signal (common practice)"),
    "tx_power_dbm": Limit(-50.0, 80.0, "dBm", "80 dBm is 100 kW, beyond any fixed link transmitter (common practice)"),
    "gain_a_dbi": Limit(-20.0, 70.0, "dBi", "the largest dish antennas give about 70 dBi (common practice)"),
    "gain_b_dbi": Limit(-20.0, 70.0, "dBi", "the largest dish antennas give about 70 dBi (common practice)"),
    "loss_a_db": Limit(0.0, 100.0, "dB", "a loss is not negative; 100 dB of feeder loss leaves no link (common practice)"),
    "loss_b_db": Limit(0.0, 100.0, "dB", "a loss is not negative; 100 dB of feeder loss leaves no link (common practice)"),
    "bandwidth_mhz": Limit(0.0, 20000.0, "MHz", "a bandwidth is positive; 20 GHz exceeds any channel (common practice)",
                           low_open=True),
    "noise_figure_db": Limit(0.0, 30.0, "dB", "a noise figure is not negative; receivers stay well below 30 dB "
                             "(common practice)"),
    "required_snr_db": Limit(-30.0, 70.0, "dB", "spread-spectrum modes work near -30 dB, the densest "
                             "modulations need under 45 dB (common practice)"),
    "channel_mhz": Limit(0.0, 20000.0, "MHz", "as bandwidth_mhz", low_open=True),
    "max_eirp_dbm": Limit(-50.0, 150.0, "dBm", "150 dBm is 10^12 W, beyond any limit a regulator sets (common practice)"),
    # Analysis
    "k": Limit(0.1, 100.0, "", "k = 157 / (157 + dN/dh) (ITU-R P.453, from memory): k of 100 is dN/dh of about -155 N-units/km, "
               "the edge of ducting, which the method does not model; k below 0.1 is dN/dh above +1400 "
               "(common practice)"),
    "k_worst": Limit(0.1, 100.0, "", "as k; k_worst may not exceed k"),
    "reflection_k_min": Limit(0.1, 100.0, "", "as k; the sweep of the reflection search (infinity is always added)"),
    "reflection_k_max": Limit(0.1, 100.0, "", "as k; not below reflection_k_min"),
    "min_f1_fraction": Limit(-2.0, 2.0, "F1", "criteria ask between 0 and 1 F1; beyond +-2 F1 is a typing "
                             "error (common practice)"),
    "min_f1_fraction_worst": Limit(-2.0, 2.0, "F1", "as min_f1_fraction"),
    # Sites and antennas
    "antenna_agl_m": Limit(0.0, 1000.0, "m", "antennas stand on or above the ground; the tallest masts "
                           "stand about 630 m (from memory)"),
    "antenna_above_roof_m": Limit(0.0, 1000.0, "m", "as antenna_agl_m"),
    "antenna_amsl_m": Limit(-500.0, 9500.0, "m", "the lowest land is about -430 m, the highest 8849 m (from memory)"),
    "antenna_ellipsoidal_m": Limit(-600.0, 9600.0, "m", "as antenna_amsl_m, plus the geoid's +-110 m (from memory)"),
    "max_mast_m": Limit(0.0, 1000.0, "m", "as antenna_agl_m"),
    "step_m": Limit(0.01, 100.0, "m", "finer than 1 cm is below any survey; the answer is a multiple of it "
                    "(common practice)"),
    "nodata_fill_m": Limit(-11000.0, 9000.0, "m", "between the deepest ocean floor and the highest summit "
                           "(from memory)"),
    "tree_allowance_m": Limit(0.0, 100.0, "m", "added to every tree height for growth and uncertainty; over 100 m is a "
                           "typing error (common practice)"),
    # Screening
    "max_km": Limit(0.0, 20100.0, "km", "no two points on earth are more than about 20,004 km apart (WGS84)",
                    low_open=True),
    "min_margin_db": Limit(-100.0, 100.0, "dB", "fade margins of real links lie well within +-100 dB "
                           "(common practice)"),
    # Confidence (profiler.confidence)
    "draws": Limit(100, 100_000, "", "at 100 draws a probability's standard error is at most 5 points and the 5/95 % "
                   "points have 5 draws beyond them; 100,000 draws of a long path fill memory (common practice)"),
    "dem_error_m": Limit(0.0, 100.0, "m", "global DEMs state 2-20 m; over 100 m is a typing error (common practice)"),
    "dem_error_corr_m": Limit(0.0, 1e6, "m", "a correlation length is positive; 1000 km is one error per profile "
                              "(common practice)", low_open=True),
    "antenna_error_m": Limit(0.0, 50.0, "m", "a mounted height is off by centimetres to metres (common practice)"),
    "confidence": Limit(0.0, 0.999, "", "a probability above 0 and below 1; above 0.999 the answer rests on one "
                        "or two of 1000 draws (common practice)", low_open=True),
    # Climate (ITU-R P.530-17 and P.676-12 inputs; ClimateSettings checks its own model ranges too)
    "rain_rate_mm_h": Limit(0.0, 300.0, "mm/h", "R0.01 on earth lies below about 250 mm/h (ITU-R P.837 maps, from memory)"),
    "target_availability_pct": Limit(99.0, 99.999, "%", "outage 0.001-1 %, the range of the ITU-R P.530-17 "
                                     "rain method (section 2.4.1)"),
    "dn1_n_per_km": Limit(-2000.0, 200.0, "N-units/km", "ITU-R P.453 maps give about -850 to 0 N-units/km"),
    "terrain_roughness_m": Limit(0.0, 2000.0, "m", "sa (ITU-R P.530-17 section 2.3.1) is a few to a few "
                                 "hundred metres (common practice)"),
    "pressure_hpa": Limit(0.0, 1100.0, "hPa", "sea-level pressure has never exceeded about 1085 hPa (from memory)",
                          low_open=True),
    "temperature_c": Limit(-90.0, 60.0, "degC", "the recorded extremes are about -89 and +57 degC (from memory)"),
    "water_vapour_g_m3": Limit(0.0, 100.0, "g/m^3", "saturated air at 50 degC holds about 83 g/m^3 (from memory)"),
    # Coverage (terrahop coverage)
    "radius_km": Limit(0.0, 200.0, "km", "a hub's service area; the radio horizon of a 300 m tower over 10 m "
                       "receivers at k = 4/3 is about 84 km, so 200 km leaves room (common practice)", low_open=True),
    "rx_agl_m": Limit(0.0, 1000.0, "m", "as antenna_agl_m"),
    "cell_m": Limit(1.0, 10000.0, "m", "finer than 1 m is below any elevation raster's detail; coarser than "
                    "10 km is no map of subscribers (common practice)"),
    "hub_azimuth_deg": Limit(0.0, 360.0, "deg", "a direction from true north"),
    "hub_downtilt_deg": Limit(-90.0, 90.0, "deg", "from straight up to straight down"),
}

#: Words used for a setting in messages (the setting's name otherwise).
LABELS: dict[str, str] = {
    "freq_ghz": "frequency", "tx_power_dbm": "transmitter power", "gain_a_dbi": "antenna gain at site a",
    "gain_b_dbi": "antenna gain at site b", "loss_a_db": "feeder loss at site a", "loss_b_db": "feeder loss at site b",
    "bandwidth_mhz": "bandwidth", "noise_figure_db": "noise figure", "required_snr_db": "required SNR",
    "k": "k-factor k", "k_worst": "worst-case k-factor k_worst",
    "reflection_k_min": "smallest k of the reflection sweep", "reflection_k_max": "largest k of the reflection sweep",
    "min_f1_fraction": "clearance criterion",
    "min_f1_fraction_worst": "worst-case clearance criterion", "antenna_agl_m": "antenna height above ground",
    "antenna_above_roof_m": "antenna height above the roof", "antenna_amsl_m": "antenna elevation",
    "antenna_ellipsoidal_m": "antenna height above the ellipsoid", "max_mast_m": "mast limit",
    "step_m": "height step", "nodata_fill_m": "nodata fill height", "tree_allowance_m": "tree allowance",
    "max_km": "maximum pair distance", "min_margin_db": "viable fade margin",
    "channel_mhz": "channel width", "max_eirp_dbm": "EIRP limit",
    "rain_rate_mm_h": "rain rate", "target_availability_pct": "target availability", "dn1_n_per_km": "dN1",
    "terrain_roughness_m": "terrain roughness", "pressure_hpa": "pressure", "temperature_c": "temperature",
    "water_vapour_g_m3": "water-vapour density",
    "radius_km": "coverage radius", "rx_agl_m": "receiver height", "cell_m": "output cell size",
    "hub_azimuth_deg": "sector azimuth", "hub_downtilt_deg": "sector down-tilt",
    "draws": "number of draws", "dem_error_m": "elevation error sigma", "dem_error_corr_m": "elevation error "
    "correlation length", "antenna_error_m": "antenna height error sigma", "confidence": "confidence",
}

#: Shortest path analysed, m: below it free-space loss (ITU-R P.525-4 eq. 6)
#: turns negative at low frequencies and the far-field assumption fails.
MIN_PATH_M = 1.0


def check_number(value: Any, name: str, where: str = "", *, limit: Limit | None = None) -> float:
    """``value`` as a float within the range of setting ``name``; InputError otherwise.

    Refuses booleans (a link file's ``true`` is not 1), text that is not a
    number, NaN and infinities, and values outside :data:`LIMITS`.  ``where``
    prefixes the message (a file, a site).
    """
    prefix = f"{where}: " if where else ""
    label = f"{LABELS[name]} ({name})" if name in LABELS else name
    if isinstance(value, (bool, np.bool_)):
        raise InputError(f"{prefix}{label} must be a number, got {value!r}")
    if isinstance(value, str):
        try:
            number = float(value.strip())
        except ValueError:
            raise InputError(f"{prefix}{label} must be a number, got {value!r}") from None
    else:
        try:
            number = float(value)
        except (TypeError, ValueError):
            raise InputError(f"{prefix}{label} must be a number, got {value!r}") from None
    if not math.isfinite(number):
        raise InputError(f"{prefix}{label} must be a finite number, got {value!r}")
    limit = limit or LIMITS.get(name)
    if limit is not None and not bool(limit.holds(np.float64(number))):
        raise InputError(f"{prefix}{label} must lie {limit.describe()}, got {number:g} "
                         "(see Limits and refused values in the README)")
    return number


def check_numbers(values: ArrayLike, name: str) -> list[str | None]:
    """Per value: None when it is a finite number within the range of ``name``, else the reason."""
    arr = np.asarray(values, dtype=float)
    limit = LIMITS[name]
    finite = np.isfinite(arr)
    ok = np.zeros(arr.shape, dtype=bool)
    ok[finite] = limit.holds(arr[finite])
    out: list[str | None] = [None] * arr.size
    for k in np.flatnonzero(~ok):
        v = arr.flat[k]
        label = f"{LABELS[name]} ({name})" if name in LABELS else name
        out[k] = (f"{label} {v!r} is not a finite number" if not np.isfinite(v)
                  else f"{label} must lie {limit.describe()}, got {v:g}")
    return out


def check_k_pair(k: float, k_worst: float) -> None:
    """InputError unless both k-factors are in range and k_worst is not above k."""
    check_number(k, "k")
    check_number(k_worst, "k_worst")
    if k_worst > k:
        raise InputError(
            f"k_worst {k_worst:.4g} is above k {k:.4g}; the worst case is the smaller k, where the "
            "earth bulges more (give k_worst <= k)"
        )


# --- positions ---------------------------------------------------------------
# One rule (common practice for WGS84 degrees): latitude -90..90; longitude
# -180..360, where 180..360 (the 0..360 convention) is folded into -180..180.
# At a pole every longitude is the same point, so it is set to 0.

LAT_RANGE = (-90.0, 90.0)
LON_RANGE = (-180.0, 360.0)


def position_problems(lat_deg: ArrayLike, lon_deg: ArrayLike) -> list[str | None]:
    """Per point: None when the position is usable, else a sentence saying what is wrong."""
    lat = np.atleast_1d(np.asarray(lat_deg, dtype=float))
    lon = np.atleast_1d(np.asarray(lon_deg, dtype=float))
    out: list[str | None] = [None] * lat.size
    bad = ~(np.isfinite(lat) & np.isfinite(lon))
    with np.errstate(invalid="ignore"):
        bad_lat = ~bad & ((lat < LAT_RANGE[0]) | (lat > LAT_RANGE[1]))
        bad_lon = ~bad & ~bad_lat & ((lon < LON_RANGE[0]) | (lon > LON_RANGE[1]))
    for k in np.flatnonzero(bad | bad_lat | bad_lon):
        if bad[k]:
            out[k] = f"position ({lat[k]}, {lon[k]}) is not two finite numbers"
        elif bad_lat[k]:
            out[k] = f"latitude {lat[k]:g} is outside -90..90 degrees (give latitude first, then longitude)"
        else:
            out[k] = f"longitude {lon[k]:g} is outside -180..180 degrees (or 0..360)"
    return out


def position_problem(lat_deg: float, lon_deg: float) -> str | None:
    """The reason a single position is refused, or None."""
    return position_problems([lat_deg], [lon_deg])[0]


def normalise_lon(lon_deg: ArrayLike) -> np.ndarray:
    """Longitudes above 180 (the 0..360 convention) folded into -180..180; others returned bit for bit."""
    lon = np.asarray(lon_deg, dtype=float)
    with np.errstate(invalid="ignore"):
        outside = (lon > 180.0) | (lon < -180.0)
    if not np.any(outside):
        return lon
    return np.where(outside, (lon + 180.0) % 360.0 - 180.0, lon)


def normalise_positions(lat_deg: ArrayLike, lon_deg: ArrayLike) -> tuple[np.ndarray, np.ndarray]:
    """Latitudes as given and longitudes folded into [-180, 180), 0 at the poles (checked positions)."""
    lat = np.asarray(lat_deg, dtype=float)
    lon = normalise_lon(lon_deg)
    pole = np.abs(lat) == 90.0
    if np.any(pole):
        lon = np.where(pole, 0.0, lon)
    return lat, lon


def too_close(lat_a: ArrayLike, lon_a: ArrayLike, lat_b: ArrayLike, lon_b: ArrayLike) -> tuple[np.ndarray, np.ndarray]:
    """``(short, distance_m)``: True where two ends lie less than :data:`MIN_PATH_M` apart.

    Positions are normalised first, so -179.95 and 180.05 or two points at a
    pole count as the same place.  Distance on the WGS84 ellipsoid (pyproj.Geod.inv).
    """
    from .geodesy import WGS84

    la, oa = normalise_positions(lat_a, lon_a)
    lb, ob = normalise_positions(lat_b, lon_b)
    la, oa, lb, ob = np.broadcast_arrays(np.atleast_1d(la), np.atleast_1d(oa), np.atleast_1d(lb), np.atleast_1d(ob))
    same = (la == lb) & (oa == ob)
    dist = np.zeros(la.shape)
    todo = ~same
    if np.any(todo):
        _, _, d = WGS84.inv(oa[todo], la[todo], ob[todo], lb[todo])
        dist[todo] = np.asarray(d, dtype=float)
    return dist < MIN_PATH_M, dist


def same_place_problem(lat_a: float, lon_a: float, lat_b: float, lon_b: float) -> str | None:
    """The reason a link between two positions is refused (same place, under 1 m apart), or None."""
    short, dist = too_close([lat_a], [lon_a], [lat_b], [lon_b])
    if not short[0]:
        return None
    return (f"site a ({lat_a}, {lon_a}) and site b ({lat_b}, {lon_b}) are at the same position "
            f"({dist[0]:.3g} m apart; a link needs at least {MIN_PATH_M:g} m)")
