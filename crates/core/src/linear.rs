//! Linear algebra of a 2×2 Jacobian: trace, determinant, discriminant, eigenvalues and
//! eigenvectors, and the class of the equilibrium by the trace–determinant test.

use serde::Serialize;

/// Relative tolerance below which the trace, determinant or discriminant counts as zero,
/// measured against the Jacobian's largest entry `s` (trace against `s`, determinant and
/// discriminant against `s²`). It separates a linear centre from a spiral, a zero eigenvalue
/// from a node, and a degenerate node from a node or spiral, all in the same way.
pub const CLASS_EPS: f64 = 1e-9;

/// A complex number, for eigenvalues and eigenvectors.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct Complex {
    /// Real part.
    pub re: f64,
    /// Imaginary part.
    pub im: f64,
}

impl Complex {
    /// A complex number from its parts.
    pub const fn new(re: f64, im: f64) -> Self {
        Self { re, im }
    }
}

/// The linear class of an equilibrium by the trace–determinant test.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Class {
    /// Real eigenvalues of opposite sign.
    Saddle,
    /// Distinct negative real eigenvalues.
    StableNode,
    /// Distinct positive real eigenvalues.
    UnstableNode,
    /// Complex eigenvalues with negative real part.
    StableSpiral,
    /// Complex eigenvalues with positive real part.
    UnstableSpiral,
    /// Purely imaginary eigenvalues: the linearisation alone cannot decide.
    Center,
    /// A repeated negative eigenvalue with one eigenvector.
    StableDegenerateNode,
    /// A repeated positive eigenvalue with one eigenvector.
    UnstableDegenerateNode,
    /// A repeated negative eigenvalue with two eigenvectors (J = λI).
    StableStar,
    /// A repeated positive eigenvalue with two eigenvectors (J = λI).
    UnstableStar,
    /// A zero eigenvalue (determinant zero): not hyperbolic.
    ZeroEigenvalue,
}

/// How an equilibrium behaves by its linearisation, for drawing branches.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Stability {
    /// Every eigenvalue has a negative real part.
    Stable,
    /// Some eigenvalue has a positive real part (saddles included).
    Unstable,
    /// A linear centre or a zero eigenvalue: the linearisation does not decide.
    Neutral,
}

impl Class {
    /// Stable, unstable, or undecided by the linearisation.
    pub fn stability(self) -> Stability {
        match self {
            Class::StableNode
            | Class::StableSpiral
            | Class::StableDegenerateNode
            | Class::StableStar => Stability::Stable,
            Class::Center | Class::ZeroEigenvalue => Stability::Neutral,
            Class::Saddle
            | Class::UnstableNode
            | Class::UnstableSpiral
            | Class::UnstableDegenerateNode
            | Class::UnstableStar => Stability::Unstable,
        }
    }

    /// The snake_case name used in JSON output.
    pub fn as_str(self) -> &'static str {
        match self {
            Class::Saddle => "saddle",
            Class::StableNode => "stable_node",
            Class::UnstableNode => "unstable_node",
            Class::StableSpiral => "stable_spiral",
            Class::UnstableSpiral => "unstable_spiral",
            Class::Center => "center",
            Class::StableDegenerateNode => "stable_degenerate_node",
            Class::UnstableDegenerateNode => "unstable_degenerate_node",
            Class::StableStar => "stable_star",
            Class::UnstableStar => "unstable_star",
            Class::ZeroEigenvalue => "zero_eigenvalue",
        }
    }

    /// A plain-words name for people.
    pub fn describe(self) -> &'static str {
        match self {
            Class::Saddle => "saddle",
            Class::StableNode => "stable node",
            Class::UnstableNode => "unstable node",
            Class::StableSpiral => "stable spiral",
            Class::UnstableSpiral => "unstable spiral",
            Class::Center => "linear centre",
            Class::StableDegenerateNode => "stable degenerate node",
            Class::UnstableDegenerateNode => "unstable degenerate node",
            Class::StableStar => "stable star",
            Class::UnstableStar => "unstable star",
            Class::ZeroEigenvalue => "zero eigenvalue (non-hyperbolic)",
        }
    }
}

