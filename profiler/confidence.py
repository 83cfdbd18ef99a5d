"""How sure a verdict is: Monte Carlo over the errors of the data behind a link.

The model (every part is written into the ``confidence`` record):

* **Elevation error**: a Gaussian field along each profile, standard deviation
  sigma (per terrain source, :data:`DEM_ERROR_M`, or ``dem_error_m``) and
  exponential correlation exp(-|dx| / L) with L = ``dem_error_corr_m``.  The
  exponential (first-order Markov) covariance is the usual choice for DEM
  error fields (e.g. Holmes, Chadwick and Kyriakidis, Journal of Hydrology
  233 (2000), from memory; common practice).  Drawn as an AR(1) sequence
  over the samples: e_c = rho_c e_(c-1) + sqrt(1 - rho_c^2) z_c, rho_c =
  exp(-dx_c / L), which has exactly that correlation for any spacing.
* **Clutter error**: buildings, trees and surface-model clutter add their own
  sigma (:data:`CLUTTER_ERROR_M`, from memory / common practice), combined
  with the elevation sigma as sqrt(s_dem^2 + s_clutter^2) in the same field
  (a simplification: the clutter error is drawn with the terrain's
  correlation).  The tree allowance stays as given: it moves the median, the
  sigma spreads around it.
* **Antenna ends**: an antenna given above the ground or above a roof stands
  on the drawn surface (its end sample's error moves it); one given as an
  elevation or above the ellipsoid keeps its elevation.  Each antenna adds an
  independent Gaussian height error ``antenna_error_m``.
* **k-factor**: the refractivity gradient G (N-units/km) is Gaussian; k =
  157 / (157 + G) (ITU-R P.453-14 / P.530-17, the effective radius relation,
  from memory).  The median G comes from the design k, the sigma from the
  worst-case k taken as the value exceeded 99.9 % of the time (the role
  ITU-R P.530-17 Fig. 3 gives the worst-case k; normal quantile 3.090).
  Drawn k is kept within the k range of :data:`profiler.validation.LIMITS`.

Per draw: the worst clearance (F1 fraction) at the criterion's two k-factors
(the criterion is a planning rule stated at those k, so ``p_meets`` does not
draw k), the line of sight at the drawn k, the diffraction loss by the
chosen method at the drawn k on the drawn profile (a batch of draws is a
batch of paths for :mod:`profiler.losses.terrain_diffraction`), and the fade
margin shifted by the change of diffraction loss.  Draws are seeded per path
from the seed and the two ends' positions, so a pair's numbers do not depend
on the batch or chunk it is in.  Pure core: no I/O.
"""

from __future__ import annotations

import struct
import zlib
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ._confidence_kernels import confidence_draws
from ._compiled import use_numba
from .clutter import ClutterKind
from .errors import InputError
from .units import EARTH_RADIUS_M, wavelength_m
from .validation import LIMITS, check_number

__all__ = [
    "ConfidenceSettings", "ConfidenceResult", "PathDraws", "confidence_for_batch", "draw_path",
    "DEM_ERROR_M", "FALLBACK_DEM_ERROR_M", "CLUTTER_ERROR_M", "DEFAULT_DRAWS", "MIN_DRAWS", "MAX_DRAWS",
    "DEFAULT_SEED", "DEFAULT_CORR_M", "DEFAULT_ANTENNA_ERROR_M", "k_distribution", "summary_lines",
    "resolve_confidence", "confidence_level", "p_meets_at", "path_seed", "MAX_DRAW_SAMPLES",
]

