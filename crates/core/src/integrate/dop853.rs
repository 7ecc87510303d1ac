//! Dormand–Prince 8(5,3) as in Hairer's DOP853, with its 7th-order continuous extension.
//!
//! Coefficients: every number below is taken from scipy's
//! `scipy/integrate/_ivp/dop853_coefficients.py` (taken from Hairer's `dop853.f`),
//! printed by Python as the shortest decimal that round-trips to the same `f64`. Only the
//! non-zero entries are stored, each row with the stage indices it multiplies. Stage 13 (index
//! 12) is `f(t + h, y_new)` (FSAL); stages 14–16 (indices 13–15) exist only for the dense output.
//! Hairer–Nørsett–Wanner, "Solving ODEs I", Sec. II.5 (the 8(5,3) pair) and II.6 (dense output).
#![allow(clippy::excessive_precision, clippy::unreadable_literal)]

use super::System;
use super::rk::{Trial, all_finite, combine, scale, weighted};

/// Stages of the extended tableau: 12 for the step, the FSAL stage, 3 for the dense output.
pub(crate) const STAGES: usize = 16;

/// Nodes `c_i` of the 16 stages (index 12 is the FSAL evaluation `f(t + h, y_new)`; 13..16 are
/// the extra dense-output stages).
pub(crate) const C: [f64; STAGES] = [
    0.0,
    0.05260015195876773,
    0.0789002279381516,
    0.1183503419072274,
    0.2816496580927726,
    0.3333333333333333,
    0.25,
    0.3076923076923077,
    0.6512820512820513,
    0.6,
    0.8571428571428571,
    1.0,
    1.0,
    0.1,
    0.2,
    0.7777777777777778,
];
pub(crate) const A1: [f64; 1] = [0.05260015195876773];
pub(crate) const A1_IDX: [usize; 1] = [0];
pub(crate) const A2: [f64; 2] = [0.0197250569845379, 0.0591751709536137];
pub(crate) const A2_IDX: [usize; 2] = [0, 1];
pub(crate) const A3: [f64; 2] = [0.02958758547680685, 0.08876275643042054];
pub(crate) const A3_IDX: [usize; 2] = [0, 2];
pub(crate) const A4: [f64; 3] = [0.2413651341592667, -0.8845494793282861, 0.924834003261792];
pub(crate) const A4_IDX: [usize; 3] = [0, 2, 3];
pub(crate) const A5: [f64; 3] = [
    0.037037037037037035,
    0.17082860872947386,
    0.12546768756682242,
];
pub(crate) const A5_IDX: [usize; 3] = [0, 3, 4];
pub(crate) const A6: [f64; 4] = [
    0.037109375,
    0.17025221101954405,
    0.06021653898045596,
    -0.017578125,
];
pub(crate) const A6_IDX: [usize; 4] = [0, 3, 4, 5];
pub(crate) const A7: [f64; 5] = [
    0.03709200011850479,
    0.17038392571223998,
    0.10726203044637328,
    -0.015319437748624402,
    0.008273789163814023,
];
pub(crate) const A7_IDX: [usize; 5] = [0, 3, 4, 5, 6];
pub(crate) const A8: [f64; 6] = [
    0.6241109587160757,
    -3.3608926294469414,
    -0.868219346841726,
    27.59209969944671,
    20.154067550477894,
    -43.48988418106996,
];
pub(crate) const A8_IDX: [usize; 6] = [0, 3, 4, 5, 6, 7];
pub(crate) const A9: [f64; 7] = [
    0.47766253643826434,
    -2.4881146199716677,
    -0.590290826836843,
    21.230051448181193,
    15.279233632882423,
    -33.28821096898486,
    -0.020331201708508627,
];
pub(crate) const A9_IDX: [usize; 7] = [0, 3, 4, 5, 6, 7, 8];
pub(crate) const A10: [f64; 8] = [
    -0.9371424300859873,
    5.186372428844064,
    1.0914373489967295,
    -8.149787010746927,
    -18.52006565999696,
    22.739487099350505,
    2.4936055526796523,
    -3.0467644718982196,
];
pub(crate) const A10_IDX: [usize; 8] = [0, 3, 4, 5, 6, 7, 8, 9];
pub(crate) const A11: [f64; 9] = [
    2.273310147516538,
    -10.53449546673725,
    -2.0008720582248625,
    -17.9589318631188,
    27.94888452941996,
    -2.8589982771350235,
    -8.87285693353063,
    12.360567175794303,
    0.6433927460157636,
];
pub(crate) const A11_IDX: [usize; 9] = [0, 3, 4, 5, 6, 7, 8, 9, 10];
pub(crate) const A13: [f64; 8] = [
    0.056167502283047954,
    0.25350021021662483,
    -0.2462390374708025,
    -0.12419142326381637,
    0.15329179827876568,
    0.00820105229563469,
    0.007567897660545699,
    -0.008298,
];
pub(crate) const A13_IDX: [usize; 8] = [0, 6, 7, 8, 9, 10, 11, 12];
pub(crate) const A14: [f64; 8] = [
    0.03183464816350214,
    0.028300909672366776,
    0.053541988307438566,
    -0.05492374857139099,
    -0.00010834732869724932,
    0.0003825710908356584,
    -0.00034046500868740456,
    0.1413124436746325,
];
pub(crate) const A14_IDX: [usize; 8] = [0, 5, 6, 7, 10, 11, 12, 13];
pub(crate) const A15: [f64; 8] = [
    -0.42889630158379194,
    -4.697621415361164,
    7.683421196062599,
    4.06898981839711,
    0.3567271874552811,
    -0.0013990241651590145,
    2.9475147891527724,
    -9.15095847217987,
];
pub(crate) const A15_IDX: [usize; 8] = [0, 5, 6, 7, 8, 12, 13, 14];
/// 8th-order weights `b_j` (row 12 of the extended `A`).
pub(crate) const B: [f64; 8] = [
    0.054293734116568765,
    4.450312892752409,
    1.8915178993145003,
    -5.801203960010585,
    0.3111643669578199,
    -0.1521609496625161,
    0.20136540080403034,
    0.04471061572777259,
];
pub(crate) const B_IDX: [usize; 8] = [0, 5, 6, 7, 8, 9, 10, 11];
/// Weights of the 5th-order error estimate `b − b̂⁽⁵⁾` (scipy `E5`, Hairer `ER`).
pub(crate) const E5: [f64; 8] = [
    0.01312004499419488,
    -1.2251564463762044,
    -0.4957589496572502,
    1.6643771824549864,
    -0.35032884874997366,
    0.3341791187130175,
    0.08192320648511571,
    -0.022355307863886294,
];
pub(crate) const E5_IDX: [usize; 8] = [0, 5, 6, 7, 8, 9, 10, 11];
/// 3rd-order weights `b̂⁽³⁾` (Hairer `BHH`; scipy stores `E3 = b − b̂⁽³⁾`).
pub(crate) const BHH: [f64; 3] = [0.2440944881889764, 0.7338466882816118, 0.022058823529411766];
pub(crate) const BHH_IDX: [usize; 3] = [0, 8, 11];
pub(crate) const D0: [f64; 12] = [
    -8.428938276109013,
    0.5667149535193777,
    -3.0689499459498917,
    2.38466765651207,
    2.117034582445028,
    -0.871391583777973,
    2.2404374302607883,
    0.6315787787694688,
    -0.08899033645133331,
    18.148505520854727,
    -9.194632392478356,
    -4.436036387594894,
];
pub(crate) const D0_IDX: [usize; 12] = [0, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15];
pub(crate) const D1: [f64; 12] = [
    10.427508642579134,
    242.28349177525817,
    165.20045171727028,
    -374.5467547226902,
    -22.113666853125306,
    7.733432668472264,
    -30.674084731089398,
    -9.332130526430229,
    15.697238121770845,
    -31.139403219565178,
    -9.35292435884448,
    35.81684148639408,
];
pub(crate) const D1_IDX: [usize; 12] = [0, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15];
pub(crate) const D2: [f64; 12] = [
    19.985053242002433,
    -387.0373087493518,
    -189.17813819516758,
    527.8081592054236,
    -11.57390253995963,
    6.8812326946963,
    -1.0006050966910838,
    0.7777137798053443,
    -2.778205752353508,
    -60.19669523126412,
    84.32040550667716,
    11.99229113618279,
];
pub(crate) const D2_IDX: [usize; 12] = [0, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15];
pub(crate) const D3: [f64; 12] = [
    -25.69393346270375,
    -154.18974869023643,
    -231.5293791760455,
    357.6391179106141,
    93.40532418362432,
    -37.45832313645163,
    104.0996495089623,
    29.8402934266605,
    -43.53345659001114,
    96.32455395918828,
    -39.17726167561544,
    -149.72683625798564,
];
pub(crate) const D3_IDX: [usize; 12] = [0, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15];