/// Everything the linearisation says about an equilibrium.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Linearisation {
    /// `[[∂f/∂x, ∂f/∂y], [∂g/∂x, ∂g/∂y]]`.
    pub jacobian: [[f64; 2]; 2],
    /// τ = ∂f/∂x + ∂g/∂y.
    pub trace: f64,
    /// Δ = ∂f/∂x·∂g/∂y − ∂f/∂y·∂g/∂x.
    pub det: f64,
    /// τ² − 4Δ.
    pub discriminant: f64,
    /// Eigenvalues; for real ones the larger first, for a complex pair the one with positive
    /// imaginary part first.
    pub eigenvalues: [Complex; 2],
    /// Unit eigenvectors matching `eigenvalues` (complex components for a complex pair).
    pub eigenvectors: [[Complex; 2]; 2],
    /// The class by the trace–determinant test.
    pub class: Class,
}

impl Linearisation {
    /// The same numbers for a table people read: entries, trace, eigenvalue parts and the
    /// determinant that the classification treats as zero (below [`CLASS_EPS`] relative to
    /// the Jacobian's largest entry, or its square for the determinant) are shown as zero, so
    /// a linear centre reads `0 ± ωi` rather than `−1.1×10⁻¹⁶ ± ωi`. Data exports keep the
    /// computed values.
    pub fn for_display(&self) -> Linearisation {
        let s = self
            .jacobian
            .iter()
            .flatten()
            .fold(0.0_f64, |m, v| m.max(v.abs()));
        if !(s.is_finite() && s > 0.0) {
            return *self;
        }
        // NOTE: divided rather than multiplied, so a huge or tiny scale cannot overflow.
        let snap = |v: f64| if v.abs() / s <= CLASS_EPS { 0.0 } else { v };
        let snap2 = |v: f64| if v.abs() / s / s <= CLASS_EPS { 0.0 } else { v };
        let z = |c: Complex| Complex::new(snap(c.re), snap(c.im));
        Linearisation {
            jacobian: self.jacobian.map(|row| row.map(snap)),
            trace: snap(self.trace),
            det: snap2(self.det),
            discriminant: snap2(self.discriminant),
            eigenvalues: self.eigenvalues.map(z),
            eigenvectors: self.eigenvectors,
            class: self.class,
        }
    }
}

/// Linearises with a given Jacobian.
///
/// Entries beyond about 2^±250 are first scaled by a power of two (exactly) so that the
/// determinant, the discriminant and the relative tolerances neither overflow nor underflow;
/// the trace, determinant and eigenvalues are scaled back (to ±∞ if the true value is beyond
/// f64), and the class is that of the scaled matrix, which is the same.
pub fn linearise(jacobian: [[f64; 2]; 2]) -> Linearisation {
    let s = jacobian
        .iter()
        .flatten()
        .fold(0.0_f64, |m, v| m.max(v.abs()));
    if !(s.is_finite() && s > 0.0) {
        return linearise_in_range(jacobian);
    }
    let k = (s.log2().floor() as i32).clamp(-1000, 1000);
    if k.abs() <= 250 {
        return linearise_in_range(jacobian);
    }
    let (down, up) = (2.0_f64.powi(-k), 2.0_f64.powi(k));
    let mut l = linearise_in_range(jacobian.map(|row| row.map(|v| v * down)));
    l.jacobian = jacobian;
    l.trace *= up;
    l.det = l.det * up * up;
    l.discriminant = l.discriminant * up * up;
    l.eigenvalues = l.eigenvalues.map(|z| Complex::new(z.re * up, z.im * up));
    l
}

