"""Tests of trajectory.formulas.hydraulics against published formulas and regulations.

Hand values below were worked out from the published EurOtop (2018) equations
(coefficients and equation numbers from memory), with g = 9.81 m/s²:

    L = g T² / (2π),  ξ = tanα / sqrt(Hm0 / L),
    q / sqrt(g Hm0³) = min(a/sqrt(tanα) γb ξ exp(-(b Rc/(ξ Hm0 γb γf γβ))^1.3),
                           d exp(-(e Rc/(Hm0 γf γβ))^1.3))
    mean value (a, b, d, e) = (0.023, 2.7, 0.09, 1.5), Eq. 5.10/5.11
    design     (a, b, d, e) = (0.026, 2.5, 0.1035, 1.35), Eq. 5.12/5.13
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from trajectory.errors import ParameterError, TrajectoryError
from trajectory.formulas import hydraulics as hy

G = 9.81


# --------------------------------------------------------------------------- #
# wave parameters
# --------------------------------------------------------------------------- #
def test_wavelength_and_breaker_parameter_hand_values():
    # EurOtop (2018) Eq. 1.1/1.2 (from memory): L = 9.81*36/(2π) = 353.16/6.28319
    # = 56.207 m; ξ = (1/3)/sqrt(2/56.207) = 0.33333/0.18863 = 1.7671
    assert hy.wavelength_deep(6.0) == pytest.approx(56.2072, rel=1e-5)
    assert hy.breaker_parameter(1 / 3, 2.0, 6.0) == pytest.approx(1.76709, rel=1e-5)


def test_tm10_from_tp():
    # EurOtop (2018) Tp ≈ 1.1 Tm-1,0 (common practice, from memory): 11 s -> 10 s
    assert hy.tm10_from_tp(11.0) == pytest.approx(10.0, rel=1e-12)


def test_scalar_in_float_out_and_broadcasting():
    # numpy broadcasting rules (general-purpose reference behaviour)
    assert isinstance(hy.overtopping_discharge(3.0, 2.0, 6.0, 1 / 3), float)
    q = hy.overtopping_discharge(np.array([[1.0], [2.0]]), np.array([1.0, 2.0, 3.0]), 6.0, 1 / 3)
    assert isinstance(q, np.ndarray) and q.shape == (2, 3) and q.dtype == float


# --------------------------------------------------------------------------- #
# overtopping, forward hand values
# --------------------------------------------------------------------------- #
def test_q_design_breaking_smooth():
    # EurOtop (2018) Eq. 5.12/5.13, Hm0=2 m, Tm-1,0=6 s, 1:3, Rc=3 m:
    # L=56.207, ξ=1.7671; breaking 0.026/sqrt(1/3)=0.045033, ×ξ=0.079578,
    # (2.5*3/(1.7671*2))^1.3 = 2.1221^1.3 = 2.6595, exp(-2.6595)=0.069982 -> 0.0055690;
    # non-breaking 0.1035*exp(-(1.35*3/2)^1.3) = 0.1035*exp(-2.5024) = 0.0084756;
    # min = 0.0055690 (breaking); × sqrt(9.81*8)=8.8589 -> q = 0.049335 m³/s/m
    q = hy.overtopping_discharge(3.0, 2.0, 6.0, 1 / 3, approach="design")
    assert q == pytest.approx(0.049335, rel=1e-4)


def test_q_mean_breaking_smooth():
    # EurOtop (2018) Eq. 5.10/5.11, same case: breaking 0.023/0.57735*1.7671=0.070397,
    # (2.7*3/3.5342)^1.3 = 2.2919^1.3 = 2.9394, exp(-2.9394)=0.052899 -> 0.0037239;
    # non-breaking 0.09*exp(-(2.25)^1.3)=0.09*exp(-2.8697)=0.0051044;
    # min 0.0037239 × 8.8589 -> q = 0.032990 m³/s/m
    q = hy.overtopping_discharge(3.0, 2.0, 6.0, 1 / 3, approach="mean")
    assert q == pytest.approx(0.032990, rel=1e-4)


def test_q_design_nonbreaking_steep_slope():
    # EurOtop (2018) Eq. 5.12/5.13, Hm0=1 m, Tm-1,0=8 s, 1:2, Rc=2 m:
    # L=99.924, ξ=0.5/sqrt(1/99.924)=4.9981; breaking 0.026/0.70711*4.9981
    # *exp(-(5/4.9981)^1.3) = 0.18378*0.36770 = 0.067575;
    # non-breaking 0.1035*exp(-(2.7)^1.3) = 0.1035*exp(-3.6372) = 0.0027246 (governs);
    # × sqrt(9.81) = 3.1321 -> q = 0.0085337 m³/s/m
    q = hy.overtopping_discharge(2.0, 1.0, 8.0, 0.5, approach="design")
    assert q == pytest.approx(0.0085337, rel=1e-4)


def test_q_mean_nonbreaking_rough_rock():
    # EurOtop (2018) Eq. 5.10/5.11 with γf=0.55 (Table 5.2, rock two layers on
    # impermeable core, from memory); Hm0=1, Tm-1,0=8, 1:2, Rc=2, ξ=4.9981:
    # breaking 0.023/0.70711*4.9981*exp(-(5.4/(4.9981*0.55))^1.3)
    #   = 0.16257*exp(-(1.9644^1.3 = 2.4054)) = 0.014668;
    # non-breaking 0.09*exp(-(3/0.55)^1.3) = 0.09*exp(-9.0735) = 1.0317e-5 (governs);
    # × 3.1321 -> q = 3.2315e-5 m³/s/m
    gf = hy.roughness_factor("rock_two_layers_impermeable_core")
    q = hy.overtopping_discharge(2.0, 1.0, 8.0, 0.5, gamma_f=gf, approach="mean")
    assert q == pytest.approx(3.2315e-5, rel=1e-4)


def test_q_design_oblique_waves():
    # EurOtop (2018) Eq. 5.29 (from memory) γβ = 1 - 0.0033*30 = 0.901; with
    # Eq. 5.12: (2.5*3/(1.7671*2*0.901))^1.3 = 2.3553^1.3 = 3.0455,
    # 0.079578*exp(-3.0455) = 0.0037857; non-breaking 0.1035*exp(-(2.2475)^1.3)=0.0058944;
    # min × 8.8589 -> q = 0.033537 m³/s/m
    gbeta = hy.gamma_beta_overtopping(30.0)
    assert gbeta == pytest.approx(0.901, abs=1e-12)
    q = hy.overtopping_discharge(3.0, 2.0, 6.0, 1 / 3, gamma_beta=gbeta)
    assert q == pytest.approx(0.033537, rel=1e-4)


def test_q_design_with_submerged_berm():
    # EurOtop (2018) Eq. 5.33-5.36 (from memory): B=5 m, db=+1 m (below SWL),
    # Hm0=2 m, 1:3 below and above: L_berm = 2*3 + 5 + 2*3 = 17, rB = 5/17 = 0.29412;
    # x = 2 Hm0 = 4, rdb = 0.5 - 0.5 cos(π/4) = 0.14645; γb = 1 - 0.29412*0.85355 = 0.74895.
    # Eq. 5.12: 0.045033*0.74895*1.7671 = 0.059601,
    # (7.5/(1.7671*2*0.74895))^1.3 = 2.8335^1.3 = 3.8727, exp(-3.8727) = 0.020803
    # -> 0.0012398 (< non-breaking 0.0084756); × 8.8589 -> q = 0.010984 m³/s/m
    gb = hy.gamma_berm(5.0, 1.0, 2.0, 6.0, 1 / 3, 1 / 3)
    assert gb == pytest.approx(0.748955, rel=1e-5)
    q = hy.overtopping_discharge(3.0, 2.0, 6.0, 1 / 3, gamma_b=gb)
    assert q == pytest.approx(0.010984, rel=1e-4)


def test_q_mean_berm_above_swl_and_oblique():
    # EurOtop (2018) Eq. 5.33-5.36 and 5.29 (from memory): B=4, db=-0.5 (above SWL),
    # x = Ru2% = 5 m given, L_berm = 6+4+6 = 16, rB = 0.25,
    # rdb = 0.5 - 0.5 cos(0.1π) = 0.024472, γb = 1 - 0.25*0.975528 = 0.75612;
    # γβ = 1 - 0.0033*45 = 0.8515. Eq. 5.10, Hm0=2, Tm-1,0=6, 1:3, Rc=3:
    # 0.023/0.57735*0.75612*1.7671 = 0.053228,
    # (8.1/(1.7671*2*0.75612*0.8515))^1.3 = 3.5598^1.3 = 5.2101, exp(-5.2101)=0.0054610
    # -> 2.9068e-4 (< non-breaking 0.09*exp(-(4.5/1.703)^1.3)=0.0026199);
    # × 8.8589 -> q = 0.0025751 m³/s/m
    gb = hy.gamma_berm(4.0, -0.5, 2.0, 6.0, 1 / 3, 1 / 3, runup=5.0)
    assert gb == pytest.approx(0.756118, rel=1e-5)
    q = hy.overtopping_discharge(
        3.0, 2.0, 6.0, 1 / 3, gamma_b=gb, gamma_beta=hy.gamma_beta_overtopping(45.0),
        approach="mean",
    )
    assert q == pytest.approx(0.0025751, rel=1e-4)


def test_negative_freeboard_is_clipped_and_no_waves_no_overtopping():
    # EurOtop (2018) Eq. 5.10-5.13 hold for Rc >= 0 (documented clip); Hm0 = 0
    # means no waves and hence no wave overtopping (definition).
    assert hy.overtopping_discharge(-1.0, 2.0, 6.0, 1 / 3) == hy.overtopping_discharge(
        0.0, 2.0, 6.0, 1 / 3
    )
    # At Rc = 0: min(0.079578, 0.1035) * 8.8589 = 0.70497 m³/s/m (hand, Eq. 5.12/5.13)
    assert hy.overtopping_discharge(0.0, 2.0, 6.0, 1 / 3) == pytest.approx(0.70497, rel=1e-4)
    assert hy.overtopping_discharge(2.0, 0.0, 6.0, 1 / 3) == 0.0
    assert hy.freeboard_for_discharge(1e-3, 0.0, 6.0, 1 / 3) == 0.0


def test_q_taw2002_design_breaking():
    # TAW (2002) deterministic Eq. 24/25 (from memory, exponent 1): Hm0=2 m,
    # Tm-1,0=6 s, 1:3, Rc=3 m, ξ=1.7671; breaking 0.067/sqrt(1/3)=0.11605, ×ξ=0.20507,
    # exp(-4.3*3/(1.7671*2)) = exp(-3.6500) = 0.025990 -> 0.0053296;
    # non-breaking 0.2*exp(-2.3*3/2) = 0.2*exp(-3.45) = 0.0063491; min × 8.8589
    # -> q = 0.047214 m³/s/m (EurOtop 2018 design gives 0.049335 for the same case)
    q = hy.overtopping_discharge(3.0, 2.0, 6.0, 1 / 3, approach="taw2002_design")
    assert q == pytest.approx(0.047214, rel=1e-4)


def test_q_taw2002_mean_nonbreaking():
    # TAW (2002) Eq. 22/23 (from memory): Hm0=1, Tm-1,0=8, 1:2, Rc=2, ξ=4.9981;
    # breaking 0.067/0.70711*4.9981*exp(-4.75*2/4.9981) = 0.47358*0.14946 = 0.070782;
    # non-breaking 0.2*exp(-2.6*2) = 0.2*0.0055166 = 0.0011033 (governs);
    # × sqrt(9.81) = 3.1321 -> q = 0.0034557 m³/s/m
    q = hy.overtopping_discharge(2.0, 1.0, 8.0, 0.5, approach="taw2002_mean")
    assert q == pytest.approx(0.0034557, rel=1e-4)


def test_q_taw2002_mean_berm_and_oblique():
    # TAW (2002) Eq. 22/23 with γb = 0.74896 (B=5, db=+1, hand value above) and
    # γβ = 1 - 0.0033*30 = 0.901 (from memory); Hm0=2, Tm-1,0=6, 1:3, Rc=3:
    # breaking 0.11605*0.74896*1.7671*exp(-4.75*3/(1.7671*2*0.74896*0.901))
    #   = 0.15359*exp(-5.9746) = 3.9030e-4 (governs);
    # non-breaking 0.2*exp(-2.6*3/(2*0.901)) = 0.2*exp(-4.3285) = 0.0026374;
    # × 8.8589 -> q = 0.0034576 m³/s/m
    q = hy.overtopping_discharge(3.0, 2.0, 6.0, 1 / 3, gamma_b=0.748955, gamma_beta=0.901,
                                 approach="taw2002_mean")
    assert q == pytest.approx(0.0034576, rel=1e-4)


def test_runup_taw2002_design():
    # TAW (2002) Eq. 3 deterministic (from memory): Ru2%/Hm0 = 1.75 ξ, max 4.3 - 1.6/sqrt(ξ)
    # Hm0=2, Tm-1,0=5, 1:4, ξ=1.10443: 1.75ξ = 1.9328 (< 2.7775) -> 3.8655 m
    assert hy.runup_2pct(2.0, 5.0, 0.25, approach="taw2002_design") == pytest.approx(
        3.8655, rel=1e-4)
    # Hm0=1, Tm-1,0=8, 1:2, ξ=4.9981: 4.3 - 1.6/2.2357 = 3.5843 m (surging governs)
    assert hy.runup_2pct(1.0, 8.0, 0.5, approach="taw2002_design") == pytest.approx(
        3.5843, rel=1e-4)


def test_eurotop_and_taw2002_agree_roughly():
    # EurOtop (2018) section 5.3 presents its formulas as a refit of TAW (2002)
    # to the same data (from memory): for the same dike the freeboards at
    # 1 l/s per m differ by well under 15 %.
    for ours, theirs in (("design", "taw2002_design"), ("mean", "taw2002_mean")):
        a = hy.freeboard_for_discharge(1e-3, 2.0, 6.0, 1 / 3, approach=ours)
        b = hy.freeboard_for_discharge(1e-3, 2.0, 6.0, 1 / 3, approach=theirs)
        assert abs(a - b) / a < 0.15


# --------------------------------------------------------------------------- #
# inverse
# --------------------------------------------------------------------------- #
def test_freeboard_hand_value_sea_dike():
    # EurOtop (2018) Eq. 5.12 inverted by hand: Hm0=3, Tm-1,0=7.5, 1:3, q=0.001:
    # L=87.824, ξ=1.8035; q0 = 0.045033*1.8035*sqrt(9.81*27)=0.081217*16.275=1.3218;
    # ln(1321.8)=7.1868, ^(1/1.3)=4.5591; ×ξ Hm0/2.5=2.1642 -> 9.867 m;
    # non-breaking: 3/1.35*ln(0.1035*16.275/0.001)^(1/1.3) = 2.2222*4.6770 = 10.39 m;
    # min -> Rc = 9.867 m
    rc = hy.freeboard_for_discharge(1e-3, 3.0, 7.5, 1 / 3)
    assert rc == pytest.approx(9.867, rel=2e-4)


def test_freeboard_clipped_to_zero_when_q_exceeds_rc0_value():
    # Rc=0 value 0.70497 m³/s/m (hand value above, EurOtop 2018 Eq. 5.12/5.13)
    assert hy.freeboard_for_discharge(1.0, 2.0, 6.0, 1 / 3) == 0.0
    assert hy.freeboard_for_discharge(0.70, 2.0, 6.0, 1 / 3) > 0.0


_gamma = st.floats(0.6, 1.0)


@settings(max_examples=300, deadline=None)
@given(
    hm0=st.floats(0.2, 5.0),
    tan_alpha=st.floats(1 / 8, 1 / 1.5),
    xi=st.floats(0.5, 7.0),
    rc_rel=st.floats(0.5, 3.5),
    gamma_b=_gamma,
    gamma_f=st.floats(0.4, 1.0),
    gamma_beta=st.floats(0.736, 1.0),
    approach=st.sampled_from(sorted(hy.COEFFICIENTS)),
)
def test_inverse_round_trip(hm0, tan_alpha, xi, rc_rel, gamma_b, gamma_f, gamma_beta, approach):
    # Definition of the inverse: q(Rc(q)) = q and Rc(q(Rc)) = Rc for Rc > 0,
    # over 0.5 < ξ < 7 and 0.5 < Rc/Hm0 < 3.5 (EurOtop 2018 validity, roughly).
    steepness = (tan_alpha / xi) ** 2
    tm10 = math.sqrt(2 * math.pi * hm0 / (G * steepness))
    kw = dict(gamma_b=gamma_b, gamma_f=gamma_f, gamma_beta=gamma_beta, approach=approach)
    rc = rc_rel * hm0
    q = hy.overtopping_discharge(rc, hm0, tm10, tan_alpha, **kw)
    assert q > 0.0
    rc_back = hy.freeboard_for_discharge(q, hm0, tm10, tan_alpha, **kw)
    assert rc_back == pytest.approx(rc, rel=1e-6)
    q_back = hy.overtopping_discharge(rc_back, hm0, tm10, tan_alpha, **kw)
    assert q_back == pytest.approx(q, rel=1e-6)


@settings(max_examples=200, deadline=None)
@given(
    q=st.floats(1e-12, 10.0),
    hm0=st.floats(1e-3, 20.0),
    tm10=st.floats(0.5, 30.0),
    tan_alpha=st.floats(1e-3, 10.0),
    approach=st.sampled_from(["mean", "design"]),
)
def test_inverse_is_finite_and_nonnegative_everywhere(q, hm0, tm10, tan_alpha, approach):
    # Robustness requirement: closed form defined for all q, Hm0, T, tanα > 0
    rc = hy.freeboard_for_discharge(q, hm0, tm10, tan_alpha, approach=approach)
    assert math.isfinite(rc) and rc >= 0.0


def test_monotonic_in_q_hm0_and_slope():
    # EurOtop (2018) Eq. 5.12/5.13: q falls with Rc and rises with Hm0 and with
    # slope steepness (breaking branch) -> required Rc falls with q_allow and
    # rises with Hm0 and tanα.
    qs = np.geomspace(1e-5, 0.1, 60)
    rc_q = hy.freeboard_for_discharge(qs, 2.0, 6.0, 1 / 3)
    assert np.all(np.diff(rc_q) < 0)
    hs = np.linspace(0.2, 4.0, 60)
    rc_h = hy.freeboard_for_discharge(1e-3, hs, 6.0, 1 / 3)
    assert np.all(np.diff(rc_h) > 0)
    slopes = np.linspace(1 / 8, 1 / 1.5, 60)
    rc_s = hy.freeboard_for_discharge(1e-3, 2.0, 6.0, slopes)
    assert np.all(np.diff(rc_s) >= 0) and rc_s[-1] > rc_s[0]


# --------------------------------------------------------------------------- #
# common-practice sanity bands
# --------------------------------------------------------------------------- #
def test_sea_dike_needs_several_metres():
    # Common practice: a smooth 1:3 sea dike under Hm0 ≈ 3 m, Tm-1,0 ≈ 7.5 s at
    # 1 l/s per m needs a freeboard of several metres, of the order of 2-4 Hm0
    # and close to the 2 % run-up level (former Dutch crest rule, from memory).
    rc = hy.freeboard_for_discharge(1e-3, 3.0, 7.5, 1 / 3)
    assert 5.0 < rc < 12.0
    assert 2.0 < rc / 3.0 < 4.0
    ru = hy.runup_2pct(3.0, 7.5, 1 / 3)
    assert 0.7 < rc / ru < 1.3


def test_river_levee_needs_well_under_1_5_m():
    # Common practice: a river levee under wind waves Hm0 ≈ 0.5 m, Tm-1,0 ≈ 3 s,
    # 1:3, at 1 l/s per m needs about 1 m; hand (Eq. 5.12): ξ=1.7671,
    # q0 = 0.079578*sqrt(9.81*0.125) = 0.088121, ln(88.121)^(1/1.3) = 3.1688,
    # × 1.7671*0.5/2.5 -> 1.1199 m
    rc = hy.freeboard_for_discharge(1e-3, 0.5, 3.0, 1 / 3)
    assert rc == pytest.approx(1.1199, rel=2e-4)
    assert 0.5 < rc < 1.5


def test_more_overtopping_berm_and_obliquity_lower_freeboard():
    # EurOtop (2018) Eq. 5.12 with γb, γβ < 1 (Eq. 5.29, 5.33): less freeboard needed
    base = hy.freeboard_for_discharge(1e-3, 2.0, 6.0, 1 / 3)
    assert hy.freeboard_for_discharge(10e-3, 2.0, 6.0, 1 / 3) < base
    gb = hy.gamma_berm(5.0, 0.0, 2.0, 6.0, 1 / 3, 1 / 3)
    assert hy.freeboard_for_discharge(1e-3, 2.0, 6.0, 1 / 3, gamma_b=gb) < base
    gbeta = hy.gamma_beta_overtopping(40.0)
    assert hy.freeboard_for_discharge(1e-3, 2.0, 6.0, 1 / 3, gamma_beta=gbeta) < base


# --------------------------------------------------------------------------- #
# run-up
# --------------------------------------------------------------------------- #
def test_runup_breaking_both_approaches():
    # EurOtop (2018) Eq. 5.1/5.2 (from memory): Hm0=2, Tm-1,0=5, 1:4:
    # L=39.033, ξ=0.25/sqrt(2/39.033)=1.10443; surging 4-1.5/sqrt(1.10443)=2.5727;
    # mean 1.65*1.10443=1.8223 (governs) -> 3.6446 m; design 1.75*1.10443 -> 3.8655 m
    assert hy.runup_2pct(2.0, 5.0, 0.25, approach="mean") == pytest.approx(3.6446, rel=1e-4)
    assert hy.runup_2pct(2.0, 5.0, 0.25, approach="design") == pytest.approx(3.8655, rel=1e-4)


def test_runup_surging_smooth_and_rough():
    # EurOtop (2018) Eq. 5.2 (from memory): Hm0=1, Tm-1,0=8, 1:2, ξ=4.9981;
    # design smooth: 1.07*(4-1.5/sqrt(4.9981)) = 1.07*3.3290 = 3.5621 m (< 1.75ξ = 8.75)
    assert hy.runup_2pct(1.0, 8.0, 0.5) == pytest.approx(3.5621, rel=1e-4)
    # Eq. 5.1 with γf=0.55: γf,surging = 0.55+(4.9981-1.8)*0.45/8.2 = 0.72551;
    # 0.72551*3.3290 = 2.4152 m (< 1.65*0.55*ξ = 4.5358)
    ru = hy.runup_2pct(1.0, 8.0, 0.5, gamma_f=0.55, approach="mean")
    assert ru == pytest.approx(2.4152, rel=1e-4)


def test_gamma_f_surging_ramp():
    # EurOtop (2018) γf,surging (from memory): γf up to ξ=1.8, linear to 1 at ξ=10
    assert hy.gamma_f_surging(0.5, 1.0) == pytest.approx(0.5)
    assert hy.gamma_f_surging(0.5, 5.9) == pytest.approx(0.75)
    assert hy.gamma_f_surging(0.5, 10.0) == pytest.approx(1.0)
    assert hy.gamma_f_surging(0.5, 15.0) == pytest.approx(1.0)


def test_runup_no_waves():
    # Definition: no waves, no run-up
    assert hy.runup_2pct(0.0, 5.0, 0.25) == 0.0


# --------------------------------------------------------------------------- #
# influence factors
# --------------------------------------------------------------------------- #
def test_obliquity_caps():
    # EurOtop (2018) Eq. 5.28/5.29 (from memory): linear to 80°, 80° value beyond
    assert hy.gamma_beta_overtopping(0.0) == 1.0
    assert hy.gamma_beta_overtopping(80.0) == pytest.approx(0.736)
    assert hy.gamma_beta_overtopping(-85.0) == pytest.approx(0.736)
    assert hy.gamma_beta_overtopping(90.0) == pytest.approx(0.736)
    assert hy.gamma_beta_runup(80.0) == pytest.approx(0.824)
    assert hy.gamma_beta_runup(90.0) == pytest.approx(0.824)
    assert hy.gamma_beta_runup(45.0) == pytest.approx(0.901)
    with pytest.raises(ParameterError):
        hy.gamma_beta_overtopping(91.0)
    with pytest.raises(ValueError):
        hy.gamma_beta_runup(np.array([10.0, -120.0]))


def test_roughness_table():
    # EurOtop (2018) Table 5.2 (from memory)
    expected = {
        "smooth_concrete": 1.0,
        "asphalt": 1.0,
        "closed_concrete_blocks": 1.0,
        "grass": 1.0,
        "basalt": 0.90,
        "rock_one_layer_impermeable_core": 0.60,
        "rock_two_layers_impermeable_core": 0.55,
        "rock_two_layers_permeable_core": 0.40,
    }
    for name, value in expected.items():
        assert hy.roughness_factor(name) == value
        assert hy.ROUGHNESS[name] == value
    assert 8 <= len(hy.ROUGHNESS) <= 12
    assert all(k == k.lower() and " " not in k for k in hy.ROUGHNESS)
    assert hy.roughness_factor(" Rock two layers impermeable-core") == 0.55
    assert hy.roughness_factor("0.7") == 0.7
    assert hy.roughness_factor(0.65) == 0.65


def test_roughness_unknown_name_lists_valid_names():
    # Project error contract: KeyError subclass and TrajectoryError, message lists names
    with pytest.raises(KeyError) as info:
        hy.roughness_factor("granite_setts")
    assert isinstance(info.value, TrajectoryError)
    assert "basalt" in str(info.value) and "granite_setts" in str(info.value)
    with pytest.raises(ParameterError):
        hy.roughness_factor(1.5)


def test_berm_bounds_and_no_influence():
    # EurOtop (2018) Eq. 5.33-5.36 (from memory): 0.6 <= γb <= 1
    # B=10, db=0, Hm0=2, 1:3: rB = 10/22 = 0.4545, rdb = 0 -> 0.5455, bounded to 0.6
    assert hy.gamma_berm(10.0, 0.0, 2.0, 6.0, 1 / 3, 1 / 3) == pytest.approx(0.6)
    # berm deeper than 2 Hm0 below SWL -> rdb = 1 -> γb = 1
    assert hy.gamma_berm(10.0, 4.5, 2.0, 6.0, 1 / 3, 1 / 3) == 1.0
    # berm above SWL higher than the run-up -> no influence
    assert hy.gamma_berm(10.0, -3.0, 2.0, 6.0, 1 / 3, 1 / 3, runup=2.5) == 1.0
    # no berm width -> no influence
    assert hy.gamma_berm(0.0, 0.0, 2.0, 6.0, 1 / 3, 1 / 3) == 1.0
    # symmetric in db when x is the same (cos is even), per Eq. 5.35 form
    assert hy.gamma_berm(5.0, 1.0, 2.0, 6.0, 1 / 3, 1 / 3) == pytest.approx(
        hy.gamma_berm(5.0, -1.0, 2.0, 6.0, 1 / 3, 1 / 3)
    )


def test_unknown_approach_and_bad_gamma():
    # Project error contract: actionable ParameterError
    with pytest.raises(ParameterError, match="design"):
        hy.overtopping_discharge(1.0, 1.0, 5.0, 1 / 3, approach="median")
    with pytest.raises(ParameterError, match="gamma_f"):
        hy.freeboard_for_discharge(1e-3, 1.0, 5.0, 1 / 3, gamma_f=0.0)
    with pytest.raises(ParameterError, match="q_allow"):
        hy.freeboard_for_discharge(0.0, 1.0, 5.0, 1 / 3)


# --------------------------------------------------------------------------- #
# 44 CFR 65.10
# --------------------------------------------------------------------------- #
def test_44cfr6510_riverine():
    # 44 CFR 65.10(b)(1)(i): 3 ft; +1 ft near structures; +0.5 ft at upstream end;
    # 1 ft = 0.3048 m exactly (international foot)
    base = hy.freeboard_44cfr6510("riverine")
    assert base.margin_ft == 3.0 and base.margin_m == pytest.approx(0.9144, abs=1e-12)
    near = hy.freeboard_44cfr6510("riverine", near_structure=True)
    assert near.margin_ft == 4.0 and near.margin_m == pytest.approx(1.2192, abs=1e-12)
    up = hy.freeboard_44cfr6510("riverine", upstream_end=True)
    assert up.margin_ft == 3.5 and up.margin_m == pytest.approx(1.0668, abs=1e-12)
    taper = hy.freeboard_44cfr6510("riverine", upstream_end=np.array([1.0, 0.5, 0.0]))
    np.testing.assert_allclose(taper.margin_ft, [3.5, 3.25, 3.0], atol=1e-12)
    # both extras are stated "above the minimum": the larger governs (documented reading)
    both = hy.freeboard_44cfr6510("riverine", near_structure=True, upstream_end=True)
    assert both.margin_ft == 4.0


def test_44cfr6510_coastal():
    # 44 CFR 65.10(b)(1)(iii): 1 ft above the greater of 1 % wave height and max run-up
    c = hy.freeboard_44cfr6510("coastal")
    assert c.margin_ft == 1.0 and c.margin_m == pytest.approx(0.3048, abs=1e-12)
    assert "run-up" in c.description
    with pytest.raises(ParameterError):
        hy.freeboard_44cfr6510("coastal", near_structure=True)
    with pytest.raises(ParameterError):
        hy.freeboard_44cfr6510("estuarine")