#: Draws by default: the Monte Carlo standard error of a probability is at most 1.6 points at 1000.
DEFAULT_DRAWS = 1000
#: Fewest draws accepted: the 5 % and 95 % points need at least 5 draws beyond each, and at 100 draws a
#: probability's standard error is at most sqrt(0.25 / 100) = 5 percentage points.
MIN_DRAWS = 100
#: Most draws accepted (memory: draws x samples of one path are held at once).
MAX_DRAWS = 100_000
#: Most draws x samples of one path (the normals and the drawn surfaces take 16 bytes each: 320 MB).
MAX_DRAW_SAMPLES = 20_000_000
#: Seed of the draws by default (fixed, so results repeat).
DEFAULT_SEED = 17
#: Correlation length of the elevation error by default, m (DEM error correlation lengths reported
#: for 30 m global DEMs run from a few hundred metres to a few km: from memory, common practice).
DEFAULT_CORR_M = 500.0
#: Antenna height tolerance by default, m (one sigma; a mounted height is within about a foot: common practice).
DEFAULT_ANTENNA_ERROR_M = 0.3

_LE90 = 1.6449  # LE90 / sigma for a Gaussian error (90 % two-sided point of the normal distribution)

#: Elevation error sigma per fetched dataset, m, with where it comes from.
DEM_ERROR_M: dict[str, tuple[float, str]] = {
    "copernicus-30": (4.0 / _LE90, "Copernicus DEM: absolute vertical accuracy < 4 m LE90 (product handbook, "
                                   "from memory) = sigma 2.43 m; larger under forest and in towns"),
    "copernicus-90": (4.0 / _LE90, "Copernicus DEM: absolute vertical accuracy < 4 m LE90 (product handbook, "
                                   "from memory) = sigma 2.43 m; larger under forest and in towns"),
    "srtm-1": (16.0 / _LE90, "SRTM: absolute height error 16 m LE90 (mission specification, from memory) = "
                             "sigma 9.73 m"),
}
#: Sigma used for rasters that state no accuracy, m, and the words for it.
FALLBACK_DEM_ERROR_M = (3.0, "assumed 3 m (the raster states no accuracy; common practice for a modern 30 m "
                             "DEM): give --dem-error-m")
#: Clutter height sigma per kind, m (from memory / common practice).
CLUTTER_ERROR_M: dict[int, tuple[float, str]] = {
    int(ClutterKind.BUILDING): (3.0, "building heights from footprint layers: about a storey (from memory)"),
    int(ClutterKind.TREES): (4.0, "tree heights: species, growth and survey date (common practice)"),
    int(ClutterKind.SURFACE_MODEL): (2.0, "surface-model clutter: the surface model's own error (from memory)"),
}
_K157 = 1e6 / (EARTH_RADIUS_M / 1000.0)  # 1 / (a 1e-6), a in km: 157 N-units/km
_Z999 = 3.090232306167813  # normal quantile of 0.999 (scipy.stats.norm.ppf(0.999))
_QUANTILES = (5.0, 50.0, 95.0)


@dataclass(frozen=True)
class ConfidenceSettings:
    """What the Monte Carlo draws: counts and sigmas (m), correlation length (m), the seed.

    ``dem_error_m`` None takes the terrain source's sigma (:data:`DEM_ERROR_M`),
    else :data:`FALLBACK_DEM_ERROR_M`.  ``dem_error_corr_m`` may be ``inf``
    (one error for the whole profile).
    """

    draws: int = DEFAULT_DRAWS
    seed: int = DEFAULT_SEED
    dem_error_m: float | None = None
    dem_error_corr_m: float = DEFAULT_CORR_M
    antenna_error_m: float = DEFAULT_ANTENNA_ERROR_M
    clutter_error_m: dict = field(default_factory=lambda: {k: v[0] for k, v in CLUTTER_ERROR_M.items()})
    vary_k: bool = True
    #: Fetched dataset the heights come from (a name of DEM_ERROR_M), when the caller knows it better than
    #: the batch's provenance (screening sets it: its workers' models carry no provenance).
    terrain_source: str | None = None

    def validate(self) -> "ConfidenceSettings":
        """These settings, checked (ranges in :data:`profiler.validation.LIMITS`); InputError naming the setting."""
        if isinstance(self.draws, bool) or not isinstance(self.draws, (int, np.integer)):
            raise InputError(f"{{parameter}} must be a whole number of draws, got {self.draws!r}",
                             parameter="draws", value_word="N")
        check_number(self.draws, "draws")
        if isinstance(self.seed, bool) or not isinstance(self.seed, (int, np.integer)) or self.seed < 0:
            raise InputError(f"{{parameter}} must be a whole number of 0 or more, got {self.seed!r}",
                             parameter="seed", value_word="N")
        if self.dem_error_m is not None:
            check_number(self.dem_error_m, "dem_error_m")
        if not (isinstance(self.dem_error_corr_m, (int, float)) and self.dem_error_corr_m == np.inf):
            check_number(self.dem_error_corr_m, "dem_error_corr_m")
        check_number(self.antenna_error_m, "antenna_error_m")
        return self