/// Rows 1..=15 of the extended tableau `A` (row 12 is `B`) for the tests.
#[cfg(test)]
pub(crate) const ROWS: [(&[f64], &[usize]); 15] = [
    (&A1, &A1_IDX),
    (&A2, &A2_IDX),
    (&A3, &A3_IDX),
    (&A4, &A4_IDX),
    (&A5, &A5_IDX),
    (&A6, &A6_IDX),
    (&A7, &A7_IDX),
    (&A8, &A8_IDX),
    (&A9, &A9_IDX),
    (&A10, &A10_IDX),
    (&A11, &A11_IDX),
    (&B, &B_IDX),
    (&A13, &A13_IDX),
    (&A14, &A14_IDX),
    (&A15, &A15_IDX),
];

/// Stability-boundary estimate above which a step counts as stiff (Hairer's `dop853.f`).
pub(crate) const STIFF_THRESHOLD: f64 = 6.1;

/// Weight of the 3rd-order estimate in the combined error, `err₅² / √(err₅² + 0.01·err₃²)`
/// (Hairer's `dop853.f`).
const ERR3_WEIGHT: f64 = 0.01;

/// One trial step from `(t, y)` with `k[0] = f(t, y)`. Fills `k[1..12]` (11 evaluations).
#[inline(always)]
pub(crate) fn attempt<S: System<N>, const N: usize>(
    sys: &S,
    t: f64,
    y: &[f64; N],
    h: f64,
    rtol: f64,
    atol: f64,
    k: &mut [[f64; N]; STAGES],
) -> Trial<N> {
    macro_rules! stage {
        ($s:literal, $a:ident, $idx:ident) => {
            let yt = combine(y, h, &$a, &$idx, k);
            sys.rhs(t + C[$s] * h, &yt, &mut k[$s]);
        };
    }
    stage!(1, A1, A1_IDX);
    stage!(2, A2, A2_IDX);
    stage!(3, A3, A3_IDX);
    stage!(4, A4, A4_IDX);
    stage!(5, A5, A5_IDX);
    stage!(6, A6, A6_IDX);
    stage!(7, A7, A7_IDX);
    stage!(8, A8, A8_IDX);
    stage!(9, A9, A9_IDX);
    stage!(10, A10, A10_IDX);
    let y_stiff = combine(y, h, &A11, &A11_IDX, k);
    sys.rhs(t + h, &y_stiff, &mut k[11]);

    let y_new = combine(y, h, &B, &B_IDX, k);
    let e5 = weighted(&E5, &E5_IDX, k);
    let slope = weighted(&B, &B_IDX, k);
    let slope3 = weighted(&BHH, &BHH_IDX, k);
    let mut sum5 = 0.0;
    let mut sum3 = 0.0;
    for i in 0..N {
        let sk = scale(atol, rtol, y[i], y_new[i]);
        sum5 += (e5[i] / sk).powi(2);
        sum3 += ((slope[i] - slope3[i]) / sk).powi(2);
    }
    // NOTE: Hairer's combination of the 5th- and 3rd-order estimates behaves like the 5th-order
    // one (so the controller exponent is 1/8) but is damped when the 3rd-order one is large,
    // which protects against an accidentally small 5th-order estimate.
    let mut deno = sum5 + ERR3_WEIGHT * sum3;
    if deno <= 0.0 {
        deno = 1.0;
    }
    Trial {
        y_new,
        err: h.abs() * sum5 / (N as f64 * deno).sqrt(),
        y_stiff,
    }
}