/// [`linearise`] for entries whose products stay within f64.
fn linearise_in_range(jacobian: [[f64; 2]; 2]) -> Linearisation {
    let [[a, b], [c, d]] = jacobian;
    let trace = a + d;
    let det = a * d - b * c;
    // NOTE: the quarter discriminant is computed as ((a−d)/2)² + bc rather than τ²/4 − Δ: the
    // two are equal in exact arithmetic, but the latter cancels catastrophically when the
    // eigenvalues are close (as nalgebra does for its 2×2 eigen-decomposition).
    let half_diff = 0.5 * (a - d);
    let quarter_disc = half_diff * half_diff + b * c;
    let discriminant = 4.0 * quarter_disc;
    let s = a.abs().max(b.abs()).max(c.abs()).max(d.abs());
    let class = classify(trace, det, quarter_disc, half_diff, b, c, s);

    let half_tr = 0.5 * trace;
    let (eigenvalues, eigenvectors) = if quarter_disc >= 0.0 {
        let root = quarter_disc.sqrt();
        // The larger-magnitude root first, the other from the product Δ to avoid cancellation.
        let big = if half_tr >= 0.0 {
            half_tr + root
        } else {
            half_tr - root
        };
        let small = if big != 0.0 {
            det / big
        } else {
            half_tr - root
        };
        let (l1, l2) = if big >= small {
            (big, small)
        } else {
            (small, big)
        };
        let v1 = real_eigenvector(a, b, c, d, l1, [1.0, 0.0]);
        let v2 = if (l1 - l2).abs() <= CLASS_EPS * s.max(f64::MIN_POSITIVE) {
            // Repeated eigenvalue: the second vector is orthogonal to the first when J = λI,
            // else there is only one direction and it is reported twice.
            if b.abs() <= CLASS_EPS * s && c.abs() <= CLASS_EPS * s {
                [-v1[1], v1[0]]
            } else {
                v1
            }
        } else {
            real_eigenvector(a, b, c, d, l2, [0.0, 1.0])
        };
        (
            [Complex::new(l1, 0.0), Complex::new(l2, 0.0)],
            [
                v1.map(|v| Complex::new(v, 0.0)),
                v2.map(|v| Complex::new(v, 0.0)),
            ],
        )
    } else {
        let omega = (-quarter_disc).sqrt();
        // (J − λI) v = 0 with λ = τ/2 + iω: v = (b, λ − a) or (λ − d, c).
        let v = if b.abs() >= c.abs() {
            [Complex::new(b, 0.0), Complex::new(half_tr - a, omega)]
        } else {
            [Complex::new(half_tr - d, omega), Complex::new(c, 0.0)]
        };
        let n =
            (v[0].re * v[0].re + v[0].im * v[0].im + v[1].re * v[1].re + v[1].im * v[1].im).sqrt();
        let v = v.map(|z| Complex::new(z.re / n, z.im / n));
        let conj = v.map(|z| Complex::new(z.re, -z.im));
        (
            [Complex::new(half_tr, omega), Complex::new(half_tr, -omega)],
            [v, conj],
        )
    };
    Linearisation {
        jacobian,
        trace,
        det,
        discriminant,
        eigenvalues,
        eigenvectors,
        class,
    }
}

/// The trace–determinant test with tolerances relative to the largest entry `s`.
fn classify(
    trace: f64,
    det: f64,
    quarter_disc: f64,
    half_diff: f64,
    b: f64,
    c: f64,
    s: f64,
) -> Class {
    if s == 0.0 || !s.is_finite() {
        return Class::ZeroEigenvalue;
    }
    let s2 = s * s;
    if det.abs() <= CLASS_EPS * s2 {
        return Class::ZeroEigenvalue;
    }
    if det < 0.0 {
        return Class::Saddle;
    }
    let stable = trace < 0.0;
    if trace.abs() <= CLASS_EPS * s {
        return Class::Center;
    }
    if quarter_disc.abs() <= CLASS_EPS * s2 {
        let scalar = half_diff.abs() <= CLASS_EPS * s
            && b.abs() <= CLASS_EPS * s
            && c.abs() <= CLASS_EPS * s;
        return match (scalar, stable) {
            (true, true) => Class::StableStar,
            (true, false) => Class::UnstableStar,
            (false, true) => Class::StableDegenerateNode,
            (false, false) => Class::UnstableDegenerateNode,
        };
    }
    match (quarter_disc > 0.0, stable) {
        (true, true) => Class::StableNode,
        (true, false) => Class::UnstableNode,
        (false, true) => Class::StableSpiral,
        (false, false) => Class::UnstableSpiral,
    }
}