def k_distribution(k: float, k_worst: float) -> tuple[float, float]:
    """Median and sigma of the refractivity gradient G, N-units/km, from the design and worst-case k.

    k = 157 / (157 + G) (ITU-R P.453-14, from memory); the design k is the
    median, the worst-case k the value exceeded 99.9 % of the time (normal
    quantile 3.090, scipy.stats.norm.ppf(0.999)).
    """
    g50 = _K157 / k - _K157
    gw = _K157 / k_worst - _K157
    return g50, max(gw - g50, 0.0) / _Z999


@dataclass(frozen=True)
class PathDraws:
    """The draws of one path: per draw F1 fractions, line of sight, antenna elevations (m), k, surfaces (m)."""

    frac_design: np.ndarray
    frac_worst: np.ndarray
    los: np.ndarray
    antenna_a_m: np.ndarray
    antenna_b_m: np.ndarray
    k: np.ndarray
    surface_m: np.ndarray  # (draws, samples)
    sigma_m: np.ndarray  # (samples,) the combined sigma


def path_seed(seed: int, lat_a: float, lon_a: float, lat_b: float, lon_b: float) -> np.random.SeedSequence:
    """The seed of one path's draws: the run's seed and the ends' positions (not its place in a batch)."""
    words = [int(seed)]
    for v in (lat_a, lon_a, lat_b, lon_b):
        words.append(zlib.crc32(struct.pack("<d", float(v))))
    return np.random.SeedSequence(words)


def draw_path(
    distance_m: np.ndarray, surface_m: np.ndarray, clutter_kind: np.ndarray | None, length_m: float,
    antenna_a_m: float, antenna_b_m: float, freq_ghz: float, k: float, k_worst: float, dem_sigma_m: float,
    settings: ConfidenceSettings, rng_seed: np.random.SeedSequence, *, follow_a: bool = True,
    follow_b: bool = True, height_offsets_m: tuple[float, float] = (0.0, 0.0),
) -> PathDraws:
    """Monte Carlo draws of one path's samples (unpadded, ends included): see the module docstring.

    ``height_offsets_m`` raise the antennas (m) without changing the draws (the height solver).
    """
    n = distance_m.shape[0]
    rng = np.random.default_rng(rng_seed)
    z = rng.standard_normal((settings.draws, n))
    za = rng.standard_normal(settings.draws)
    zb = rng.standard_normal(settings.draws)
    zk = rng.standard_normal(settings.draws)
    d1 = np.asarray(distance_m, dtype=float)
    d2 = np.maximum(length_m - d1, 0.0)
    dx = np.diff(d1, prepend=d1[0])
    corr = float(settings.dem_error_corr_m)
    rho = np.exp(-dx / corr) if np.isfinite(corr) else np.ones(n)
    rho[0] = 0.0
    innov = np.sqrt(1.0 - rho * rho)
    sig2 = np.full(n, float(dem_sigma_m) ** 2)
    if clutter_kind is not None:
        for code, s in settings.clutter_error_m.items():
            sig2 = np.where(clutter_kind == code, sig2 + float(s) ** 2, sig2)
    sigma = np.sqrt(sig2)
    interior = np.zeros(n, dtype=np.bool_)
    interior[1:-1] = True
    with np.errstate(invalid="ignore", divide="ignore"):
        f1 = np.sqrt(np.where(d1 + d2 > 0, wavelength_m(freq_ghz) * d1 * d2 / (d1 + d2), 0.0))
    d1d2 = d1 * d2
    a = 2.0 * EARTH_RADIUS_M
    g50, gsig = k_distribution(k, k_worst)
    if settings.vary_k:
        inv_k = 1.0 + (g50 + gsig * zk) / _K157
        inv_k = np.clip(inv_k, 1.0 / LIMITS["k"].high, 1.0 / LIMITS["k"].low)
        k_draw = 1.0 / inv_k
    else:
        k_draw = np.full(settings.draws, float(k))
    out = np.empty((settings.draws, n))
    args = (
        np.ascontiguousarray(surface_m, dtype=float), sigma, rho, innov, interior, d1 / length_m, f1,
        d1d2 / (a * k), d1d2 / (a * k_worst), d1d2,
        float(antenna_a_m + height_offsets_m[0]), float(antenna_b_m + height_offsets_m[1]),
        1.0 if follow_a else 0.0, 1.0 if follow_b else 0.0, z,
        float(settings.antenna_error_m) * za, float(settings.antenna_error_m) * zb, a * k_draw, out,
    )
    fn = confidence_draws.compiled() if use_numba(z.size) else confidence_draws.numpy
    frac_d, frac_w, los, ant_a, ant_b = fn(*args)
    return PathDraws(frac_d, frac_w, los, ant_a, ant_b, k_draw, out, sigma)


