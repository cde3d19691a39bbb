"""Wave overtopping, run-up and freeboard formulas.

Formulas only: no I/O, no geometry. Every function broadcasts numpy-style over
its array inputs and returns a float for all-scalar input, else a float ndarray.

Units: metres, seconds, degrees. Discharge ``q`` is in m³/s per metre of crest
(callers convert from l/s per m at the edge). ``G = 9.81`` m/s².

Sources: EurOtop (2018), *Manual on wave overtopping of sea defences and related
structures*, 2nd edition, chapter 5 (equation and table numbers quoted from
memory, see each docstring); TAW (2002), *Technical report wave run-up and
wave overtopping at dikes*, for the predecessor coefficient sets; 44 CFR
65.10(b)(1) for the fixed freeboards.
NaN inputs propagate to NaN outputs; other invalid inputs raise
:class:`~trajectory.errors.ParameterError`.
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Mapping
from dataclasses import dataclass
from types import MappingProxyType

import numpy as np
from numpy.typing import ArrayLike, NDArray

from trajectory.errors import ParameterError, TrajectoryError

__all__ = [
    "COEFFICIENTS",
    "FOOT",
    "G",
    "ROUGHNESS",
    "ApproachCoefficients",
    "FixedFreeboard",
    "UnknownRevetmentError",
    "breaker_parameter",
    "freeboard_44cfr6510",
    "freeboard_for_discharge",
    "gamma_berm",
    "gamma_beta_overtopping",
    "gamma_beta_runup",
    "gamma_f_surging",
    "overtopping_discharge",
    "roughness_factor",
    "runup_2pct",
    "tm10_from_tp",
    "wavelength_deep",
]

G = 9.81
"""Gravitational acceleration used throughout, m/s²."""

FOOT = 0.3048
"""International foot in metres (exact by definition)."""

FloatOrArray = float | NDArray[np.float64]


# --------------------------------------------------------------------------- #
# coefficient table
# --------------------------------------------------------------------------- #
@dataclass(frozen=True)
class ApproachCoefficients:
    """Empirical coefficients of one EurOtop (2018) approach for smooth dike slopes.

    Overtopping, EurOtop (2018) Eq. 5.10/5.11 (mean value) and 5.12/5.13 (design
    or assessment), numbers from memory::

        q / sqrt(g Hm0³) = a / sqrt(tanα) · γb ξ · exp(-(b Rc / (ξ Hm0 γb γf γβ γv))^c)
        with maximum       d · exp(-(e Rc / (Hm0 γf γβ γ*))^c)

    Run-up, EurOtop (2018) Eq. 5.1 (mean value) and 5.2 (design), from memory::

        Ru2% / Hm0 = r1 γb γf γβ ξ
        with maximum r2 γf,surging γβ (sa - sb / sqrt(γb ξ))

    TAW (2002) Eq. 22/23 (overtopping, exponent c = 1) and Eq. 3 (run-up)
    have the same shape (equation numbers from memory).
    """

    breaking_a: float
    breaking_b: float
    nonbreaking_d: float
    nonbreaking_e: float
    runup_r1: float
    runup_r2: float
    exponent_c: float = 1.3
    surging_a: float = 4.0
    surging_b: float = 1.5


COEFFICIENTS: Mapping[str, ApproachCoefficients] = MappingProxyType(
    {
        # EurOtop (2018) mean-value approach, Eq. 5.10/5.11 and 5.1 (from memory).
        "mean": ApproachCoefficients(
            breaking_a=0.023,
            breaking_b=2.7,
            nonbreaking_d=0.09,
            nonbreaking_e=1.5,
            runup_r1=1.65,
            runup_r2=1.0,
        ),
        # EurOtop (2018) design-or-assessment approach, Eq. 5.12/5.13 and 5.2
        # (mean + about one standard deviation; from memory).
        "design": ApproachCoefficients(
            breaking_a=0.026,
            breaking_b=2.5,
            nonbreaking_d=0.1035,
            nonbreaking_e=1.35,
            runup_r1=1.75,
            runup_r2=1.07,
        ),
        # TAW (2002) Technical report wave run-up and wave overtopping at dikes,
        # Eq. 22/23 and Eq. 3, probabilistic (mean) coefficients (from memory).
        "taw2002_mean": ApproachCoefficients(
            breaking_a=0.067,
            breaking_b=4.75,
            nonbreaking_d=0.2,
            nonbreaking_e=2.6,
            runup_r1=1.65,
            runup_r2=1.0,
            exponent_c=1.0,
        ),
        # TAW (2002) deterministic (design) coefficients, Eq. 24/25 and Eq. 3
        # with 1.75 and 4.3 - 1.6 / sqrt(ξ) (from memory).
        "taw2002_design": ApproachCoefficients(
            breaking_a=0.067,
            breaking_b=4.3,
            nonbreaking_d=0.2,
            nonbreaking_e=2.3,
            runup_r1=1.75,
            runup_r2=1.0,
            exponent_c=1.0,
            surging_a=4.3,
            surging_b=1.6,
        ),
    }
)


def _coefficients(approach: str) -> ApproachCoefficients:
    try:
        return COEFFICIENTS[approach]
    except (KeyError, TypeError):
        valid = ", ".join(repr(k) for k in COEFFICIENTS)
        raise ParameterError(
            f"unknown overtopping approach {approach!r}; choose one of {valid}"
        ) from None


# --------------------------------------------------------------------------- #
# small helpers
# --------------------------------------------------------------------------- #
def _arr(x: ArrayLike) -> NDArray[np.float64]:
    return np.asarray(x, dtype=float)


def _out(x: NDArray[np.float64]) -> FloatOrArray:
    x = np.asarray(x, dtype=float)
    return float(x) if x.ndim == 0 else x


def _require(name: str, x: NDArray[np.float64], *, lower: float, strict: bool,
             upper: float | None = None) -> None:
    """Raise ParameterError when any non-NaN value of *x* is out of range."""
    bad = (x <= lower) if strict else (x < lower)
    if upper is not None:
        bad = bad | (x > upper)
    if np.any(bad):
        n = int(np.count_nonzero(bad))
        rng_txt = f"{'>' if strict else '>='} {lower:g}"
        if upper is not None:
            rng_txt += f" and <= {upper:g}"
        first = float(x[bad].flat[0])
        raise ParameterError(
            f"{name} must be {rng_txt}; {n} value(s) are not (first: {first:g})"
        )


def _check_gammas(**gammas: ArrayLike) -> dict[str, NDArray[np.float64]]:
    out = {}
    for name, value in gammas.items():
        a = _arr(value)
        _require(name, a, lower=0.0, strict=True, upper=1.0)
        out[name] = a
    return out


# --------------------------------------------------------------------------- #
# wave parameters
# --------------------------------------------------------------------------- #
def wavelength_deep(tm10: ArrayLike) -> FloatOrArray:
    """Deep-water wave length from the spectral period, L_m-1,0 = g T² / (2π).

    EurOtop (2018) Eq. 1.1 (definition of the deep-water wave length; equation
    number from memory).

    Parameters
    ----------
    tm10 : array_like
        Spectral wave period Tm-1,0 at the toe, s (> 0).

    Returns
    -------
    float or ndarray
        L_m-1,0, m.
    """
    t = _arr(tm10)
    _require("tm10", t, lower=0.0, strict=True)
    return _out(G * t**2 / (2.0 * math.pi))


def breaker_parameter(tan_alpha: ArrayLike, hm0: ArrayLike, tm10: ArrayLike) -> FloatOrArray:
    """Breaker parameter ξm-1,0 = tanα / sqrt(Hm0 / L_m-1,0).

    EurOtop (2018) Eq. 1.2 (surf-similarity or Iribarren number; equation
    number from memory). ``hm0 == 0`` gives ``inf``.

    Parameters
    ----------
    tan_alpha : array_like
        Slope tangent tanα (> 0).
    hm0 : array_like
        Spectral significant wave height at the toe, m (>= 0).
    tm10 : array_like
        Spectral period Tm-1,0, s (> 0).
    """
    ta, h, t = _arr(tan_alpha), _arr(hm0), _arr(tm10)
    _require("tan_alpha", ta, lower=0.0, strict=True)
    _require("hm0", h, lower=0.0, strict=False)
    lm = _arr(wavelength_deep(t))
    with np.errstate(divide="ignore"):
        return _out(ta / np.sqrt(h / lm))


def tm10_from_tp(tp: ArrayLike) -> FloatOrArray:
    """Spectral period from the peak period, Tm-1,0 = Tp / 1.1.

    EurOtop (2018) section 1.4 relation Tp ≈ 1.1 Tm-1,0 for single-peaked
    spectra (common practice; from memory).
    """
    t = _arr(tp)
    _require("tp", t, lower=0.0, strict=True)
    return _out(t / 1.1)


# --------------------------------------------------------------------------- #
# overtopping
# --------------------------------------------------------------------------- #
def overtopping_discharge(
    rc: ArrayLike,
    hm0: ArrayLike,
    tm10: ArrayLike,
    tan_alpha: ArrayLike,
    *,
    gamma_b: ArrayLike = 1.0,
    gamma_f: ArrayLike = 1.0,
    gamma_beta: ArrayLike = 1.0,
    gamma_v: ArrayLike = 1.0,
    gamma_star: ArrayLike = 1.0,
    approach: str = "design",
) -> FloatOrArray:
    """Mean wave overtopping discharge on a dike slope.

    EurOtop (2018) Eq. 5.10 with maximum Eq. 5.11 (``approach="mean"``) or
    Eq. 5.12 with maximum Eq. 5.13 (``approach="design"``; equation numbers
    from memory)::

        q / sqrt(g Hm0³) = a / sqrt(tanα) γb ξ exp(-(b Rc / (ξ Hm0 γb γf γβ γv))^1.3)
        with maximum       d exp(-(e Rc / (Hm0 γf γβ γ*))^1.3)

    i.e. ``q = min(breaking, non-breaking)``; see :data:`COEFFICIENTS`.
    The formula holds for positive freeboard: ``rc < 0`` is clipped to 0.
    Calibrated for 0.5 ≲ ξ ≲ 5 (beyond, EurOtop gives separate formulas for
    very shallow foreshores, not implemented here).

    Parameters
    ----------
    rc : array_like
        Crest freeboard above still water, m.
    hm0, tm10 : array_like
        Wave height (m, >= 0; 0 gives q = 0) and period Tm-1,0 (s, > 0) at the toe.
    tan_alpha : array_like
        Slope tangent (> 0); the characteristic slope for composite profiles.
    gamma_b, gamma_f, gamma_beta, gamma_v, gamma_star : array_like
        Influence factors for berm, roughness, obliquity, wall on slope and
        storm wall (EurOtop 2018 section 5.4), each in (0, 1].
    approach : {"design", "mean", "taw2002_design", "taw2002_mean"}
        Coefficient set (:data:`COEFFICIENTS`); the TAW (2002) sets are its
        predecessor formulas with exponent 1, for comparison.

    Returns
    -------
    float or ndarray
        q, m³/s per m.
    """
    co = _coefficients(approach)
    rc_a, h, t, ta = _arr(rc), _arr(hm0), _arr(tm10), _arr(tan_alpha)
    _require("hm0", h, lower=0.0, strict=False)
    _require("tm10", t, lower=0.0, strict=True)
    _require("tan_alpha", ta, lower=0.0, strict=True)
    gm = _check_gammas(gamma_b=gamma_b, gamma_f=gamma_f, gamma_beta=gamma_beta,
                       gamma_v=gamma_v, gamma_star=gamma_star)
    rc_a = np.maximum(rc_a, 0.0)
    waves = h > 0.0
    hs = np.where(waves, h, 1.0)  # placeholder height where there are no waves
    xi = ta / np.sqrt(hs / (G * t**2 / (2.0 * math.pi)))
    scale = np.sqrt(G * hs**3)
    c = co.exponent_c
    brk = (co.breaking_a / np.sqrt(ta) * gm["gamma_b"] * xi
           * np.exp(-(co.breaking_b * rc_a
                      / (xi * hs * gm["gamma_b"] * gm["gamma_f"] * gm["gamma_beta"]
                         * gm["gamma_v"])) ** c))
    nbr = co.nonbreaking_d * np.exp(
        -(co.nonbreaking_e * rc_a / (hs * gm["gamma_f"] * gm["gamma_beta"]
                                     * gm["gamma_star"])) ** c)
    q = np.where(waves, np.minimum(brk, nbr) * scale, 0.0)
    return _out(q)


def freeboard_for_discharge(
    q_allow: ArrayLike,
    hm0: ArrayLike,
    tm10: ArrayLike,
    tan_alpha: ArrayLike,
    *,
    gamma_b: ArrayLike = 1.0,
    gamma_f: ArrayLike = 1.0,
    gamma_beta: ArrayLike = 1.0,
    gamma_v: ArrayLike = 1.0,
    gamma_star: ArrayLike = 1.0,
    approach: str = "design",
) -> FloatOrArray:
    """Freeboard Rc at which the mean overtopping equals ``q_allow``.

    Closed-form inverse of :func:`overtopping_discharge` (EurOtop 2018
    Eq. 5.10-5.13, from memory). Each branch inverts as::

        Rc_breaking     = ξ Hm0 γb γf γβ γv / b · ln(q0_breaking / q)^(1/1.3)
        Rc_non-breaking = Hm0 γf γβ γ* / e     · ln(q0_non-breaking / q)^(1/1.3)

    with ``q0`` the branch value at Rc = 0. As q is the minimum of two
    decreasing functions of Rc, the required freeboard is the *minimum* of the
    two branch freeboards. Each branch is clipped at 0 when ``q_allow``
    exceeds its Rc = 0 value; ``hm0 == 0`` gives 0.

    Parameters
    ----------
    q_allow : array_like
        Allowed mean discharge, m³/s per m (> 0).
    hm0, tm10, tan_alpha, gamma_b, gamma_f, gamma_beta, gamma_v, gamma_star, approach
        As in :func:`overtopping_discharge`.

    Returns
    -------
    float or ndarray
        Rc, m (>= 0).
    """
    co = _coefficients(approach)
    qa, h, t, ta = _arr(q_allow), _arr(hm0), _arr(tm10), _arr(tan_alpha)
    _require("q_allow", qa, lower=0.0, strict=True)
    _require("hm0", h, lower=0.0, strict=False)
    _require("tm10", t, lower=0.0, strict=True)
    _require("tan_alpha", ta, lower=0.0, strict=True)
    gm = _check_gammas(gamma_b=gamma_b, gamma_f=gamma_f, gamma_beta=gamma_beta,
                       gamma_v=gamma_v, gamma_star=gamma_star)
    waves = h > 0.0
    hs = np.where(waves, h, 1.0)
    xi = ta / np.sqrt(hs / (G * t**2 / (2.0 * math.pi)))
    log_scale = 0.5 * np.log(G * hs**3)
    inv_c = 1.0 / co.exponent_c
    log_q = np.log(qa)  # q_allow > 0 checked; inf allowed
    with np.errstate(invalid="ignore"):
        # logs kept separate so that tiny q or large Hm0 cannot overflow
        ln_b = (np.log(co.breaking_a) - 0.5 * np.log(ta) + np.log(gm["gamma_b"] * xi)
                + log_scale - log_q)
        ln_n = np.log(co.nonbreaking_d) + log_scale - log_q
    ln_b = np.maximum(ln_b, 0.0)
    ln_n = np.maximum(ln_n, 0.0)
    rc_b = (xi * hs * gm["gamma_b"] * gm["gamma_f"] * gm["gamma_beta"] * gm["gamma_v"]
            / co.breaking_b) * ln_b**inv_c
    rc_n = (hs * gm["gamma_f"] * gm["gamma_beta"] * gm["gamma_star"]
            / co.nonbreaking_e) * ln_n**inv_c
    rc = np.where(waves, np.minimum(rc_b, rc_n), 0.0)
    return _out(rc)


# --------------------------------------------------------------------------- #
# run-up
# --------------------------------------------------------------------------- #
def gamma_f_surging(gamma_f: ArrayLike, xi: ArrayLike) -> FloatOrArray:
    """Roughness factor for surging waves on rough slopes.

    EurOtop (2018) Eq. 5.4 (from memory): ``γf,surging = γf`` for ξ ≤ 1.8,
    ``γf + (ξ - 1.8)(1 - γf) / 8.2`` for ξ > 1.8, reaching 1 at ξ = 10 and
    held at 1 for ξ ≥ 10.
    """
    gf, x = _arr(gamma_f), _arr(xi)
    _require("gamma_f", gf, lower=0.0, strict=True, upper=1.0)
    ramp = gf + (np.clip(x, 1.8, 10.0) - 1.8) * (1.0 - gf) / 8.2
    return _out(np.minimum(ramp, 1.0))


def runup_2pct(
    hm0: ArrayLike,
    tm10: ArrayLike,
    tan_alpha: ArrayLike,
    *,
    gamma_b: ArrayLike = 1.0,
    gamma_f: ArrayLike = 1.0,
    gamma_beta: ArrayLike = 1.0,
    approach: str = "design",
) -> FloatOrArray:
    """Wave run-up height exceeded by 2 % of the incident waves, Ru2%.

    EurOtop (2018) Eq. 5.1 (``approach="mean"``) and Eq. 5.2 (``"design"``;
    equation numbers from memory)::

        Ru2% / Hm0 = r1 γb γf γβ ξ
        with maximum r2 γf,surging γβ (4 - 1.5 / sqrt(γb ξ))

    with (r1, r2) = (1.65, 1.0) mean and (1.75, 1.07) design, and γf,surging
    from :func:`gamma_f_surging`. Not included: the extra cap EurOtop gives for
    permeable cores. The surging branch is floored at 0 for ξ → 0.

    Returns
    -------
    float or ndarray
        Ru2%, m above still water.
    """
    co = _coefficients(approach)
    h, t, ta = _arr(hm0), _arr(tm10), _arr(tan_alpha)
    _require("hm0", h, lower=0.0, strict=False)
    _require("tm10", t, lower=0.0, strict=True)
    _require("tan_alpha", ta, lower=0.0, strict=True)
    gm = _check_gammas(gamma_b=gamma_b, gamma_f=gamma_f, gamma_beta=gamma_beta)
    waves = h > 0.0
    hs = np.where(waves, h, 1.0)
    xi = ta / np.sqrt(hs / (G * t**2 / (2.0 * math.pi)))
    gb, gf, gbeta = gm["gamma_b"], gm["gamma_f"], gm["gamma_beta"]
    brk = co.runup_r1 * gb * gf * gbeta * xi
    srg = (co.runup_r2 * _arr(gamma_f_surging(gf, xi)) * gbeta
           * np.maximum(co.surging_a - co.surging_b / np.sqrt(gb * xi), 0.0))
    return _out(np.where(waves, np.minimum(brk, srg) * hs, 0.0))


# --------------------------------------------------------------------------- #
# influence factors
# --------------------------------------------------------------------------- #
def _gamma_beta(beta_deg: ArrayLike, slope: float) -> FloatOrArray:
    b = np.abs(_arr(beta_deg))
    _require("|beta_deg|", b, lower=0.0, strict=False, upper=90.0)
    return _out(1.0 - slope * np.minimum(b, 80.0))


def gamma_beta_overtopping(beta_deg: ArrayLike) -> FloatOrArray:
    """Oblique-wave factor for overtopping, γβ = 1 - 0.0033 |β|.

    EurOtop (2018) Eq. 5.29 (from memory), for 0 ≤ |β| ≤ 80°; for
    80° < |β| ≤ 90° the 80° value (0.736) is used. β is the angle between the
    wave direction and the dike normal, degrees; |β| > 90° raises
    :class:`~trajectory.errors.ParameterError` (waves travelling away).
    """
    return _gamma_beta(beta_deg, 0.0033)


def gamma_beta_runup(beta_deg: ArrayLike) -> FloatOrArray:
    """Oblique-wave factor for run-up, γβ = 1 - 0.0022 |β|.

    EurOtop (2018) Eq. 5.28 (from memory), same range and 80° cap (0.824) as
    :func:`gamma_beta_overtopping`.
    """
    return _gamma_beta(beta_deg, 0.0022)


#: lower bound of the berm influence factor gamma_b (EurOtop 2018, from memory)
GAMMA_B_MIN = 0.6


def berm_depth_factor(berm_depth: ArrayLike, hm0: ArrayLike, *,
                      runup: ArrayLike | None = None) -> NDArray[np.float64]:
    """Depth term rdb of the berm factor, EurOtop (2018) (from memory).

    ``rdb = 0.5 - 0.5 cos(pi db / x)`` for ``|db| < x``, else 1 (no influence),
    with ``x = 2 Hm0`` for a berm at or below still water (``db >= 0``) and
    ``x = Ru2%`` above it (``2 Hm0`` when ``runup`` is not given). Hm0 = 0 gives 1.
    """
    db, h = _arr(berm_depth), _arr(hm0)
    x = np.where(db > 0.0, 2.0 * h, 2.0 * h if runup is None else _arr(runup))
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.abs(db) / x
        return np.where(ratio < 1.0, 0.5 - 0.5 * np.cos(math.pi * ratio), 1.0)


def gamma_berm(
    berm_width: ArrayLike,
    berm_depth: ArrayLike,
    hm0: ArrayLike,
    tm10: ArrayLike,
    tan_alpha_lower: ArrayLike,
    tan_alpha_upper: ArrayLike,
    *,
    runup: ArrayLike | None = None,
) -> FloatOrArray:
    """Berm influence factor γb = 1 - rB (1 - rdb), bounded 0.6 ≤ γb ≤ 1.0.

    EurOtop (2018) Eq. 5.33-5.36 (from memory):

    - ``rB = B / L_berm``, with ``L_berm = Hm0 / tanα_lower + B + Hm0 / tanα_upper``
      the horizontal length between the slope points 1.0 Hm0 below and
      1.0 Hm0 above the berm;
    - ``rdb = 0.5 - 0.5 cos(π db / x)`` for ``|db| < x``, else 1 (no influence),
      with ``x = Ru2%`` for a berm above still water (``2 Hm0`` if ``runup`` is
      not given) and ``x = 2 Hm0`` for a berm at or below still water.

    Sign convention: ``berm_depth`` (db) is the depth of the middle of the berm
    *below* still water, positive for a submerged berm and negative for a berm
    above still water. For overtopping of a crest below Ru2%, EurOtop suggests
    using Rc for x; pass it as ``runup``.

    Parameters
    ----------
    berm_width : array_like
        Horizontal berm width B, m (>= 0).
    berm_depth : array_like
        db, m, see above.
    hm0 : array_like
        Wave height at the toe, m (>= 0; 0 gives γb = 1).
    tm10 : array_like
        Spectral period, s (> 0); validated only, the factor needs no period.
    tan_alpha_lower, tan_alpha_upper : array_like
        Tangents of the slope below and above the berm (> 0).
    runup : array_like, optional
        Ru2% (or Rc), m, used as x for a berm above still water.
    """
    bw, db, h, t = _arr(berm_width), _arr(berm_depth), _arr(hm0), _arr(tm10)
    tl, tu = _arr(tan_alpha_lower), _arr(tan_alpha_upper)
    _require("berm_width", bw, lower=0.0, strict=False)
    _require("hm0", h, lower=0.0, strict=False)
    _require("tm10", t, lower=0.0, strict=True)
    _require("tan_alpha_lower", tl, lower=0.0, strict=True)
    _require("tan_alpha_upper", tu, lower=0.0, strict=True)
    if runup is not None:
        _require("runup", _arr(runup), lower=0.0, strict=False)
    l_berm = h / tl + bw + h / tu
    with np.errstate(divide="ignore", invalid="ignore"):
        r_b = np.where(l_berm > 0.0, bw / l_berm, 0.0)
    r_db = berm_depth_factor(db, h, runup=runup)
    gb = 1.0 - r_b * (1.0 - r_db)
    gb = np.where(h > 0.0, np.clip(gb, GAMMA_B_MIN, 1.0), 1.0)
    return _out(gb)


# --------------------------------------------------------------------------- #
# roughness registry
# --------------------------------------------------------------------------- #
class UnknownRevetmentError(TrajectoryError, KeyError):
    """A revetment name is not in :data:`ROUGHNESS`."""

    def __init__(self, name: str, valid: list[str]):
        self.name = name
        self.valid = list(valid)
        self.message = (
            f"unknown revetment type {name!r}; use a number in (0, 1] or one of: "
            + ", ".join(self.valid)
        )
        super().__init__(self.message)

    def __str__(self) -> str:  # KeyError would show the repr of the message
        return self.message


class _RoughnessRegistry(Mapping[str, float]):
    """Read-only name → γf table whose lookups fail with the list of names."""

    def __init__(self, table: dict[str, float]):
        self._table = dict(table)

    def __getitem__(self, key: str) -> float:
        try:
            return self._table[key]
        except KeyError:
            raise UnknownRevetmentError(key, sorted(self._table)) from None

    def __iter__(self) -> Iterator[str]:
        return iter(self._table)

    def __len__(self) -> int:
        return len(self._table)

    def __repr__(self) -> str:
        return f"ROUGHNESS({self._table!r})"


ROUGHNESS: Mapping[str, float] = _RoughnessRegistry(
    {
        # EurOtop (2018) Table 5.2, values from memory.
        "smooth_concrete": 1.0,
        "asphalt": 1.0,
        "closed_concrete_blocks": 1.0,
        "grass": 1.0,
        "basalt": 0.90,
        "small_blocks_over_1_25_of_surface": 0.85,
        "small_blocks_over_1_9_of_surface": 0.80,
        "ribs_optimum": 0.75,
        "rock_one_layer_impermeable_core": 0.60,
        "rock_two_layers_impermeable_core": 0.55,
        "rock_one_layer_permeable_core": 0.45,
        "rock_two_layers_permeable_core": 0.40,
    }
)
"""Roughness factors γf by revetment type (EurOtop 2018 Table 5.2, from memory)."""


def roughness_factor(name: str | float) -> float:
    """Roughness factor γf for a revetment name or a number.

    Names are looked up in :data:`ROUGHNESS` (EurOtop 2018 Table 5.2, from
    memory) after lower-casing and turning spaces and hyphens into
    underscores. A number, or a string holding one, is returned as given if
    it lies in (0, 1].

    Raises
    ------
    UnknownRevetmentError
        (a ``KeyError``) for an unknown name, listing the valid names.
    ParameterError
        for a number outside (0, 1].
    """
    if isinstance(name, str):
        text = name.strip()
        try:
            value = float(text)
        except ValueError:
            key = text.lower().replace("-", "_").replace(" ", "_")
            return ROUGHNESS[key]
    else:
        value = float(name)
    if not 0.0 < value <= 1.0:
        raise ParameterError(f"roughness factor must be in (0, 1]; got {value:g}")
    return value


# --------------------------------------------------------------------------- #
# fixed freeboard, 44 CFR 65.10
# --------------------------------------------------------------------------- #
@dataclass(frozen=True)
class FixedFreeboard:
    """A regulatory freeboard margin.

    Attributes
    ----------
    kind : str
        "riverine" or "coastal".
    margin_m, margin_ft : float or ndarray
        The margin in metres and in feet (1 ft = 0.3048 m exactly).
    description : str
        What the margin is added to, and which clause applies.
    """

    kind: str
    margin_m: FloatOrArray
    margin_ft: FloatOrArray
    description: str


def freeboard_44cfr6510(
    kind: str,
    *,
    near_structure: bool | ArrayLike = False,
    upstream_end: bool | float | ArrayLike = False,
) -> FixedFreeboard:
    """Minimum levee freeboard of 44 CFR 65.10(b)(1).

    Riverine, 65.10(b)(1)(i): 3 ft above the base-flood water surface; 4 ft
    within 100 ft on either side of structures (such as bridges) riding within
    the levee or wherever the flow is constricted (``near_structure``); 3.5 ft
    at the upstream end of the levee, tapering to not less than 3 ft at the
    downstream end (``upstream_end``). Both extras are stated "above the
    minimum", so where both apply the larger governs (4 ft), not their sum.
    The reduced 2 ft freeboard of 65.10(b)(1)(ii) is not offered.

    Coastal, 65.10(b)(1)(iii): 1 ft above the height of the one-percent wave
    or the maximum wave run-up, whichever is greater; the returned margin is
    that 1 ft, to be added by the caller to the greater of the two.

    Parameters
    ----------
    kind : {"riverine", "coastal"}
    near_structure : bool or array_like of bool
        Riverine only: within 100 ft of a structure or a flow constriction.
    upstream_end : bool, float or array_like
        Riverine only: share of the 0.5 ft upstream-end allowance, in [0, 1].
        ``True`` (1) at the upstream end, ``False`` (0) at the downstream end;
        for a linear taper pass ``1 - s`` with s the fraction of levee length
        from the upstream end (the taper shape is the caller's choice).

    Returns
    -------
    FixedFreeboard
    """
    key = str(kind).strip().lower()
    if key == "coastal":
        if np.any(_arr(near_structure)) or np.any(_arr(upstream_end)):
            raise ParameterError(
                "near_structure and upstream_end apply to riverine levees only "
                "(44 CFR 65.10(b)(1)(i)); leave them unset for kind='coastal'"
            )
        return FixedFreeboard(
            kind="coastal",
            margin_m=1.0 * FOOT,
            margin_ft=1.0,
            description=(
                "44 CFR 65.10(b)(1)(iii): 1 ft above the greater of the one-percent "
                "wave height and the maximum wave run-up at the 100-year stillwater level"
            ),
        )
    if key != "riverine":
        raise ParameterError(f"kind must be 'riverine' or 'coastal'; got {kind!r}")
    share = _arr(upstream_end)
    _require("upstream_end", share, lower=0.0, strict=False, upper=1.0)
    near = np.asarray(near_structure, dtype=bool)
    ft = np.maximum(3.0 + np.where(near, 1.0, 0.0), 3.0 + 0.5 * share)
    return FixedFreeboard(
        kind="riverine",
        margin_m=_out(ft * FOOT),
        margin_ft=_out(ft),
        description=(
            "44 CFR 65.10(b)(1)(i): above the base-flood water surface; 3 ft minimum, "
            "4 ft within 100 ft of structures or constrictions, 3.5 ft at the "
            "upstream end tapering to 3 ft downstream"
        ),
    )