/// A unit eigenvector for a real eigenvalue `l`, from whichever row of J − lI is better
/// conditioned; `fallback` when J − lI vanishes.
fn real_eigenvector(a: f64, b: f64, c: f64, d: f64, l: f64, fallback: [f64; 2]) -> [f64; 2] {
    let v1 = [b, l - a];
    let v2 = [l - d, c];
    let n1 = v1[0].hypot(v1[1]);
    let n2 = v2[0].hypot(v2[1]);
    let (v, n) = if n1 >= n2 { (v1, n1) } else { (v2, n2) };
    if n == 0.0 || !n.is_finite() {
        return fallback;
    }
    // A fixed sign convention: first nonzero component positive.
    let sign = if v[0] < 0.0 || (v[0] == 0.0 && v[1] < 0.0) {
        -1.0
    } else {
        1.0
    };
    [sign * v[0] / n, sign * v[1] / n]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn huge_and_tiny_jacobians_classify_as_their_scaled_copies() {
        // The class is invariant under J → kJ for k > 0 (trace–determinant test, common
        // practice); the eigenvalues scale with k.
        for j in [
            [[1.0, 0.0], [0.0, -0.2]],
            [[-0.04, -0.4], [0.32, 0.0]],
            [[0.0, -2.0], [0.75, 0.0]],
            [[-1.0, 0.5], [0.2, -3.0]],
        ] {
            let base = linearise(j);
            for k in [1e200, 1e-200, 1e300] {
                let l = linearise(j.map(|r| r.map(|v| v * k)));
                assert_eq!(l.class, base.class, "{j:?} × {k}");
                for (a, b) in l.eigenvalues.iter().zip(&base.eigenvalues) {
                    assert!((a.re - b.re * k).abs() <= 1e-12 * k, "{j:?} × {k}");
                    assert!((a.im - b.im * k).abs() <= 1e-12 * k, "{j:?} × {k}");
                }
                // Shown without snapping real numbers away.
                let d = l.for_display();
                assert_eq!(d.eigenvalues, l.eigenvalues, "{j:?} × {k}");
            }
        }
        // In range, nothing changes: the plain computation is used.
        let j = [[0.3, -1.7], [2.2, 0.1]];
        assert_eq!(linearise(j), linearise_in_range(j));
    }

    #[test]
    fn rounding_noise_is_shown_as_zero_and_real_numbers_are_kept() {
        // The Lotka–Volterra centre's Jacobian at a Newton-solved point, with the diagonal
        // off zero by rounding (as a harvested model's equilibrium gives).
        let l = linearise([[1.1e-16, -2.4], [0.525, -2.2e-16]]);
        assert_eq!(l.class, Class::Center);
        assert!(l.trace != 0.0 && l.eigenvalues[0].re != 0.0);
        let d = l.for_display();
        assert_eq!(d.trace, 0.0);
        assert_eq!(d.jacobian[0][0], 0.0);
        assert_eq!(d.eigenvalues[0].re, 0.0);
        assert_eq!(d.eigenvalues[0].im, l.eigenvalues[0].im);
        assert_eq!(d.det, l.det);
        // A small but real trace (a weak focus, 1e-6 of the scale) is kept.
        let w = linearise([[1e-6, -1.0], [1.0, 0.0]]);
        assert_eq!(w.for_display().trace, w.trace);
        assert_eq!(w.for_display().eigenvalues, w.eigenvalues);
    }

    fn class_of(j: [[f64; 2]; 2]) -> Class {
        linearise(j).class
    }

    // Expected classes by the trace–determinant test (common practice; e.g. Strogatz,
    // "Nonlinear Dynamics and Chaos", §5.2).
    #[test]
    fn trace_determinant_classes() {
        assert_eq!(class_of([[1.0, 0.0], [0.0, -1.0]]), Class::Saddle);
        assert_eq!(class_of([[-1.0, 0.0], [0.0, -2.0]]), Class::StableNode);
        assert_eq!(class_of([[1.0, 0.0], [0.0, 2.0]]), Class::UnstableNode);
        assert_eq!(class_of([[-0.1, -1.0], [1.0, -0.1]]), Class::StableSpiral);
        assert_eq!(class_of([[0.1, -1.0], [1.0, 0.1]]), Class::UnstableSpiral);
        assert_eq!(class_of([[0.0, -1.0], [1.0, 0.0]]), Class::Center);
        assert_eq!(
            class_of([[-1.0, 1.0], [0.0, -1.0]]),
            Class::StableDegenerateNode
        );
        assert_eq!(
            class_of([[1.0, 1.0], [0.0, 1.0]]),
            Class::UnstableDegenerateNode
        );
        assert_eq!(class_of([[-2.0, 0.0], [0.0, -2.0]]), Class::StableStar);
        assert_eq!(class_of([[2.0, 0.0], [0.0, 2.0]]), Class::UnstableStar);
        assert_eq!(class_of([[1.0, 2.0], [0.5, 1.0]]), Class::ZeroEigenvalue);
        assert_eq!(class_of([[0.0, 0.0], [0.0, 0.0]]), Class::ZeroEigenvalue);
    }

    #[test]
    fn lotka_volterra_interior_jacobian_is_a_linear_centre_with_omega_sqrt_ac() {
        // Closed form (common practice): at (c/γ, a/α) the Jacobian is [[0, −αc/γ], [γa/α, 0]],
        // with eigenvalues ±i√(ac).
        let (a, alpha, c, gamma) = (1.0, 0.1, 1.5, 0.075);
        let j = [[0.0, -alpha * c / gamma], [gamma * a / alpha, 0.0]];
        let lin = linearise(j);
        assert_eq!(lin.class, Class::Center);
        assert!((lin.eigenvalues[0].im - (a * c).sqrt()).abs() < 1e-14);
        assert_eq!(lin.eigenvalues[0].re, 0.0);
        assert!((lin.det - a * c).abs() < 1e-14);
    }

    #[test]
    fn eigenpairs_satisfy_the_eigen_equation() {
        let cases = [
            [[1.0, 2.0], [3.0, -4.0]],
            [[-0.5, 0.2], [0.1, -0.3]],
            [[0.3, -2.0], [1.5, -0.1]],
            [[1e-8, 1.0], [1.0, 1e-8]],
        ];
        for j in cases {
            let lin = linearise(j);
            for k in 0..2 {
                let l = lin.eigenvalues[k];
                let v = lin.eigenvectors[k];
                for row in 0..2 {
                    // (J v − λ v)_row, complex.
                    let jv_re = j[row][0] * v[0].re + j[row][1] * v[1].re;
                    let jv_im = j[row][0] * v[0].im + j[row][1] * v[1].im;
                    let lv_re = l.re * v[row].re - l.im * v[row].im;
                    let lv_im = l.re * v[row].im + l.im * v[row].re;
                    assert!((jv_re - lv_re).abs() < 1e-12, "{j:?}");
                    assert!((jv_im - lv_im).abs() < 1e-12, "{j:?}");
                }
            }
            assert!((lin.eigenvalues[0].re + lin.eigenvalues[1].re - lin.trace).abs() < 1e-12);
        }
    }

    #[test]
    fn near_equal_eigenvalues_do_not_cancel() {
        // Eigenvalues 1 and 1 + 1e-6: the quarter discriminant is 2.5e-13, which τ²/4 − Δ would
        // lose to rounding; ((a−d)/2)² + bc keeps it.
        let lin = linearise([[1.0 + 1e-6, 0.0], [0.0, 1.0]]);
        assert!((lin.eigenvalues[0].re - (1.0 + 1e-6)).abs() < 1e-15);
        assert!((lin.eigenvalues[1].re - 1.0).abs() < 1e-15);
        assert!((lin.discriminant - 1e-12).abs() < 1e-20);
    }
}