@dataclass(frozen=True)
class ConfidenceResult:
    """Per path: P(meets criterion), P(line of sight), 5/50/95 % points, the model; ``record(i)`` its JSON."""

    p_meets: np.ndarray
    p_los: np.ndarray
    worst_f1_fraction: np.ndarray  # (paths, 3)
    diffraction_db: np.ndarray  # (paths, 3), NaN when not computed
    fade_margin_db: np.ndarray  # (paths, 3)
    sigma_m: tuple  # per path, the combined sigma along the samples (None for unprofiled paths)
    model: tuple  # per path, the model record
    draws: int

    def record(self, i: int) -> dict:
        """The ``confidence`` JSON block of path i."""
        def points(arr: np.ndarray) -> dict:
            return {f"p{int(q)}": (None if not np.isfinite(v) else float(v)) for q, v in zip(_QUANTILES, arr[i])}

        p = float(self.p_meets[i])
        return {
            "p_meets_criterion": p,
            "p_line_of_sight": float(self.p_los[i]),
            "standard_error": float(np.sqrt(max(p * (1.0 - p), 0.25 / self.draws) / self.draws)),
            "worst_f1_fraction": points(self.worst_f1_fraction),
            "diffraction_loss_db": points(self.diffraction_db),
            "fade_margin_db": points(self.fade_margin_db),
            "model": self.model[i],
        }


def _dem_sigma(settings: ConfidenceSettings, provenance: dict) -> tuple[float, str]:
    if settings.dem_error_m is not None:
        return float(settings.dem_error_m), "given (--dem-error-m or [confidence] dem_error_m)"
    source = settings.terrain_source or (provenance.get("terrain_source") or {}).get("source")
    if source in DEM_ERROR_M:
        return DEM_ERROR_M[source]
    return FALLBACK_DEM_ERROR_M