/// Stiffness estimate `|h|·‖k₁₃ − k₁₂‖ / ‖y_new − y_stiff‖` (Hairer's `HLAMB`); needs `k[12]`.
#[inline]
pub(crate) fn stiffness_estimate<const N: usize>(
    h: f64,
    trial: &Trial<N>,
    k: &[[f64; N]; STAGES],
) -> f64 {
    super::rk::stiffness_ratio(h, &k[12], &k[11], trial)
}

/// Coefficients `r₀..r₇` of the continuous extension of an accepted step; needs `k[12]` =
/// `f(t + h, y_new)`. With `full` the 3 extra stages are evaluated (into `k[13..16]`) and the
/// result is 7th order; otherwise, or if an extra stage is not finite, `r₄..r₇` are zero and
/// the interpolant is the cubic Hermite polynomial through both ends. Returns the coefficients
/// and the number of evaluations spent.
#[inline(always)]
#[allow(clippy::needless_range_loop)]
pub(crate) fn dense_coefficients<S: System<N>, const N: usize>(
    sys: &S,
    t: f64,
    y: &[f64; N],
    y_new: &[f64; N],
    h: f64,
    k: &mut [[f64; N]; STAGES],
    full: bool,
) -> ([[f64; N]; 8], usize) {
    let mut r = [[0.0; N]; 8];
    for i in 0..N {
        let dy = y_new[i] - y[i];
        let bspl = h * k[0][i] - dy;
        r[0][i] = y[i];
        r[1][i] = dy;
        r[2][i] = bspl;
        r[3][i] = dy - h * k[12][i] - bspl;
    }
    if !full {
        return (r, 0);
    }
    let yt = combine(y, h, &A13, &A13_IDX, k);
    sys.rhs(t + C[13] * h, &yt, &mut k[13]);
    let yt = combine(y, h, &A14, &A14_IDX, k);
    sys.rhs(t + C[14] * h, &yt, &mut k[14]);
    let yt = combine(y, h, &A15, &A15_IDX, k);
    sys.rhs(t + C[15] * h, &yt, &mut k[15]);
    r[4] = combine(&[0.0; N], h, &D0, &D0_IDX, k);
    r[5] = combine(&[0.0; N], h, &D1, &D1_IDX, k);
    r[6] = combine(&[0.0; N], h, &D2, &D2_IDX, k);
    r[7] = combine(&[0.0; N], h, &D3, &D3_IDX, k);
    // NOTE: the extra stages are evaluated at interior points the step itself never visited; if
    // one is not finite the accepted step is still good, so keep the Hermite part only.
    if !(4..8).all(|j| all_finite(&r[j])) {
        for row in &mut r[4..8] {
            *row = [0.0; N];
        }
    }
    (r, 3)
}
