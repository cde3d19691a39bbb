"""Piping (backward erosion under a levee): published rules only, no I/O, no profiles.

Three rules compare the seepage length L (m, entry to exit) with the head
difference dH (m) across the levee, all vectorised over stations:

- Bligh (1910): L >= C_B dH, with Bligh's creep ratio C_B of the subsoil;
- Lane (1935): L_v + L_h / 3 >= C_L dH, with Lane's weighted creep ratio C_L;
  the vertical path L_v (cut-off walls, sheet piles) counts fully, the
  horizontal path L_h one third;
- Sellmeijer's revised rule (Sellmeijer, J.B., Lopez de la Cruz, J., van Beek,
  V.M., Knoeff, J.G., 2011, "Fine-tuning of the piping model through
  small-scale, medium-scale and IJkdijk experiments", European Journal of
  Environmental and Civil Engineering 15(8)): the critical head
  H_c = F_res F_scale F_geo L with

  F_res   = (gamma_p' / gamma_w) eta tan(theta),
  F_scale = d70m / (kappa L)^(1/3) (d70 / d70m)^0.4,
  F_geo   = 0.91 (D / L)^(0.28 / ((D / L)^2.8 - 1) + 0.04),

  kappa = nu k / g the intrinsic permeability. The head acting on the sand is
  reduced by 0.3 d for a blanket of thickness d over the aquifer (dH - 0.3 d,
  Dutch practice for the Sellmeijer check, TAW 1999 Technical Report on Sand
  Boils (Piping); from memory).

No safety or model factor is applied: the rules give critical values for
screening; a code's partial factors are the engineer's to add.
"""

from __future__ import annotations

import math

import numpy as np

# ---------------------------------------------------------------- creep ratios
#: Bligh's creep ratio C_B by subsoil class. Bligh (1910), "Dams, barrages and weirs on
#: porous foundations", Engineering News 64; the table as quoted in the Dutch guide
#: TAW (1999) Technical Report on Sand Boils (Piping) and in textbooks (from memory).
#: The classes Bligh did not distinguish are absent (the rule is not applied there).
BLIGH_CREEP: dict[str, float] = {
    "silt": 18.0,          # very fine sand or silt (light sand and mud)
    "fine_sand": 15.0,     # fine (micaceous) sand
    "coarse_sand": 12.0,   # coarse-grained sand
    "gravel_sand": 9.0,    # gravel and sand
}
#: Lane's weighted creep ratio C_L by subsoil class. Lane, E.W. (1935), "Security from
#: under-seepage: masonry dams on earth foundations", Transactions ASCE 100, Table 4
#: (from memory; the sand and gravel rows; clays are no piping subsoil and are left out).
LANE_CREEP: dict[str, float] = {
    "silt": 8.5,           # very fine sand or silt
    "fine_sand": 7.0,
    "medium_sand": 6.0,
    "coarse_sand": 5.0,
    "fine_gravel": 4.0,
    "medium_gravel": 3.5,
    "coarse_gravel": 3.0,  # coarse gravel including cobbles
}
#: every subsoil class either table knows (the conditions column's values)
SUBSOIL_CLASSES: tuple[str, ...] = tuple(dict.fromkeys([*BLIGH_CREEP, *LANE_CREEP]))

# ------------------------------------------------------ Sellmeijer (2011) constants
#: reference grain size d70m (m), Sellmeijer et al. (2011)
D70_REF = 2.08e-4
#: White's drag factor eta (-), Sellmeijer et al. (2011)
WHITE_ETA = 0.25
#: bedding angle theta (degrees), Sellmeijer et al. (2011)
BEDDING_ANGLE = 37.0
#: submerged unit weight of the sand grains gamma_p' (kN/m3): 26.5 - 10 (common practice)
GRAIN_WEIGHT_SUBMERGED = 16.5
#: unit weight of water gamma_w (kN/m3), as in the Sellmeijer (2011) calibration
WATER_WEIGHT = 10.0
#: kinematic viscosity of water nu (m2/s) at about 10 degrees C (common practice)
VISCOSITY = 1.33e-6
#: gravitational acceleration g (m/s2)
GRAVITY = 9.81
#: share of the blanket thickness d taken off the head (dH - 0.3 d), Dutch practice
BLANKET_REDUCTION = 0.3


def bligh_required_length(dh: np.ndarray, creep: np.ndarray) -> np.ndarray:
    """Seepage length Bligh (1910) requires: L = C_B dH (m); 0 where dH <= 0."""
    return np.asarray(creep, float) * np.maximum(np.asarray(dh, float), 0.0)