def _model_record(settings: ConfidenceSettings, dem: tuple[float, str], k: float, k_worst: float,
                  follow: tuple[bool, bool], tree_allowance_m: float | None, method: str | None) -> dict:
    g50, gsig = k_distribution(k, k_worst)
    corr = settings.dem_error_corr_m
    return {
        "draws": settings.draws,
        "seed": settings.seed,
        "dem_error": {"sigma_m": dem[0], "source": dem[1],
                      "correlation_length_m": corr if np.isfinite(corr) else "whole profile",
                      "correlation": "Gaussian field, exponential correlation exp(-|dx|/L), drawn as AR(1) "
                                     "along the samples (common practice)"},
        "clutter_error": {ClutterKind(code).label: {"sigma_m": float(settings.clutter_error_m[code]),
                                                    "source": CLUTTER_ERROR_M[code][1]}
                          for code in settings.clutter_error_m},
        "clutter_combined": "sqrt(dem sigma^2 + clutter sigma^2), in the same field as the terrain",
        **({"tree_allowance_m": tree_allowance_m} if tree_allowance_m is not None else {}),
        "antenna_error": {"sigma_m": settings.antenna_error_m,
                          "source": "given (--antenna-error-m or [confidence] antenna_error_m)"
                          if settings.antenna_error_m != DEFAULT_ANTENNA_ERROR_M else "default (common practice)",
                          "on_drawn_surface": {"a": follow[0], "b": follow[1]}},
        "k": ({"method": "refractivity gradient G Gaussian, k = 157/(157+G) (ITU-R P.453, from memory); median "
                         "from the design k, the worst-case k as the 99.9 % point",
               "gradient_median_n_per_km": g50, "gradient_sigma_n_per_km": gsig,
               "k_range": [LIMITS["k"].low, LIMITS["k"].high]} if settings.vary_k else {"method": "fixed"}),
        "criterion": "p_meets_criterion: the criterion at its own two k-factors on the drawn terrain and "
                     "antennas; line of sight, diffraction and fade margin at the drawn k",
        "diffraction": (f"{method} at the drawn k on each drawn profile; fade margin = design margin minus the "
                        "change of diffraction loss" if method else "not computed"),
    }


def confidence_for_batch(batch: Any, settings: ConfidenceSettings, *, diffraction: bool = True,
                         tree_allowance_m: float | None = None, skip_too_large: bool = False) -> ConfidenceResult:
    """Monte Carlo confidence of every profiled link of ``batch`` (a :class:`profiler.link_batch.LinkBatch`).

    ``diffraction=False`` skips the diffraction loss and fade margin points
    (screening needs only the probabilities, which do not depend on them).
    A link whose draws x samples exceed :data:`MAX_DRAW_SAMPLES` raises
    InputError, or keeps NaN with ``skip_too_large`` (screening: its cells stay empty).
    """
    settings.validate()
    st = batch.settings
    n_paths = len(batch)
    p_meets = np.full(n_paths, np.nan)
    p_los = np.full(n_paths, np.nan)
    frac_q = np.full((n_paths, 3), np.nan)
    diff_q = np.full((n_paths, 3), np.nan)
    fm_q = np.full((n_paths, 3), np.nan)
    sigmas: list = []
    models: list = []
    dem = _dem_sigma(settings, batch.provenance)
    freq = np.broadcast_to(np.asarray(batch.radio.freq_ghz, dtype=float), (n_paths,))
    method = st.diffraction_method if diffraction else None
    for i in range(n_paths):
        follow = (_follows(batch, "a", i), _follows(batch, "b", i))
        models.append(_model_record(settings, dem, st.k, st.k_worst, follow, tree_allowance_m, method))
        if batch.problems[i] is not None:
            sigmas.append(None)
            continue
        try:
            draws = draws_of(batch, i, settings, dem[0], follow)
        except InputError:
            if not skip_too_large:
                raise
            sigmas.append(None)
            continue
        sigmas.append(draws.sigma_m)
        met = st.criterion.met(draws.frac_design, draws.frac_worst)
        p_meets[i] = float(np.mean(met))
        p_los[i] = float(np.mean(draws.los))
        frac_q[i] = _points(draws.frac_design)
        if diffraction:
            loss = _draw_diffraction(batch, i, draws, float(freq[i]))
            diff_q[i] = _points(loss)
            base_fm = float(np.asarray(batch.design.budget.fade_margin_db)[i])
            base_diff = float(batch.design.diffraction_db[i])
            fm_q[i] = _points(base_fm + base_diff - loss)
    return ConfidenceResult(p_meets, p_los, frac_q, diff_q, fm_q, tuple(sigmas), tuple(models), settings.draws)


