"""Ground reflections: where the reflected ray lands, how strong it is, how the level swings with k.

Pure core, batch first: every function takes arrays of many paths (``(paths,
samples)`` profiles as the rest of the engine, or one value per path).  No
file reading, no printing.  Heights in metres above the rasters' datum,
distances in metres, angles in radians unless the name says ``_deg``.

The earth is drawn as everywhere in terrahop: flat, with the terrain raised
by the bulge of an earth of radius k x 6371 km (:func:`profiler.geometry.earth_bulge_m`),
so rays are straight lines.  A reflecting *facet* is a stretch of the surface
(terrain plus clutter) fitted by a straight line in that drawing before the
bulge is added, i.e. a plane tilted by the terrain's slope and curved with the
earth.

Sources
-------
* Reflection point on a smooth sphere: equal grazing angles seen from the two
  antennas, psi = h1'/d1 = h2'/d2 with h' = h - d^2 / (2 k a), which gives the
  textbook cubic 2 d1^3 - 3 d d1^2 + (d^2 - 2 k a (h1 + h2)) d1 + 2 k a h1 d = 0
  (the small-angle geometry of ITU-R P.526-15 section 3 and of ITU-R P.530-17's
  reflection discussion; the cubic as printed in Freeman, *Radio System Design
  for Telecommunications*, 3rd ed., Wiley 2007, chapter on line-of-sight
  microwave, reflection point: from memory).  Solved here in its
  trigonometric form (the c, m, b form: c = (h1 - h2)/(h1 + h2),
  m = d^2 / (4 k a (h1 + h2)), b = 2 sqrt((m + 1)/(3 m)) cos(pi/3 + arccos(3 c / 2
  sqrt(3 m / (m + 1)^3)) / 3), d1 = d (1 + b) / 2, from memory); the reference
  test solves the cubic independently.
* Fresnel reflection coefficients for horizontal and vertical polarisation
  with the complex relative permittivity eta = eps_r - j 60 lambda sigma
  (ITU-R P.527-6 (09/2021) relation between conductivity and the imaginary
  part; ITU-R P.2040 writes the same reflection coefficients; from memory).
* Electrical constants: ground values read from the curves of ITU-R P.527-3
  (1992) near 1-3 GHz (from memory; :data:`SURFACE_TYPES`), kept fixed with
  frequency; water from a single-relaxation Debye model with parameters for
  20 degC (from memory, within a few units of the P.527 curves between 1 and
  20 GHz).  Lossy surfaces: the vertical coefficient has a shallow non-zero
  minimum near atan(1 / sqrt(|eta|)) instead of the Brewster zero.
* Divergence factor of the curved earth: D = (1 + 2 d1 d2 / (k a d sin psi))^-1/2
  (Beckmann and Spizzichino, *The Scattering of Electromagnetic Waves from
  Rough Surfaces*, Pergamon 1963, chapter 17 on the divergence factor; from memory).
* Roughness: the Gaussian-surface reduction of the specular field
  rho = exp(-8 (pi sigma_h sin psi / lambda)^2) (Ament 1953, as in Beckmann and
  Spizzichino 1963; from memory) and the Rayleigh criterion sigma_h <
  lambda / (8 sin psi) for a surface smooth enough to reflect (common practice).
* First Fresnel zone on the ground: half-length F1 / sin psi along the path
  about the reflection point (small angles; common practice).
* Space diversity spacing: the antenna height change that moves the two-ray
  pattern by half a period, dh2 = lambda d / (4 h1') from Delta = 2 h1' h2' / d
  (the flat-earth two-ray path difference, any radio handbook; common practice).
* Space-diversity improvement: ITU-R P.530-17 section 6.2.1 (narrow-band
  improvement factor I0 = [1 - exp(-0.04 S^0.87 f^-0.12 d^0.48 p0^-1.04)]
  10^((A - V)/10), valid for S 3-23 m, f 2-11 GHz, d 43-240 km; from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Sequence

import numpy as np
from numpy.typing import ArrayLike

from .errors import InputError
from .units import EARTH_RADIUS_M, wavelength_m

__all__ = [
    "SURFACE_TYPES", "WATER_TYPES", "SMOOTH_EARTH_GROUND", "DEFAULT_K_MIN", "DEFAULT_K_MAX", "K_STEPS",
    "ReflectionSettings", "sweep_k_values", "reflecting_surface", "facet_curve", "curve_inverse_k", "Curve", "resolve_surface", "complex_permittivity", "fresnel_coefficient",
    "brewster_grazing_angle_rad", "divergence_factor", "roughness_factor", "rayleigh_limit_m",
    "reflection_point_m", "reflection_point_cubic_coefficients", "two_ray_level_db", "diversity_spacing_m",
    "space_diversity_improvement", "FacetReflections", "find_reflections", "LinkReflections",
    "reflections_for_links", "LEVEL_FLOOR_DB",
]

# --- surfaces and their electrical constants ---------------------------------------

#: Water surfaces (reflection from a water layer or sea level uses one of these).
WATER_TYPES = ("sea-water", "fresh-water")

#: Ground types of ``--ground`` for reflections: (relative permittivity, conductivity S/m) for the
#: ground types, None for water (Debye model, :func:`complex_permittivity`).  ITU-R P.527-3 Table 1
#: (from memory: wet ground 30 and 0.15 S/m, medium dry 15 and 0.035 S/m near 1-3 GHz); "land" keeps
#: the average ground of ITU-R P.452-17 s. 4.2.2.1 (22, 0.003 S/m) that delta-Bullington uses.
SURFACE_TYPES: dict[str, tuple[float, float] | None] = {
    "land": (22.0, 0.003),
    "sea": None,  # sea water
    "sea-water": None,
    "fresh-water": None,
    "wet-ground": (30.0, 0.15),
    "dry-ground": (15.0, 0.035),
}

#: What each ``--ground`` name gives the smooth-earth part of delta-Bullington (ITU-R P.452-17
#: s. 4.2.2.1 land and sea; new names mapped to the nearer of the two: water to sea, ground to land).
SMOOTH_EARTH_GROUND = {"land": "land", "sea": "sea", "sea-water": "sea", "fresh-water": "sea",
                       "wet-ground": "land", "dry-ground": "land"}

#: Debye parameters of water at 20 degC: static and high-frequency permittivity, relaxation
#: frequency GHz, ionic conductivity S/m (from memory; sea water of salinity 35 g/kg).
_DEBYE = {"sea-water": (72.0, 4.9, 17.0, 4.8), "fresh-water": (80.1, 4.9, 17.1, 0.01)}
_EPS0 = 8.8541878128e-12

#: Sweep range of k, and the steps between (documented set: 0.5, 0.6, 2/3, 0.8, 1, 1.2, 4/3, 1.5, 2, 3, 5, 10, inf).
DEFAULT_K_MIN = 0.5
DEFAULT_K_MAX = 10.0
K_STEPS = (0.5, 0.6, 2.0 / 3.0, 0.8, 1.0, 1.2, 4.0 / 3.0, 1.5, 2.0, 3.0, 5.0, 10.0)

#: Samples per block of the ray check (candidates x samples), bounding its memory (about 50 MB of arrays).
_RAY_CHECK_SAMPLES = 1_000_000
#: Lowest level change reported, dB (an exact null of two equal rays is -infinity).
LEVEL_FLOOR_DB = -60.0
#: Tolerance of "at the dataset's sea level", m (common practice for rasters that put the sea at 0).
SEA_LEVEL_TOLERANCE_M = 0.5


def resolve_surface(name: str) -> str:
    """Normalised ground type for reflections; InputError naming the choices otherwise."""
    key = str(name).strip().lower().replace("_", "-")
    if key not in SURFACE_TYPES:
        raise InputError(f"unknown ground type {name!r}: choose one of {', '.join(SURFACE_TYPES)}",
                         parameter="ground", value_word="TYPE")
    return key


def water_type_for(ground: str) -> str:
    """Water marked on a path: sea water when the ground is sea, else fresh water (our choice, README)."""
    return "sea-water" if resolve_surface(ground) in ("sea", "sea-water") else "fresh-water"


def complex_permittivity(surface: str, freq_ghz: ArrayLike) -> np.ndarray:
    """Complex relative permittivity eps' - j eps'' of a surface at a frequency (ITU-R P.527; see module).

    Ground: eta = eps_r - j 60 lambda sigma (ITU-R P.527-6, from memory), constants fixed with frequency.
    Water: Debye eps_inf + (eps_s - eps_inf) / (1 + j f / f_r) - j sigma / (2 pi f eps0).
    """
    key = resolve_surface(surface)
    f = np.asarray(freq_ghz, dtype=float)
    if key == "sea":
        key = "sea-water"
    constants = SURFACE_TYPES[key]
    if constants is not None:
        eps_r, sigma = constants
        return eps_r - 1j * 60.0 * wavelength_m(f) * sigma
    eps_s, eps_inf, f_r, sigma = _DEBYE[key]
    return eps_inf + (eps_s - eps_inf) / (1.0 + 1j * f / f_r) - 1j * sigma / (2.0 * np.pi * f * 1e9 * _EPS0)


def fresnel_coefficient(grazing_rad: ArrayLike, permittivity: ArrayLike, polarisation: str) -> np.ndarray:
    """Complex Fresnel reflection coefficient of a smooth plane surface at a grazing angle.

    Horizontal: (sin psi - sqrt(eta - cos^2 psi)) / (sin psi + sqrt(eta - cos^2 psi));
    vertical: (eta sin psi - sqrt(eta - cos^2 psi)) / (eta sin psi + sqrt(eta - cos^2 psi))
    (ITU-R P.2040-1 s. 2.2.1 / P.527 form, from memory).  Tends to -1 at grazing for both.
    """
    from .losses.smooth_earth import resolve_polarisation

    psi = np.asarray(grazing_rad, dtype=float)
    eta = np.asarray(permittivity, dtype=complex)
    s, c = np.sin(psi), np.cos(psi)
    root = np.sqrt(eta - c * c)
    if resolve_polarisation(polarisation) == "horizontal":
        return (s - root) / (s + root)
    return (eta * s - root) / (eta * s + root)


def brewster_grazing_angle_rad(relative_permittivity: ArrayLike) -> np.ndarray:
    """Grazing angle of the Brewster minimum for a lossless dielectric: atan(1 / sqrt(eps_r)).

    (Measured from the normal this is atan(sqrt(eps_r)).)  For a lossy surface
    the vertical coefficient has a non-zero minimum near this angle.
    """
    return np.arctan(1.0 / np.sqrt(np.asarray(relative_permittivity, dtype=float)))


def divergence_factor(d1_m: ArrayLike, d2_m: ArrayLike, grazing_rad: ArrayLike, k: ArrayLike) -> np.ndarray:
    """Divergence factor of a sphere of radius k a: (1 + 2 d1 d2 / (k a d sin psi))^-1/2 (Beckmann-Spizzichino)."""
    d1 = np.asarray(d1_m, dtype=float)
    d2 = np.asarray(d2_m, dtype=float)
    ae = np.asarray(k, dtype=float) * EARTH_RADIUS_M
    s = np.sin(np.asarray(grazing_rad, dtype=float))
    with np.errstate(divide="ignore", invalid="ignore"):
        term = np.where(np.isinf(ae), 0.0, 2.0 * d1 * d2 / (ae * (d1 + d2) * s))
    return 1.0 / np.sqrt(1.0 + term)


def roughness_factor(sigma_h_m: ArrayLike, grazing_rad: ArrayLike, freq_ghz: ArrayLike) -> np.ndarray:
    """Specular reduction of a Gaussian rough surface: exp(-8 (pi sigma_h sin psi / lambda)^2) (Ament)."""
    g = np.pi * np.asarray(sigma_h_m, dtype=float) * np.sin(np.asarray(grazing_rad, dtype=float)) / wavelength_m(freq_ghz)
    return np.exp(-8.0 * g * g)


def rayleigh_limit_m(grazing_rad: ArrayLike, freq_ghz: ArrayLike) -> np.ndarray:
    """Largest RMS height of a surface still smooth by the Rayleigh criterion, lambda / (8 sin psi) (common practice)."""
    with np.errstate(divide="ignore"):
        return wavelength_m(freq_ghz) / (8.0 * np.sin(np.asarray(grazing_rad, dtype=float)))


def reflection_point_cubic_coefficients(h1_m: float, h2_m: float, d_m: float, k: float) -> tuple[float, ...]:
    """Coefficients (highest power first) of the cubic in d1: 2 d1^3 - 3 d d1^2 + (d^2 - 2 ka (h1+h2)) d1 + 2 ka h1 d."""
    ae = k * EARTH_RADIUS_M
    return (2.0, -3.0 * d_m, d_m * d_m - 2.0 * ae * (h1_m + h2_m), 2.0 * ae * h1_m * d_m)


def reflection_point_m(h1_m: ArrayLike, h2_m: ArrayLike, d_m: ArrayLike, k: ArrayLike) -> np.ndarray:
    """Distance from end 1 of the specular point on a smooth sphere of radius k a, m (NaN where none).

    h1, h2: antenna heights above the reflecting surface at the ends; the
    trigonometric solution of the textbook cubic (module docstring); k = inf
    gives the flat-earth point d h1 / (h1 + h2).  NaN where a ray would meet
    the sphere before the point (no line of sight over the smooth surface).
    """
    h1 = np.asarray(h1_m, dtype=float)
    h2 = np.asarray(h2_m, dtype=float)
    d = np.asarray(d_m, dtype=float)
    ae = np.asarray(k, dtype=float) * EARTH_RADIUS_M
    h1, h2, d, ae = np.broadcast_arrays(h1, h2, d, ae)
    out = np.full(h1.shape, np.nan)
    ok = (h1 > 0) & (h2 > 0) & (d > 0)
    hs = np.where(ok, h1 + h2, 1.0)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        m = np.where(np.isinf(ae), 0.0, d * d / (4.0 * ae * hs))
        c = (h1 - h2) / hs
        flat = m < 1e-9
        mm = np.where(flat, 1.0, m)
        arg = np.clip(1.5 * c * np.sqrt(3.0 * mm / (mm + 1.0) ** 3), -1.0, 1.0)
        b = 2.0 * np.sqrt((mm + 1.0) / (3.0 * mm)) * np.cos(np.pi / 3.0 + np.arccos(arg) / 3.0)
        b = np.where(flat, c, b)
        d1 = d * (1.0 + b) / 2.0
        d2 = d - d1
        h1e = h1 - np.where(np.isinf(ae), 0.0, d1 * d1 / (2.0 * ae))
        h2e = h2 - np.where(np.isinf(ae), 0.0, d2 * d2 / (2.0 * ae))
    good = ok & (h1e > 0) & (h2e > 0) & (d1 > 0) & (d2 > 0)
    out[good] = d1[good]
    return out


def two_ray_level_db(coefficient: ArrayLike, path_difference_m: ArrayLike, freq_ghz: ArrayLike) -> np.ndarray:
    """Level of direct plus reflected ray relative to the direct ray alone, dB: 20 log10 |1 + G exp(-j 2 pi Delta / lambda)|.

    Both rays are taken with the same antenna gain (both within the main beams,
    the worst case); floored at :data:`LEVEL_FLOOR_DB`.
    """
    g = np.asarray(coefficient, dtype=complex)
    phase = 2.0 * np.pi * np.asarray(path_difference_m, dtype=float) / wavelength_m(freq_ghz)
    mag = np.abs(1.0 + g * np.exp(-1j * phase))
    with np.errstate(divide="ignore"):
        return np.maximum(20.0 * np.log10(mag), LEVEL_FLOOR_DB)


def diversity_spacing_m(h_other_eff_m: ArrayLike, d_m: ArrayLike, freq_ghz: ArrayLike) -> np.ndarray:
    """Height change of one antenna that moves the two-ray pattern by half a period, m: lambda d / (4 h_other').

    From Delta = 2 h1' h2' / d (flat-earth two-ray path difference with the
    effective heights over the reflecting plane; common practice).
    """
    with np.errstate(divide="ignore"):
        return wavelength_m(freq_ghz) * np.asarray(d_m, dtype=float) / (4.0 * np.asarray(h_other_eff_m, dtype=float))


#: Validity of the P.530 space-diversity improvement (ITU-R P.530-17 s. 6.2.1, from memory).
DIVERSITY_VALIDITY = {"spacing_m": (3.0, 23.0), "freq_ghz": (2.0, 11.0), "distance_km": (43.0, 240.0)}


def space_diversity_improvement(spacing_m: ArrayLike, freq_ghz: ArrayLike, distance_km: ArrayLike,
                                p0_pct: ArrayLike, fade_depth_db: ArrayLike, gain_difference_db: ArrayLike = 0.0
                                ) -> np.ndarray:
    """Narrow-band space-diversity improvement factor I0 (ITU-R P.530-17 s. 6.2.1, from memory).

    I0 = [1 - exp(-0.04 S^0.87 f^-0.12 d^0.48 p0^-1.04)] 10^((A - V)/10): S vertical
    separation of the receiving antennas m, f GHz, d km, p0 the multipath occurrence
    factor %, A the fade depth dB, V the gain difference of the two antennas dB.
    """
    s = np.asarray(spacing_m, dtype=float)
    f = np.asarray(freq_ghz, dtype=float)
    d = np.asarray(distance_km, dtype=float)
    p0 = np.asarray(p0_pct, dtype=float)
    a = np.asarray(fade_depth_db, dtype=float)
    v = np.asarray(gain_difference_db, dtype=float)
    return (1.0 - np.exp(-0.04 * s**0.87 * f**-0.12 * d**0.48 * p0**-1.04)) * np.power(10.0, (a - v) / 10.0)


def sweep_k_values(k_min: float = DEFAULT_K_MIN, k_max: float = DEFAULT_K_MAX,
                   extra: Sequence[float] = ()) -> tuple[float, ...]:
    """The documented k values inside [k_min, k_max], the range ends, ``extra`` (design, worst) and infinity."""
    if not (k_min > 0 and k_max >= k_min) or math.isinf(k_max) or math.isnan(k_min) or math.isnan(k_max):
        raise InputError(f"the reflection k sweep {k_min:g}..{k_max:g} is empty: give 0 < "
                         "reflection_k_min <= reflection_k_max (finite; infinity is always added)",
                         parameter="reflection_k_min", value_word="K")
    values = {k_min, k_max, *(k for k in K_STEPS if k_min <= k <= k_max), *(float(e) for e in extra)}
    return tuple(sorted(values)) + (math.inf,)


@dataclass(frozen=True)
class ReflectionSettings:
    """What the reflection search needs besides the profiles.

    ``k_min``..``k_max``: the sweep range (infinity always added);
    ``water_file``: the water layer's path (for the record); ``sea_level_water``:
    samples within 0.5 m of the datum's zero taken as water.
    """

    k_min: float = DEFAULT_K_MIN
    k_max: float = DEFAULT_K_MAX
    water_file: str | None = None
    sea_level_water: bool = False

    def validate(self) -> "ReflectionSettings":
        from .validation import check_number

        for name in ("k_min", "k_max"):  # ranges: profiler.validation.LIMITS (as k)
            value = getattr(self, name)
            if isinstance(value, bool) or not isinstance(value, (int, float)):
                raise InputError(f"{{parameter}} must be a number, got {value!r}",
                                 parameter=f"reflection_{name}", value_word="K")
            check_number(value, f"reflection_{name}")
        sweep_k_values(float(self.k_min), float(self.k_max))
        return self


# --- the search on actual profiles -------------------------------------------------------


@dataclass(frozen=True)
class FacetReflections:
    """The strongest specular reflection of each path at one k (NaN / False where none).

    Per path: ``found``; ``point_m`` from site a; the facet (``plane_m`` its height at
    the point above the datum, ``slope`` its terrain slope, ``start_m``/``end_m`` the
    first Fresnel zone on it); ``grazing_rad``; ``roughness_m`` (RMS about the fit);
    ``over_water``; ``fresnel`` (complex), ``divergence``, ``roughness`` factors and
    their product ``coefficient``; ``path_difference_m``; ``level_db``.
    ``candidates``: all valid points as (path, point_m, |coefficient|, over_water).
    """

    k: float
    found: np.ndarray
    point_m: np.ndarray
    plane_m: np.ndarray
    slope: np.ndarray
    intercept_m: np.ndarray
    start_m: np.ndarray
    end_m: np.ndarray
    grazing_rad: np.ndarray
    roughness_m: np.ndarray
    over_water: np.ndarray
    fresnel: np.ndarray
    divergence: np.ndarray
    roughness: np.ndarray
    coefficient: np.ndarray
    path_difference_m: np.ndarray
    level_db: np.ndarray
    candidates: tuple = ()
    #: How far the search went per path: 0 no geometric point, 1 all rough, 2 rays blocked, 3 found.
    stage: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int8))


def _bulge(x: np.ndarray, d: np.ndarray, ae: float) -> np.ndarray:
    return np.zeros_like(x) if math.isinf(ae) else x * (d - x) / (2.0 * ae)


def _bulge_slope(x: np.ndarray, d: np.ndarray, ae: float) -> np.ndarray:
    return np.zeros_like(x) if math.isinf(ae) else (d - 2.0 * x) / (2.0 * ae)


def _mismatch(x, d, ha, hb, c0, g, ae):
    """Grazing angles seen from a and from b on the facet y = c0 + g x + bulge (small angles), and their difference."""
    y = c0 + g * x + _bulge(x, d, ae)
    t = g + _bulge_slope(x, d, ae)
    with np.errstate(divide="ignore", invalid="ignore"):
        psi1 = t + (ha - y) / x
        psi2 = (hb - y) / (d - x) - t
    return psi1, psi2, y


def _window_sums(x: np.ndarray, s: np.ndarray, use: np.ndarray) -> tuple[np.ndarray, ...]:
    """Prefix sums (with a leading 0) of 1, x, s, x^2, x s, s^2 over the used samples of each row."""
    w = use.astype(float)
    xs = np.where(use, x, 0.0)
    ss = np.where(use, s, 0.0)
    parts = (w, xs, ss, xs * xs, xs * ss, ss * ss)
    return tuple(np.concatenate([np.zeros((x.shape[0], 1)), np.cumsum(p, axis=1)], axis=1) for p in parts)


def find_reflections(
    distance_m: np.ndarray, surface_m: np.ndarray, n_samples: np.ndarray, length_m: np.ndarray,
    antenna_a_m: np.ndarray, antenna_b_m: np.ndarray, freq_ghz: ArrayLike, k: float,
    water: np.ndarray | None, polarisation: str, ground: str, valid: np.ndarray | None = None,
) -> FacetReflections:
    """Specular reflections of many paths at one k on their actual profiles.

    ``surface_m`` (paths, samples): terrain plus clutter above the datum, water
    samples at their water level; ``water``: True on water samples (or None).
    A candidate is where the grazing angles seen from the two antennas over the
    local surface are equal; it is kept when the surface within its first Fresnel
    zone is smooth by the Rayleigh criterion (RMS about a fitted line) and both
    the incident and the reflected ray are above the surface outside that zone.
    The strongest kept candidate of each path is its reflection at this k.
    """
    x = np.asarray(distance_m, dtype=float)
    s = np.asarray(surface_m, dtype=float)
    P, N = x.shape
    n = np.asarray(n_samples)
    d = np.asarray(length_m, dtype=float)[:, None]
    ha = np.asarray(antenna_a_m, dtype=float)[:, None]
    hb = np.asarray(antenna_b_m, dtype=float)[:, None]
    f = np.broadcast_to(np.asarray(freq_ghz, dtype=float), (P,))
    lam = wavelength_m(f)
    ae = math.inf if math.isinf(k) else k * EARTH_RADIUS_M
    col = np.arange(N)[None, :]
    inside = col < n[:, None]
    interior = (col > 0) & (col < (n - 1)[:, None])
    if valid is not None:
        interior &= np.asarray(valid, dtype=bool)[:, None]
    water_mask = np.zeros((P, N), dtype=bool) if water is None else np.asarray(water, dtype=bool)

    # 1. seeds: the grazing-angle difference changes sign between two samples (local slope over +-2 samples).
    lo_i = np.clip(col - 2, 0, (n - 1)[:, None])
    hi_i = np.clip(col + 2, 0, (n - 1)[:, None])
    rows = np.arange(P)[:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        slope = (s[rows, hi_i] - s[rows, lo_i]) / (x[rows, hi_i] - x[rows, lo_i])
    slope = np.where(np.isfinite(slope), slope, 0.0)
    psi1, psi2, _ = _mismatch(x, d, ha, hb, s - slope * x, slope, ae)
    diff = psi1 - psi2
    seed = interior[:, :-1] & interior[:, 1:] & (diff[:, :-1] >= 0) & (diff[:, 1:] < 0) \
        & (psi1[:, :-1] > 0) & (psi2[:, 1:] > 0)
    p_idx, j_idx = np.nonzero(seed)
    stage = np.zeros(P, dtype=np.int8)  # 0 no geometric point, 1 rough, 2 rays blocked, 3 found
    stage[p_idx] = 1
    empty = _empty_facets(P, k, stage)
    if p_idx.size == 0:
        return empty
    dj = diff[p_idx, j_idx] - diff[p_idx, j_idx + 1]
    frac = np.where(dj > 0, diff[p_idx, j_idx] / np.where(dj > 0, dj, 1.0), 0.5)
    x0 = x[p_idx, j_idx] + frac * (x[p_idx, j_idx + 1] - x[p_idx, j_idx])
    dd = d[p_idx, 0]
    psi0 = np.maximum(0.5 * (psi1[p_idx, j_idx] + psi2[p_idx, j_idx + 1]), 1e-6)
    lam_c = lam[p_idx]

    # 2. the first Fresnel zone on the ground and a straight-line fit of the surface over it.
    half = np.sqrt(lam_c * x0 * (dd - x0) / dd) / np.sin(psi0)
    start, end = np.maximum(x0 - half, 0.0), np.minimum(x0 + half, dd)
    centre = 0.5 * d
    xc = x - centre
    sums = _window_sums(xc, s, inside)
    # one sorted key over all rows (rows are sorted, padding repeats the last sample; offsets keep rows apart)
    spread = 4.0 * (float(np.nanmax(d)) + 1.0)
    flat_key = (xc + (np.arange(P) * spread)[:, None]).ravel()
    base = p_idx * spread
    i0 = np.searchsorted(flat_key, start - centre[p_idx, 0] + base, side="left") - p_idx * N
    i1 = np.searchsorted(flat_key, end - centre[p_idx, 0] + base, side="right") - p_idx * N
    i0 = np.clip(np.minimum(i0, j_idx - 1), 0, N)
    i1 = np.clip(np.maximum(i1, j_idx + 3), 0, n[p_idx])
    cnt, sx, sy, sxx, sxy, syy = (v[p_idx, i1] - v[p_idx, i0] for v in sums)
    with np.errstate(divide="ignore", invalid="ignore"):
        den = cnt * sxx - sx * sx
        g = np.where(den > 0, (cnt * sxy - sx * sy) / den, 0.0)
        c0c = (sy - g * sx) / cnt
        var = (syy - c0c * sy - g * sxy) / cnt
    sigma = np.sqrt(np.maximum(var, 0.0))
    c0 = c0c - g * centre[p_idx, 0]  # intercept in distance from site a

    # 3. the specular point on the fitted facet (bisection: psi1 - psi2 falls along the path).
    a_lo, a_hi = np.maximum(start, 1e-3), np.minimum(end, dd - 1e-3)
    ha_c, hb_c = ha[p_idx, 0], hb[p_idx, 0]
    f_lo = np.subtract(*_mismatch(a_lo, dd, ha_c, hb_c, c0, g, ae)[:2])
    f_hi = np.subtract(*_mismatch(a_hi, dd, ha_c, hb_c, c0, g, ae)[:2])
    bracket = (f_lo >= 0) & (f_hi <= 0)
    lo_b, hi_b = a_lo.copy(), a_hi.copy()
    for _ in range(48):
        mid = 0.5 * (lo_b + hi_b)
        fm = np.subtract(*_mismatch(mid, dd, ha_c, hb_c, c0, g, ae)[:2])
        lo_b = np.where(fm >= 0, mid, lo_b)
        hi_b = np.where(fm >= 0, hi_b, mid)
    xr = 0.5 * (lo_b + hi_b)
    p1, p2, yr = _mismatch(xr, dd, ha_c, hb_c, c0, g, ae)
    psi = 0.5 * (p1 + p2)
    keep = bracket & (psi > 0) & np.isfinite(sigma) & (sigma < rayleigh_limit_m(np.maximum(psi, 1e-9), f[p_idx]))
    stage[p_idx[keep]] = 2
    if not keep.any():
        return empty
    sel = np.flatnonzero(keep)
    p_idx, xr, yr, psi, sigma, g, c0 = p_idx[sel], xr[sel], yr[sel], psi[sel], sigma[sel], g[sel], c0[sel]
    dd, lam_c = dd[sel], lam_c[sel]
    half = np.sqrt(lam_c * xr * (dd - xr) / dd) / np.sin(psi)
    start, end = np.maximum(xr - half, 0.0), np.minimum(xr + half, dd)

    # 4. incident and reflected rays above the surface outside the zone (the engine's drawing: surface + bulge).
    clear = np.ones(p_idx.size, dtype=bool)
    block = max(1, _RAY_CHECK_SAMPLES // max(N, 1))  # candidates per block: (block, samples) arrays stay small
    for b0 in range(0, p_idx.size, block):
        sl = slice(b0, b0 + block)
        pc = p_idx[sl]
        xs, ss = x[pc], s[pc]
        ys = ss + _bulge(xs, d[pc], ae)
        ha_c, hb_c, yc, xc_, dc = ha[pc, 0], hb[pc, 0], yr[sl], xr[sl], dd[sl]
        with np.errstate(divide="ignore", invalid="ignore"):
            ray_in = ha_c[:, None] + (yc - ha_c)[:, None] * xs / xc_[:, None]
            ray_out = yc[:, None] + (hb_c - yc)[:, None] * (xs - xc_[:, None]) / (dc - xc_)[:, None]
        ins = inside[pc] & (xs > 0) & (xs < dc[:, None])
        blocked = ((ins & (xs < start[sl, None]) & (ys >= ray_in))
                   | (ins & (xs > end[sl, None]) & (ys >= ray_out)))
        clear[sl] = ~blocked.any(axis=1)
    if not clear.any():
        return empty
    sel = np.flatnonzero(clear)
    p_idx, xr, yr, psi, sigma, g, c0, dd, start, end = (
        v[sel] for v in (p_idx, xr, yr, psi, sigma, g, c0, dd, start, end))
    stage[p_idx] = 3

    # 5. strength and path difference.
    nearest = np.argmin(np.abs(x[p_idx] - xr[:, None]), axis=1)
    wet = water_mask[p_idx, nearest]
    ground_key = resolve_surface(ground)
    eta_ground = complex_permittivity(ground_key, f[p_idx])
    eta_water = complex_permittivity(water_type_for(ground_key), f[p_idx])
    ground_is_water = ground_key in ("sea", "sea-water", "fresh-water")
    eta = np.where(wet & ~np.bool_(ground_is_water), eta_water, eta_ground)
    R = fresnel_coefficient(psi, eta, polarisation)
    D = divergence_factor(xr, dd - xr, psi, k)
    rho = roughness_factor(sigma, psi, f[p_idx])
    G = R * D * rho
    ha_c, hb_c = ha[p_idx, 0], hb[p_idx, 0]
    delta = (np.hypot(xr, ha_c - yr) + np.hypot(dd - xr, hb_c - yr)) - np.hypot(dd, hb_c - ha_c)
    level = two_ray_level_db(G, delta, f[p_idx])

    # 6. the strongest per path.
    strength = np.abs(G)
    order = np.lexsort((-strength, p_idx))
    first = np.ones(order.size, dtype=bool)
    first[1:] = p_idx[order][1:] != p_idx[order][:-1]
    best = order[first]
    out = {name: np.array(getattr(empty, name), copy=True) for name in (
        "found", "point_m", "plane_m", "slope", "intercept_m", "start_m", "end_m", "grazing_rad", "roughness_m",
        "over_water", "fresnel", "divergence", "roughness", "coefficient", "path_difference_m", "level_db")}
    pb = p_idx[best]
    values = {"found": True, "point_m": xr, "plane_m": c0 + g * xr, "slope": g, "intercept_m": c0,
              "start_m": start, "end_m": end, "grazing_rad": psi, "roughness_m": sigma,
              "over_water": wet | ground_is_water, "fresnel": R, "divergence": D, "roughness": rho,
              "coefficient": G, "path_difference_m": delta, "level_db": level}
    for name, v in values.items():
        out[name][pb] = v if np.ndim(v) == 0 else np.asarray(v)[best]
    candidates = tuple(zip(p_idx.tolist(), xr.tolist(), strength.tolist(), (wet | ground_is_water).tolist(),
                           start.tolist(), end.tolist()))
    return FacetReflections(k=k, candidates=candidates, stage=stage, **out)


def _empty_facets(P: int, k: float, stage: np.ndarray | None = None) -> FacetReflections:
    nan = np.full(P, np.nan)
    return FacetReflections(
        k=k, found=np.zeros(P, dtype=bool), point_m=nan.copy(), plane_m=nan.copy(), slope=nan.copy(),
        intercept_m=nan.copy(), start_m=nan.copy(), end_m=nan.copy(), grazing_rad=nan.copy(),
        roughness_m=nan.copy(), over_water=np.zeros(P, dtype=bool), fresnel=np.full(P, np.nan + 0j),
        divergence=nan.copy(), roughness=nan.copy(), coefficient=np.full(P, np.nan + 0j),
        path_difference_m=nan.copy(), level_db=nan.copy(), candidates=(),
        stage=np.zeros(P, dtype=np.int8) if stage is None else stage,
    )


# --- water on the path ------------------------------------------------------------------


def reflecting_surface(ground_m: np.ndarray, clutter_m: np.ndarray, n_samples: np.ndarray,
                       water: np.ndarray | None = None, sea_level_water: bool = False
                       ) -> tuple[np.ndarray, np.ndarray]:
    """The surface a ray reflects from and the water mask, both (paths, samples).

    Terrain plus clutter (NaN as 0); samples marked water (``water``, and with
    ``sea_level_water`` those within 0.5 m of the datum's zero) lose their
    clutter and take the median terrain height of their run of water (a water
    body is flat; calm water, the worst case: common practice).
    """
    ground = np.nan_to_num(np.asarray(ground_m, dtype=float))
    surface = ground + np.nan_to_num(np.asarray(clutter_m, dtype=float))
    col = np.arange(ground.shape[1])[None, :]
    inside = col < np.asarray(n_samples)[:, None]
    mask = np.zeros(ground.shape, dtype=bool) if water is None else np.asarray(water, dtype=bool) & inside
    if sea_level_water:
        mask |= inside & (np.abs(ground) <= SEA_LEVEL_TOLERANCE_M)
    for p in np.flatnonzero(mask.any(axis=1)):
        row = mask[p].astype(np.int8)
        edges = np.flatnonzero(np.diff(np.concatenate([[0], row, [0]])))
        for a, b in zip(edges[::2], edges[1::2]):
            surface[p, a:b] = np.median(ground[p, a:b])
    return surface, mask


# --- the whole job for many links ----------------------------------------------------------


def _facet_mismatch(x, d, ha, hb, c0, g, inv_ae):
    """As :func:`_mismatch` with 1/(k a) as an array (0 for k = infinity)."""
    y = c0 + g * x + x * (d - x) * inv_ae / 2.0
    t = g + (d - 2.0 * x) * inv_ae / 2.0
    with np.errstate(divide="ignore", invalid="ignore"):
        return t + (ha - y) / x, (hb - y) / (d - x) - t, y


@dataclass(frozen=True)
class Curve:
    """Level change versus k of one path's reflecting facet: 1/k, dB (0 where the facet gives no reflection)."""

    inverse_k: np.ndarray
    level_db: np.ndarray
    path_difference_m: np.ndarray


def facet_curve(d_m: float, ha_m: float, hb_m: float, freq_ghz: float, facet: dict, inverse_k: np.ndarray,
                polarisation: str, permittivity: complex) -> Curve:
    """Two-ray level change over many k for one facet (dict of intercept_m, slope, start_m, end_m, roughness_m).

    The specular point is found on the facet at each k by bisection; where it
    leaves the facet, or the facet is rough at that angle, the level change is 0.
    """
    u = np.asarray(inverse_k, dtype=float)
    inv_ae = u / EARTH_RADIUS_M
    lo = np.full(u.shape, max(facet["start_m"], 1e-3))
    hi = np.full(u.shape, min(facet["end_m"], d_m - 1e-3))
    c0, g = facet["intercept_m"], facet["slope"]
    f_lo = np.subtract(*_facet_mismatch(lo, d_m, ha_m, hb_m, c0, g, inv_ae)[:2])
    f_hi = np.subtract(*_facet_mismatch(hi, d_m, ha_m, hb_m, c0, g, inv_ae)[:2])
    ok = (f_lo >= 0) & (f_hi <= 0)
    for _ in range(48):
        mid = 0.5 * (lo + hi)
        fm = np.subtract(*_facet_mismatch(mid, d_m, ha_m, hb_m, c0, g, inv_ae)[:2])
        lo, hi = np.where(fm >= 0, mid, lo), np.where(fm >= 0, hi, mid)
    xr = 0.5 * (lo + hi)
    p1, p2, yr = _facet_mismatch(xr, d_m, ha_m, hb_m, c0, g, inv_ae)
    psi = 0.5 * (p1 + p2)
    ok &= (psi > 0) & (facet["roughness_m"] < rayleigh_limit_m(np.maximum(psi, 1e-9), freq_ghz))
    delta = (np.hypot(xr, ha_m - yr) + np.hypot(d_m - xr, hb_m - yr)) - math.hypot(d_m, hb_m - ha_m)
    k = np.where(u > 0, 1.0 / np.where(u > 0, u, 1.0), np.inf)
    G = (fresnel_coefficient(np.maximum(psi, 1e-9), permittivity, polarisation)
         * divergence_factor(xr, d_m - xr, np.maximum(psi, 1e-9), k)
         * roughness_factor(facet["roughness_m"], np.maximum(psi, 1e-9), freq_ghz))
    level = np.where(ok, two_ray_level_db(G, delta, freq_ghz), 0.0)
    return Curve(u, level, np.where(ok, delta, np.nan))


def curve_inverse_k(d_m: float, h1_eff_m: float, h2_eff_m: float, d1_m: float, freq_ghz: float,
                    k_min: float, k_max: float) -> np.ndarray:
    """1/k values of the level curve: 0 (k infinite), then [1/k_max, 1/k_min] with at least 12 points a period.

    The period in 1/k follows from dDelta/d(1/k) = (h2' d1^2 + h1' d2^2) / (a d)
    (derivative of Delta = 2 h1' h2' / d with h' = h - d^2 k^-1 / (2 a)); between 101 and 4001 points.
    """
    d2 = d_m - d1_m
    rate = max((h2_eff_m * d1_m**2 + h1_eff_m * d2**2) / (EARTH_RADIUS_M * d_m), 1e-12)
    period = float(wavelength_m(freq_ghz)) / rate
    u0, u1 = 1.0 / k_max, 1.0 / k_min
    n = int(np.clip(math.ceil((u1 - u0) / (period / 12.0)) + 1, 101, 4001))
    return np.concatenate([[0.0], np.linspace(u0, u1, n)])


_STAGE_REASONS = {
    0: "no point on the path where the grazing angles from both antennas are equal over the surface",
    1: "the surface where a reflected ray could land is rough by the Rayleigh criterion (diffuse, not specular)",
    2: "the ground blocks the incident or the reflected ray at every smooth reflection point",
}


@dataclass(frozen=True)
class LinkReflections:
    """Reflections of many links: the sweep over k, the level curve, diversity figures; ``record(i)`` per link."""

    k_values: tuple[float, ...]
    sweep: tuple[FacetReflections, ...]
    design_k: float
    worst_k: float
    length_m: np.ndarray
    freq_ghz: np.ndarray
    antenna_a_m: np.ndarray
    antenna_b_m: np.ndarray
    fade_margin_db: np.ndarray
    curves: tuple[Curve | None, ...]
    facet_k: np.ndarray  # k of the facet the curve follows (NaN: none)
    swing_db: np.ndarray
    deepest_null_db: np.ndarray
    deepest_null_k: np.ndarray
    highest_db: np.ndarray
    spacing_a_m: np.ndarray
    spacing_b_m: np.ndarray
    improvement: np.ndarray
    improvement_note: tuple[str | None, ...]
    smooth_point_m: np.ndarray  # (paths, k values): the cubic's point over the facet's level
    settings: ReflectionSettings
    ground: str
    polarisation: str
    valid: np.ndarray

    @property
    def design(self) -> FacetReflections:
        return self.sweep[self.k_values.index(self.design_k)]

    def found(self) -> np.ndarray:
        """True where a reflection exists at some k of the sweep."""
        return np.any([s.found for s in self.sweep], axis=0) & self.valid

    def columns(self) -> dict[str, np.ndarray]:
        """Screening columns: reflection_point_km (design k), reflection_swing_db, over_water."""
        des = self.design
        found = self.found()
        over = np.any([s.over_water & s.found for s in self.sweep], axis=0)
        return {
            "reflection_point_km": np.where(des.found, des.point_m / 1000.0, np.nan),
            "reflection_swing_db": np.where(found, self.swing_db, np.nan),
            "over_water": np.where(self.valid, over, False),
        }

    def warning(self, i: int) -> str | None:
        """The swing warning of link i when the level swings by more than the fade margin, else None."""
        if not self.found()[i] or not self.swing_db[i] > self.fade_margin_db[i]:
            return None
        where = self._where(i)
        spacing = self.spacing_b_m[i]
        fix = (f"; space diversity needs about {spacing:.1f} m between the antennas at site b "
               f"(or move the reflection onto rough or blocked ground)") if np.isfinite(spacing) else ""
        return (f"ground reflection{where}: the received level swings {self.swing_db[i]:.1f} dB as k varies "
                f"from {self.settings.k_min:g} to infinity (deepest null {self.deepest_null_db[i]:.1f} dB at "
                f"k={_k_text(self.deepest_null_k[i])}), more than the fade margin of "
                f"{self.fade_margin_db[i]:.1f} dB{fix}")

    def _where(self, i: int) -> str:
        k = self.facet_k[i]
        if not np.isfinite(k) and not np.isinf(k):
            return ""
        s = self.sweep[self.k_values.index(float(k))]
        surface = "water" if s.over_water[i] else "flat ground"
        return f" from {surface} {s.point_m[i] / 1000.0:.2f} km from site a (k={_k_text(k)})"

    def record(self, i: int) -> dict:
        """The JSON ``reflection`` block of link i."""
        inputs = {
            "k_min": self.settings.k_min, "k_max": self.settings.k_max, "k_values": [_k_json(k) for k in self.k_values],
            "ground": self.ground, "water_type": water_type_for(self.ground),
            "water_file": self.settings.water_file, "sea_level_water": self.settings.sea_level_water,
            "polarisation": self.polarisation,
        }
        if not self.valid[i]:
            return {"found": False, "reason": "path not profiled", "inputs": inputs}
        if not self.found()[i]:
            stage = int(max(s.stage[i] for s in self.sweep))
            return {"found": False, "reason": _STAGE_REASONS[min(stage, 2)] + " (at every k of the sweep)",
                    "inputs": inputs}
        des = self.design
        sweep = [self._at_k(j, i) for j in range(len(self.k_values))]
        curve = self.curves[i]
        out: dict[str, Any] = {
            "found": True,
            "reason": None,
            "at_design_k": sweep[self.k_values.index(self.design_k)] if des.found[i] else None,
            "at_worst_k": sweep[self.k_values.index(self.worst_k)],
            "points_at_design_k": self._points(i),
            "sweep": sweep,
            "curve_k": _k_json(self.facet_k[i]),
            "swing_db": _num(self.swing_db[i]),
            "deepest_null_db": _num(self.deepest_null_db[i]),
            "deepest_null_k": _k_json(self.deepest_null_k[i]),
            "highest_level_db": _num(self.highest_db[i]),
            "fade_margin_db": _num(self.fade_margin_db[i]),
            "swing_exceeds_fade_margin": bool(self.swing_db[i] > self.fade_margin_db[i]),
            "diversity": {
                "spacing_a_m": _num(self.spacing_a_m[i]),
                "spacing_b_m": _num(self.spacing_b_m[i]),
                "improvement_factor": _num(self.improvement[i]),
                "improvement_note": self.improvement_note[i],
                "sources": "spacing lambda d / (4 h'), two-ray geometry (common practice); improvement "
                           "ITU-R P.530-17 s. 6.2.1 (from memory)",
            },
            "curve": None if curve is None else {
                "inverse_k": [round(float(u), 6) for u in curve.inverse_k],
                "level_change_db": [round(float(v), 3) for v in curve.level_db],
            },
            "inputs": inputs,
        }
        return out

    def _at_k(self, j: int, i: int) -> dict:
        s, k = self.sweep[j], self.k_values[j]
        smooth = self.smooth_point_m[i, j]
        base = {"k": _k_json(k), "smooth_earth_point_km": _num(smooth / 1000.0)}
        if not s.found[i]:
            return {**base, "found": False}
        g = s.coefficient[i]
        lam = float(wavelength_m(self.freq_ghz[i]))
        phase = np.angle(g * np.exp(-2j * np.pi * s.path_difference_m[i] / lam), deg=True)
        return {
            **base, "found": True,
            "point_km": float(s.point_m[i]) / 1000.0,
            "first_fresnel_zone_km": [float(s.start_m[i]) / 1000.0, float(s.end_m[i]) / 1000.0],
            "surface_m": float(s.plane_m[i]),
            "surface_slope": float(s.slope[i]),
            "over_water": bool(s.over_water[i]),
            "grazing_angle_deg": math.degrees(float(s.grazing_rad[i])),
            "roughness_rms_m": float(s.roughness_m[i]),
            "fresnel_coefficient_magnitude": float(abs(s.fresnel[i])),
            "fresnel_coefficient_phase_deg": float(np.angle(s.fresnel[i], deg=True)),
            "divergence_factor": float(s.divergence[i]),
            "roughness_factor": float(s.roughness[i]),
            "reflection_coefficient_magnitude": float(abs(g)),
            "path_difference_m": float(s.path_difference_m[i]),
            "path_difference_wavelengths": float(s.path_difference_m[i]) / lam,
            "phase_deg": float(phase),
            "level_change_db": float(s.level_db[i]),
        }

    def _points(self, i: int) -> list[dict]:
        """Every separate reflection point at the design k (the strongest first), km from site a."""
        rows = sorted((c for c in self.design.candidates if c[0] == i), key=lambda c: -c[2])
        kept: list[tuple] = []
        for c in rows:
            if all(not (k[4] <= c[1] <= k[5]) for k in kept):
                kept.append(c)
        return [{"point_km": c[1] / 1000.0, "reflection_coefficient_magnitude": c[2], "over_water": bool(c[3]),
                 "first_fresnel_zone_km": [c[4] / 1000.0, c[5] / 1000.0]} for c in kept]


def _num(v: Any) -> float | None:
    v = float(v)
    return v if math.isfinite(v) else None


def _k_json(k: Any) -> float | str | None:
    k = float(k)
    if math.isinf(k):
        return "infinity"
    return k if math.isfinite(k) else None


def _k_text(k: Any) -> str:
    k = float(k)
    return "infinity" if math.isinf(k) else f"{k:.3g}"


def reflections_for_links(
    profiles: Any, antenna_a_m: np.ndarray, antenna_b_m: np.ndarray, freq_ghz: ArrayLike, *,
    k: float, k_worst: float, fade_margin_db: ArrayLike, polarisation: str, ground: str,
    settings: ReflectionSettings = ReflectionSettings(), water: np.ndarray | None = None,
    climate: Any = None,
) -> LinkReflections:
    """Reflections of every path of ``profiles`` (profiler.profile.Profiles) over the k sweep.

    ``water``: (paths, samples) True where a water layer covers the sample;
    ``fade_margin_db``: per path, at the design k (for the warning and the
    P.530 improvement); ``climate``: ClimateSettings (dN1, sa for p0), or None.
    """
    settings.validate()
    ground = resolve_surface(ground)
    k_values = sweep_k_values(float(settings.k_min), float(settings.k_max), (k, k_worst))
    surface, mask = reflecting_surface(profiles.ground_m, profiles.clutter_m, profiles.n_samples, water,
                                       settings.sea_level_water)
    valid = np.asarray(profiles.valid, dtype=bool)
    P = len(valid)
    f = np.array(np.broadcast_to(np.asarray(freq_ghz, dtype=float), (P,)))
    ha = np.asarray(antenna_a_m, dtype=float)
    hb = np.asarray(antenna_b_m, dtype=float)
    d = np.asarray(profiles.length_m, dtype=float)
    margin = np.array(np.broadcast_to(np.asarray(fade_margin_db, dtype=float), (P,)))
    sweep = tuple(find_reflections(profiles.distance_m, surface, profiles.n_samples, d, ha, hb, f, kv,
                                   mask, polarisation, ground, valid) for kv in k_values)
    nan = np.full(P, np.nan)
    curves: list[Curve | None] = [None] * P
    facet_k, swing, null, null_k, high = nan.copy(), nan.copy(), nan.copy(), nan.copy(), nan.copy()
    spacing_a, spacing_b, improvement = nan.copy(), nan.copy(), nan.copy()
    notes: list[str | None] = [None] * P
    smooth = np.full((P, len(k_values)), np.nan)
    order = sorted(range(len(k_values)), key=lambda j: abs(math.log(k_values[j] / k)) if math.isfinite(k_values[j])
                   else math.inf)
    found_any = np.any([s.found for s in sweep], axis=0) & valid
    p0 = _p0(d, f, ha, hb, climate) if found_any.any() else nan
    for i in map(int, np.flatnonzero(found_any)):
        j = next(j for j in order if sweep[j].found[i])
        s = sweep[j]
        facet_k[i] = k_values[j]
        facet = {name: float(getattr(s, name)[i]) for name in ("intercept_m", "slope", "start_m", "end_m",
                                                               "roughness_m")}
        if s.over_water[i]:  # the whole water body reflects, not only the zone at this k
            facet["start_m"], facet["end_m"] = _water_run(profiles.distance_m[i], mask[i], s.point_m[i],
                                                          facet["start_m"], facet["end_m"])
        level = float(s.plane_m[i])
        smooth[i] = reflection_point_m(ha[i] - level, hb[i] - level, d[i], np.array(k_values))
        eta = complex_permittivity(water_type_for(ground) if (s.over_water[i] and ground in ("land", "wet-ground",
                                   "dry-ground")) else ground, f[i])
        d1 = float(s.point_m[i])
        psi = float(s.grazing_rad[i])
        u = curve_inverse_k(d[i], psi * d1, psi * (d[i] - d1), d1, f[i], settings.k_min, settings.k_max)
        curve = facet_curve(d[i], ha[i], hb[i], f[i], facet, u, polarisation, complex(eta))
        # the facet's curve counts only where the search found this facet's rays clear at the nearest swept k
        curve = _checked_curve(curve, sweep, k_values, i, facet)
        curves[i] = curve
        swing[i] = float(curve.level_db.max() - curve.level_db.min())
        jn = int(np.argmin(curve.level_db))
        null[i] = float(curve.level_db[jn])
        null_k[i] = math.inf if curve.inverse_k[jn] == 0 else 1.0 / float(curve.inverse_k[jn])
        high[i] = float(curve.level_db.max())
        des = sweep[k_values.index(k)]
        at = des if des.found[i] else s
        d1 = float(at.point_m[i])
        psi = float(at.grazing_rad[i])
        spacing_b[i] = float(diversity_spacing_m(psi * d1, d[i], f[i]))
        spacing_a[i] = float(diversity_spacing_m(psi * (d[i] - d1), d[i], f[i]))
        improvement[i], notes[i] = _improvement(spacing_b[i], f[i], d[i], p0[i], margin[i])
    return LinkReflections(
        k_values=k_values, sweep=sweep, design_k=k, worst_k=k_worst, length_m=d, freq_ghz=f, antenna_a_m=ha,
        antenna_b_m=hb, fade_margin_db=margin, curves=tuple(curves), facet_k=facet_k, swing_db=swing,
        deepest_null_db=null, deepest_null_k=null_k, highest_db=high, spacing_a_m=spacing_a, spacing_b_m=spacing_b,
        improvement=improvement, improvement_note=tuple(notes), smooth_point_m=smooth, settings=settings,
        ground=ground, polarisation=polarisation, valid=valid,
    )


def _water_run(x: np.ndarray, mask: np.ndarray, point_m: float, start: float, end: float) -> tuple[float, float]:
    """The extent of the run of water samples holding the point, joined to [start, end]."""
    j = int(np.argmin(np.abs(x - point_m)))
    if not mask[j]:
        return start, end
    a = j
    while a > 0 and mask[a - 1]:
        a -= 1
    b = j
    while b + 1 < mask.size and mask[b + 1]:
        b += 1
    return min(start, float(x[a])), max(end, float(x[b]))


def _checked_curve(curve: Curve, sweep: Sequence[FacetReflections], k_values: Sequence[float], i: int,
                   facet: dict) -> Curve:
    """Level 0 where the nearest swept k (in 1/k) found no clear reflection on this facet."""
    u_swept = np.array([0.0 if math.isinf(k) else 1.0 / k for k in k_values])
    on_facet = np.array([bool(s.found[i]) and facet["start_m"] - 1.0 <= s.point_m[i] <= facet["end_m"] + 1.0
                         for s in sweep])
    nearest = np.argmin(np.abs(curve.inverse_k[:, None] - u_swept[None, :]), axis=1)
    ok = on_facet[nearest]
    return Curve(curve.inverse_k, np.where(ok, curve.level_db, 0.0),
                 np.where(ok, curve.path_difference_m, np.nan))


def _p0(d: np.ndarray, f: np.ndarray, ha: np.ndarray, hb: np.ndarray, climate: Any) -> np.ndarray:
    """Multipath occurrence factor p0 % (ITU-R P.530-17 eq. 10, profiler.losses.multipath); NaN where invalid."""
    from .climate import ClimateSettings
    from .losses.multipath import multipath_occurrence_factor_pct, multipath_validity_problem

    c = climate if climate is not None else ClimateSettings()
    bad = np.asarray(multipath_validity_problem(d, f), dtype=bool)
    dd = np.where(bad, 10_000.0, d)
    ff = np.where(bad, 10.0, f)
    p0 = multipath_occurrence_factor_pct(dd, ff, ha, hb, c.dn1_n_per_km, c.terrain_roughness_m)
    return np.where(bad, np.nan, p0)


def _improvement(spacing_m: float, f: float, d_m: float, p0: float, margin_db: float) -> tuple[float, str | None]:
    """P.530 improvement factor with the spacing found, and a note when outside its validity or not computed."""
    if not (np.isfinite(p0) and margin_db > 0 and np.isfinite(spacing_m) and spacing_m > 0):
        return math.nan, ("not computed: needs a positive fade margin and the multipath occurrence factor "
                          "of ITU-R P.530-17 s. 2.3 (path length and frequency within its range)")
    value = float(space_diversity_improvement(spacing_m, f, d_m / 1000.0, p0, margin_db))
    out = [name for name, v in (("spacing", spacing_m), ("freq_ghz", f), ("distance_km", d_m / 1000.0))
           if not (DIVERSITY_VALIDITY["spacing_m" if name == "spacing" else name][0] <= v
                   <= DIVERSITY_VALIDITY["spacing_m" if name == "spacing" else name][1])]
    note = None
    if out:
        note = ("outside the validity of ITU-R P.530-17 s. 6.2.1 (S 3-23 m, f 2-11 GHz, d 43-240 km): "
                + ", ".join(out) + "; an indication only")
    return value, note