def lane_required_length(dh: np.ndarray, creep: np.ndarray,
                         vertical: np.ndarray | float = 0.0) -> np.ndarray:
    """Horizontal seepage length Lane (1935) requires: L_h = 3 (C_L dH - L_v) (m), >= 0.

    From L_v + L_h / 3 >= C_L dH; ``vertical`` is L_v (m), the vertical path
    along cut-off walls or sheet piles (none known to the screening: 0).
    """
    need = np.asarray(creep, float) * np.maximum(np.asarray(dh, float), 0.0)
    return np.maximum(3.0 * (need - np.asarray(vertical, float)), 0.0)


def lane_weighted_length(horizontal: np.ndarray, vertical: np.ndarray | float = 0.0
                         ) -> np.ndarray:
    """Lane's (1935) weighted creep length L_v + L_h / 3 (m)."""
    return np.asarray(vertical, float) + np.asarray(horizontal, float) / 3.0


def geometry_factor(ratio: np.ndarray) -> np.ndarray:
    """Sellmeijer et al. (2011) F_geo = 0.91 (D/L)^(0.28 / ((D/L)^2.8 - 1) + 0.04).

    At D/L = 1 the exponent's pole is removable: the limit is 0.91 e^0.1
    ((1 + e)^(0.1 / e) -> e^0.1). F_geo falls with D/L up to its minimum near
    D/L = 2.5 and rises slowly beyond (a thick aquifer under a short path, outside
    the experiments the rule was fitted to).
    """
    x = np.asarray(ratio, float)
    near = np.abs(x - 1.0) < 1e-6
    xs = np.where(near, 0.5, x)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        f = 0.91 * xs ** (0.28 / (xs ** 2.8 - 1.0) + 0.04)
    return np.where(near, 0.91 * math.exp(0.1), f)


def sellmeijer_critical_head(length: np.ndarray, *, d70: np.ndarray, k: np.ndarray,
                             aquifer: np.ndarray) -> np.ndarray:
    """Critical head H_c (m) of Sellmeijer et al. (2011) for seepage length ``length`` (m).

    Parameters
    ----------
    length : seepage length L (m), > 0
    d70 : grain size d70 of the aquifer sand (m)
    k : hydraulic conductivity of the aquifer (m/s)
    aquifer : aquifer thickness D (m)
    """
    L = np.asarray(length, float)
    kappa = VISCOSITY / GRAVITY * np.asarray(k, float)
    f_res = GRAIN_WEIGHT_SUBMERGED / WATER_WEIGHT * WHITE_ETA * math.tan(
        math.radians(BEDDING_ANGLE))
    with np.errstate(divide="ignore", invalid="ignore"):
        f_scale = D70_REF / np.cbrt(kappa * L) * (np.asarray(d70, float) / D70_REF) ** 0.4
        f_geo = geometry_factor(np.asarray(aquifer, float) / L)
    return f_res * f_scale * f_geo * L


def reduced_head(dh: np.ndarray, blanket: np.ndarray) -> np.ndarray:
    """The head the Sellmeijer check compares with H_c: dH - 0.3 d (m)."""
    return np.asarray(dh, float) - BLANKET_REDUCTION * np.nan_to_num(np.asarray(blanket, float))


#: seepage lengths (m) the Sellmeijer inverse searches between
_L_MIN, _L_MAX = 0.1, 20000.0


def sellmeijer_required_length(dh: np.ndarray, *, d70: np.ndarray, k: np.ndarray,
                               aquifer: np.ndarray, blanket: np.ndarray,
                               iterations: int = 60) -> np.ndarray:
    """Shortest seepage length (m) whose critical head reaches dH - 0.3 d.

    H_c grows with L (Sellmeijer et al. 2011), so L is bisected in log L on
    0.1-20,000 m for all stations at once (``iterations`` halvings of the
    log range: better than 1e-15 relative). 0 where the reduced head is not
    positive; NaN where a parameter is missing or 20 km would not suffice.
    """
    h = reduced_head(dh, blanket)
    shape = np.broadcast(h, d70, k, aquifer).shape
    h = np.broadcast_to(h, shape)
    args = {n: np.broadcast_to(np.asarray(v, float), shape)
            for n, v in (("d70", d70), ("k", k), ("aquifer", aquifer))}
    lo = np.full(shape, math.log(_L_MIN))
    hi = np.full(shape, math.log(_L_MAX))
    for _ in range(iterations):
        mid = 0.5 * (lo + hi)
        enough = sellmeijer_critical_head(np.exp(mid), **args) >= h
        hi = np.where(enough, mid, hi)
        lo = np.where(enough, lo, mid)
    out = np.exp(hi)
    given = np.all([np.isfinite(v) for v in (h, *args.values())], axis=0)
    too_long = sellmeijer_critical_head(np.full(shape, _L_MAX), **args) < h
    out = np.where(h <= 0, 0.0, out)
    return np.where(given & ~(too_long & (h > 0)), out, np.nan)