def draws_of(batch: Any, i: int, settings: ConfidenceSettings, dem_sigma_m: float, follow: tuple[bool, bool],
             height_offsets_m: tuple[float, float] = (0.0, 0.0)) -> PathDraws:
    """The draws of link ``i`` of ``batch`` (its samples without padding)."""
    prof = batch.profiles
    n = int(prof.n_samples[i])
    if n * settings.draws > MAX_DRAW_SAMPLES:
        raise InputError(
            f"{batch.names[i]}: {settings.draws} draws of {n:,} samples are {n * settings.draws:,} values, more "
            f"than {MAX_DRAW_SAMPLES:,}; give fewer draws ({{parameter}}) or a coarser --spacing-m",
            parameter="draws", value_word="N")
    surface = prof.surface_m[i, :n]
    surface = np.where(np.isnan(surface), 0.0, surface)
    kind = None if prof.clutter_kind is None else np.asarray(prof.clutter_kind[i, :n])
    freq = float(np.broadcast_to(np.asarray(batch.radio.freq_ghz, dtype=float), (len(batch),))[i])
    seed = path_seed(settings.seed, prof.lat_deg[i, 0], prof.lon_deg[i, 0], prof.lat_deg[i, n - 1],
                     prof.lon_deg[i, n - 1])
    st = batch.settings
    return draw_path(prof.distance_m[i, :n], surface, kind, float(prof.length_m[i]),
                     float(batch.antenna_a_amsl_m[i]), float(batch.antenna_b_amsl_m[i]), freq, st.k, st.k_worst,
                     dem_sigma_m, settings, seed, follow_a=follow[0], follow_b=follow[1],
                     height_offsets_m=height_offsets_m)


def _follows(batch: Any, tag: str, i: int) -> bool:
    """True when the antenna at end ``tag`` is given above the ground or a roof (it stands on the drawn
    surface at its end); False for an elevation or a height above the ellipsoid (fixed)."""
    placements = getattr(batch, f"placements_{tag}", None)
    return placements is None or placements[i].reference in ("ground", "roof")


def _points(values: np.ndarray) -> np.ndarray:
    v = np.asarray(values, dtype=float)
    v = v[~np.isnan(v)]
    if v.size == 0:
        return np.full(3, np.nan)
    return np.percentile(v, _QUANTILES)


