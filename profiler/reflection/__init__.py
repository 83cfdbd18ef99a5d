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

Modules: ``settings`` (the k sweep, :class:`ReflectionSettings`), ``surfaces``
(electrical constants; Fresnel, divergence and roughness factors), ``point``
(the specular point: the cubic on a smooth sphere, grazing angles on a facet),
``two_ray`` (the two-ray level, its curve over k, diversity spacing and
improvement), ``search`` (:func:`find_reflections` on actual profiles at one
k, the reflecting surface), ``links`` (:func:`reflections_for_links`,
:class:`LinkReflections` and its record).  ``water`` is the edge that reads
``--water`` polygons into a mask; this package face does not import it.

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

from .links import LinkReflections, reflections_for_links
from .point import reflection_point_cubic_coefficients, reflection_point_m
from .search import SEA_LEVEL_TOLERANCE_M, FacetReflections, find_reflections, reflecting_surface
from .settings import DEFAULT_K_MAX, DEFAULT_K_MIN, K_STEPS, ReflectionSettings, sweep_k_values
from .surfaces import (
    SMOOTH_EARTH_GROUND, SURFACE_TYPES, WATER_TYPES, brewster_grazing_angle_rad, complex_permittivity,
    divergence_factor, fresnel_coefficient, rayleigh_limit_m, resolve_surface, roughness_factor, water_type_for,
)
from .two_ray import (
    DIVERSITY_VALIDITY, LEVEL_FLOOR_DB, Curve, curve_inverse_k, diversity_spacing_m, facet_curve,
    space_diversity_improvement, two_ray_level_db,
)

__all__ = [
    "SURFACE_TYPES", "WATER_TYPES", "SMOOTH_EARTH_GROUND", "DEFAULT_K_MIN", "DEFAULT_K_MAX", "K_STEPS",
    "ReflectionSettings", "sweep_k_values", "reflecting_surface", "facet_curve", "curve_inverse_k", "Curve",
    "resolve_surface", "complex_permittivity", "fresnel_coefficient",
    "brewster_grazing_angle_rad", "divergence_factor", "roughness_factor", "rayleigh_limit_m",
    "reflection_point_m", "reflection_point_cubic_coefficients", "two_ray_level_db", "diversity_spacing_m",
    "space_diversity_improvement", "FacetReflections", "find_reflections", "LinkReflections",
    "reflections_for_links", "LEVEL_FLOOR_DB", "DIVERSITY_VALIDITY", "SEA_LEVEL_TOLERANCE_M", "water_type_for",
]