def _draw_diffraction(batch: Any, i: int, draws: PathDraws, freq_ghz: float) -> np.ndarray:
    """Diffraction loss of each drawn profile by the link's method at the drawn k, dB (one batch of paths)."""
    from .losses.terrain_diffraction import diffraction_loss_db

    from .profile import MAX_SAMPLES_PER_BATCH

    st = batch.settings
    n_draws, n = draws.surface_m.shape
    prof = batch.profiles
    rows = max(1, MAX_SAMPLES_PER_BATCH // n)  # the engine's memory bound per call
    out = np.empty(n_draws)
    for j in range(0, n_draws, rows):
        m = min(rows, n_draws - j)
        interior = np.zeros((m, n), dtype=bool)
        interior[:, 1:-1] = True
        out[j:j + m] = diffraction_loss_db(
            st.diffraction_method, np.ascontiguousarray(np.broadcast_to(prof.distance_m[i, :n], (m, n))),
            draws.surface_m[j:j + m], interior, draws.antenna_a_m[j:j + m], draws.antenna_b_m[j:j + m],
            np.full(m, float(prof.length_m[i])), np.full(m, freq_ghz), draws.k[j:j + m],
            polarisation=st.polarisation, ground=st.ground)
    return out


def p_meets_at(batch: Any, i: int, settings: ConfidenceSettings, offsets_m: np.ndarray) -> np.ndarray:
    """P(meets criterion) of link ``i`` with both antennas raised by each row of ``offsets_m`` (m), same draws."""
    dem = _dem_sigma(settings, batch.provenance)
    follow = (_follows(batch, "a", i), _follows(batch, "b", i))
    out = np.empty(len(offsets_m))
    for j, (da, db) in enumerate(np.asarray(offsets_m, dtype=float).reshape(-1, 2)):
        d = draws_of(batch, i, settings, dem[0], follow, (float(da), float(db)))
        out[j] = float(np.mean(batch.settings.criterion.met(d.frac_design, d.frac_worst)))
    return out


def summary_lines(record: dict) -> tuple[str, str]:
    """Two lines for the terminal summary from a ``confidence`` block: the figures, then the model."""
    m = record["model"]
    q = record["worst_f1_fraction"]
    dem = m["dem_error"]
    corr = dem["correlation_length_m"]
    corr_text = f"{corr:g} m" if isinstance(corr, (int, float)) else str(corr)
    text = (f"P(meets criterion) {100 * record['p_meets_criterion']:.1f} %, P(line of sight) "
            f"{100 * record['p_line_of_sight']:.1f} %; worst F1 5/50/95 % "
            f"{_fmt(q['p5'])}/{_fmt(q['p50'])}/{_fmt(q['p95'])}")
    fm = record["fade_margin_db"]
    if fm["p50"] is not None:
        text += f"; fade margin 5/50/95 % {_fmt(fm['p5'], 1)}/{_fmt(fm['p50'], 1)}/{_fmt(fm['p95'], 1)} dB"
    model = (f"{m['draws']} draws, seed {m['seed']}; DEM sigma {dem['sigma_m']:.2g} m "
             f"({dem['source'].split(' ')[0].rstrip(':')}), correlation {corr_text}, antenna sigma "
             f"{m['antenna_error']['sigma_m']:g} m, k {'fixed' if m['k']['method'] == 'fixed' else 'drawn'}")
    return text, model


def _fmt(v: Any, digits: int = 2) -> str:
    return "n/a" if v is None else f"{v:+.{digits}f}"


#: Option names of the confidence settings and the word each takes (the CLI's flags, link files' keys).
OPTIONS = {"draws": "N", "seed": "N", "dem_error_m": "SIGMA", "dem_error_corr_m": "M", "antenna_error_m": "M"}


def _parsed(opts: dict, name: str) -> Any:
    """The option ``name`` of ``opts`` as a number (None when absent); InputError naming the option."""
    value = opts.get(name)
    if value is None:
        return None
    word = OPTIONS[name]
    if name in ("draws", "seed"):
        text = str(value).strip()
        if isinstance(value, bool) or not text.lstrip("+").isdigit():
            raise InputError(f"{{parameter}} must be a whole number, got {value!r}", parameter=name,
                             value_word=word)
        number: Any = int(text)
        if name == "seed":
            return number
    elif name == "dem_error_corr_m" and str(value).strip().lower() in ("inf", "infinity", "profile"):
        return np.inf
    else:
        try:
            number = float(str(value).strip())
        except ValueError:
            raise InputError(f"{{parameter}} must be a number, got {value!r}", parameter=name,
                             value_word=word) from None
    limit = LIMITS[name]
    if not np.isfinite(number) or not bool(limit.holds(np.float64(number))):
        extra = f" (fewer than {MIN_DRAWS} draws leave the 5/95 % points on fewer than 5 draws)" \
            if name == "draws" else ""
        raise InputError(f"{{parameter}} must lie {limit.describe()}, got {value}{extra}", parameter=name,
                         value_word=word)
    return number


def resolve_confidence(opts: dict, always: bool = False) -> ConfidenceSettings | None:
    """Confidence settings from options (``draws``, ``seed``, ``dem_error_m``, ``dem_error_corr_m``,
    ``antenna_error_m``); None when none is given (no confidence asked) unless ``always``."""
    values = {name: _parsed(opts, name) for name in OPTIONS}
    given = {k: v for k, v in values.items() if v is not None}
    if not given and not always:
        return None
    return ConfidenceSettings(**given).validate()


def confidence_level(value: Any) -> float:
    """A confidence (probability) in (0, 1) for the height solver; InputError naming ``--confidence``."""
    try:
        number = float(str(value).strip())
    except ValueError:
        raise InputError(f"{{parameter}} must be a probability such as 0.9, got {value!r}",
                         parameter="confidence", value_word="P") from None
    limit = LIMITS["confidence"]
    if not np.isfinite(number) or not bool(limit.holds(np.float64(number))):
        raise InputError(f"{{parameter}} must lie {limit.describe()} (a probability, e.g. 0.9), got {value}",
                         parameter="confidence", value_word="P")
    return number
