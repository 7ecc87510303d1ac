//! The nonlinear verdict on a linear centre.
//!
//! Purely imaginary eigenvalues leave the question open: the real model may have closed orbits
//! around the point (a centre) or may spiral slowly in or out (a weak focus). The tests run in
//! this order and the first that decides says so:
//! 1. a first integral (built in, or supplied and verified: ∇H·F ≈ 0 on a sample grid) with an
//!    extremum at the point → centre;
//! 2. a reversing symmetry (x, y, t) → (x, 2y₀ − y, −t) or (2x₀ − x, y, −t), checked exactly on
//!    the polynomial form of the rates → centre;
//! 3. the first Lyapunov coefficient ℓ₁ from the exact second and third derivatives, when it is
//!    clearly nonzero → stable focus (ℓ₁ < 0) or unstable focus (ℓ₁ > 0);
//! 4. the return map on small circles around the point: a displacement at the level of the
//!    integration error at every radius → centre; a consistent sign → the focus;
//!
//! Otherwise the verdict is undetermined.

use serde::Serialize;

use crate::expr::{self, Expr};
use crate::linear::Linearisation;
use crate::model::Model;
use crate::orbit;

/// Largest relative residual |∇H·F| / (|∇H|·|F|) on the sample grid for which a supplied first
/// integral counts as verified.
pub const INVARIANT_TOL: f64 = 1e-9;

/// ℓ₁ counts as clearly nonzero when it exceeds this fraction of the size of the terms it is
/// made of (below that it is rounding noise from cancelling terms).
pub const LYAPUNOV_REL_TOL: f64 = 1e-6;

/// Relative tolerance for two polynomials to be identical in the symmetry test.
pub const SYMMETRY_TOL: f64 = 1e-9;

/// The nonlinear verdict on a linear centre.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Verdict {
    /// Closed orbits surround the point.
    Center,
    /// Orbits spiral in, slowly.
    StableFocus,
    /// Orbits spiral out, slowly.
    UnstableFocus,
    /// No test could decide.
    Undetermined,
}

impl Verdict {
    /// The snake_case name used in JSON output.
    pub fn as_str(self) -> &'static str {
        match self {
            Verdict::Center => "center",
            Verdict::StableFocus => "stable_focus",
            Verdict::UnstableFocus => "unstable_focus",
            Verdict::Undetermined => "undetermined",
        }
    }
}

/// Which test decided a [`Verdict`], with what it measured.
#[derive(Clone, Debug, PartialEq, Serialize)]
#[serde(tag = "test", rename_all = "snake_case")]
pub enum DecidedBy {
    /// A first integral with an extremum at the point.
    FirstIntegral {
        /// The worst relative residual |∇H·F| / (|∇H|·|F|) found on the check grid.
        worst_residual: f64,
    },
    /// A reversing symmetry in one of the axes through the point.
    ReversingSymmetry {
        /// "y" for (x, y, t) → (x, 2y₀ − y, −t), "x" for (2x₀ − x, y, −t).
        mirror: &'static str,
    },
    /// The first Lyapunov coefficient.
    LyapunovCoefficient {
        /// ℓ₁ (in the normalisation ⟨q, q⟩ = 1 of Kuznetsov, "Elements of Applied Bifurcation
        /// Theory", §3.5).
        l1: f64,
    },
    /// The return map on small circles.
    ReturnMap {
        /// Radii tried (in units of the first variable).
        radii: Vec<f64>,
        /// Relative radial displacement after one turn at each radius.
        displacements: Vec<f64>,
        /// Estimated integration noise on each displacement.
        noise: Vec<f64>,
    },
    /// No test applied or decided.
    Nothing {
        /// What was tried and why it did not decide.
        reason: String,
    },
}

/// A verdict and what decided it.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct NonlinearVerdict {
    /// The verdict.
    pub verdict: Verdict,
    /// The test that decided it.
    pub decided_by: DecidedBy,
}

impl NonlinearVerdict {
    /// One plain sentence for people.
    pub fn sentence(&self) -> String {
        let what = match self.verdict {
            Verdict::Center => "orbits close around it: a true centre",
            Verdict::StableFocus => "orbits spiral slowly in: a weak stable focus",
            Verdict::UnstableFocus => "orbits spiral slowly out: a weak unstable focus",
            Verdict::Undetermined => "no test could tell a centre from a weak focus",
        };
        let how = match &self.decided_by {
            DecidedBy::FirstIntegral { .. } => {
                "decided by a first integral that is conserved and has an extremum here".to_owned()
            }
            DecidedBy::ReversingSymmetry { mirror } => {
                format!("decided by a time-reversing mirror symmetry in {mirror} through the point")
            }
            DecidedBy::LyapunovCoefficient { l1 } => {
                format!("decided by the first Lyapunov coefficient l1 = {l1:.3e}")
            }
            DecidedBy::ReturnMap { displacements, .. } => format!(
                "decided by the return map on {} small circles (largest relative displacement {:.1e})",
                displacements.len(),
                displacements.iter().fold(0.0_f64, |m, d| m.max(d.abs()))
            ),
            DecidedBy::Nothing { reason } => reason.clone(),
        };
        format!("The linearisation alone cannot decide; {what}, {how}.")
    }
}

/// Result of checking a first integral against the rates on a grid.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct InvariantCheck {
    /// Whether ∇H·F vanished (relative to |∇H|·|F|) at every usable sample.
    pub verified: bool,
    /// The worst relative residual.
    pub worst: f64,
    /// Samples where H, F and ∇H were finite and nonzero.
    pub samples: usize,
}

/// Checks that the model's first integral is conserved: ∇H·F ≈ 0 on a 17×17 grid over the
/// window (samples where anything is non-finite or vanishes are skipped).
pub fn check_invariant(model: &Model) -> Option<InvariantCheck> {
    if !model.has_invariant() {
        return None;
    }
    let w = model.window();
    let n = 17;
    let mut worst = 0.0_f64;
    let mut samples = 0;
    for i in 0..n {
        for j in 0..n {
            // Interior points only: the edges are often where logarithms blow up.
            let x = w.x_min + w.width() * (i as f64 + 0.5) / n as f64;
            let y = w.y_min + w.height() * (j as f64 + 0.5) / n as f64;
            let (h, grad) = model.invariant_and_gradient(x, y)?;
            let [f, g] = model.rates(x, y);
            let scale = grad[0].hypot(grad[1]) * f.hypot(g);
            if !(h.is_finite() && scale.is_finite() && scale > 0.0) {
                continue;
            }
            let r = (grad[0] * f + grad[1] * g).abs() / scale;
            worst = worst.max(r);
            samples += 1;
        }
    }
    Some(InvariantCheck {
        verified: samples >= n && worst <= INVARIANT_TOL,
        worst,
        samples,
    })
}

/// Decides what a linear centre at (x0, y0) really is. `invariant` is the model's verified
/// first integral check (from [`check_invariant`]), if any.
pub fn decide(
    model: &Model,
    x0: f64,
    y0: f64,
    lin: &Linearisation,
    invariant: Option<InvariantCheck>,
) -> NonlinearVerdict {
    let mut tried = Vec::new();
    // 1. A first integral with a strict extremum at the point.
    match invariant {
        Some(check) if check.verified => {
            if invariant_has_extremum(model, x0, y0) {
                return NonlinearVerdict {
                    verdict: Verdict::Center,
                    decided_by: DecidedBy::FirstIntegral {
                        worst_residual: check.worst,
                    },
                };
            }
            tried.push("the first integral has no extremum here");
        }
        Some(_) => tried.push("the supplied first integral is not conserved"),
        None => {}
    }
    // 2. A reversing symmetry.
    match reversing_symmetry(model, x0, y0) {
        Some(mirror) => {
            return NonlinearVerdict {
                verdict: Verdict::Center,
                decided_by: DecidedBy::ReversingSymmetry { mirror },
            };
        }
        None => tried.push("no mirror symmetry"),
    }
    // 3. The first Lyapunov coefficient.
    let omega = lin.det.max(0.0).sqrt();
    if let Some((l1, size)) = lyapunov_coefficient(model, x0, y0, lin.jacobian, omega)
        && l1.abs() > LYAPUNOV_REL_TOL * size
    {
        return NonlinearVerdict {
            verdict: if l1 < 0.0 {
                Verdict::StableFocus
            } else {
                Verdict::UnstableFocus
            },
            decided_by: DecidedBy::LyapunovCoefficient { l1 },
        };
    }
    tried.push("the first Lyapunov coefficient vanishes to rounding");
    // 4. The return map.
    match return_map_test(model, x0, y0, omega) {
        Ok(v) => v,
        Err(reason) => {
            tried.push(reason);
            NonlinearVerdict {
                verdict: Verdict::Undetermined,
                decided_by: DecidedBy::Nothing {
                    reason: tried.join("; "),
                },
            }
        }
    }
}

/// Whether H has a strict local extremum at the point (definite Hessian), by central
/// differences of the exact gradient.
fn invariant_has_extremum(model: &Model, x0: f64, y0: f64) -> bool {
    let w = model.window();
    let hx = 1e-5 * w.width().max(x0.abs());
    let hy = 1e-5 * w.height().max(y0.abs());
    let grad = |x, y| model.invariant_and_gradient(x, y).map(|(_, g)| g);
    let (Some(gxp), Some(gxm), Some(gyp), Some(gym)) = (
        grad(x0 + hx, y0),
        grad(x0 - hx, y0),
        grad(x0, y0 + hy),
        grad(x0, y0 - hy),
    ) else {
        return false;
    };
    let hxx = (gxp[0] - gxm[0]) / (2.0 * hx);
    let hyy = (gyp[1] - gym[1]) / (2.0 * hy);
    let hxy = 0.5 * ((gxp[1] - gxm[1]) / (2.0 * hx) + (gyp[0] - gym[0]) / (2.0 * hy));
    let det = hxx * hyy - hxy * hxy;
    det.is_finite() && det > 1e-8 * (hxx * hxx + hyy * hyy + hxy * hxy)
}

/// Checks the two mirror reversing symmetries through the point exactly, on the polynomial
/// form of the rates; `None` when neither holds or the rates are not polynomial.
fn reversing_symmetry(model: &Model, x0: f64, y0: f64) -> Option<&'static str> {
    let [xn, yn] = model.variables();
    let [f, g] = model.rate_exprs();
    let spec = model.spec();
    let values = |name: &str| {
        spec.parameters
            .iter()
            .position(|p| p.name == name)
            .map(|i| model.params()[i])
    };
    let vars = [xn, yn];
    let poly = |e: &Expr| e.to_polynomial(&vars, &values);
    let (pf, pg) = (poly(f)?, poly(g)?);
    let mirror = |var: &str, centre: f64| -> Option<(expr::Polynomial, expr::Polynomial)> {
        let image = expr::parse(&format!("{:?} - {var}", 2.0 * centre)).ok()?;
        Some((
            poly(&f.substitute(var, &image))?,
            poly(&g.substitute(var, &image))?,
        ))
    };
    // (x, y, t) → (x, 2y₀ − y, −t): f(x, ȳ) = −f(x, y), g(x, ȳ) = g(x, y).
    if let Some((mf, mg)) = mirror(yn, y0)
        && mf.approx_eq(&pf.scale(-1.0), SYMMETRY_TOL)
        && mg.approx_eq(&pg, SYMMETRY_TOL)
    {
        return Some("y");
    }
    // (x, y, t) → (2x₀ − x, y, −t): f(x̄, y) = f(x, y), g(x̄, y) = −g(x, y).
    if let Some((mf, mg)) = mirror(xn, x0)
        && mf.approx_eq(&pf, SYMMETRY_TOL)
        && mg.approx_eq(&pg.scale(-1.0), SYMMETRY_TOL)
    {
        return Some("x");
    }
    None
}

#[derive(Clone, Copy, Debug, PartialEq)]
struct C {
    re: f64,
    im: f64,
}

impl C {
    const fn new(re: f64, im: f64) -> Self {
        Self { re, im }
    }
    fn conj(self) -> Self {
        Self::new(self.re, -self.im)
    }
    fn abs2(self) -> f64 {
        self.re * self.re + self.im * self.im
    }
}
impl std::ops::Add for C {
    type Output = C;
    fn add(self, o: C) -> C {
        C::new(self.re + o.re, self.im + o.im)
    }
}
impl std::ops::Sub for C {
    type Output = C;
    fn sub(self, o: C) -> C {
        C::new(self.re - o.re, self.im - o.im)
    }
}
impl std::ops::Mul for C {
    type Output = C;
    fn mul(self, o: C) -> C {
        C::new(
            self.re * o.re - self.im * o.im,
            self.re * o.im + self.im * o.re,
        )
    }
}
impl std::ops::Mul<f64> for C {
    type Output = C;
    fn mul(self, o: f64) -> C {
        C::new(self.re * o, self.im * o)
    }
}
impl std::ops::Div for C {
    type Output = C;
    fn div(self, o: C) -> C {
        let d = o.abs2();
        C::new(
            (self.re * o.re + self.im * o.im) / d,
            (self.im * o.re - self.re * o.im) / d,
        )
    }
}

/// ⟨p, q⟩ = Σ conj(pᵢ) qᵢ.
fn dot(p: [C; 2], q: [C; 2]) -> C {
    p[0].conj() * q[0] + p[1].conj() * q[1]
}

/// The first Lyapunov coefficient at a linear centre with frequency `omega`, by the invariant
/// formula of Kuznetsov, "Elements of Applied Bifurcation Theory" (3rd ed.), §3.5, eq. (3.20):
/// ℓ₁ = Re[⟨p, C(q,q,q̄)⟩ − 2⟨p, B(q, A⁻¹B(q,q̄))⟩ + ⟨p, B(q̄, (2iωI − A)⁻¹B(q,q))⟩] / (2ω),
/// with Aq = iωq, Aᵀp = −iωp, ⟨q, q⟩ = ⟨p, q⟩ = 1. Returns ℓ₁ and the size of the terms it is
/// made of, for the cancellation test.
pub fn lyapunov_coefficient(
    model: &Model,
    x0: f64,
    y0: f64,
    jac: [[f64; 2]; 2],
    omega: f64,
) -> Option<(f64, f64)> {
    if !(omega > 0.0 && omega.is_finite()) {
        return None;
    }
    let [[a, b], [c, d]] = jac;
    let t = model.taylor3(x0, y0);
    // Second and third derivative tensors of each rate, from the index layout of Taylor3.
    let second = |r: &[f64; 10]| [[r[3], r[4]], [r[4], r[5]]];
    let third = |r: &[f64; 10]| {
        // [j][k][l]: counts of x and y decide the entry.
        let mut out = [[[0.0; 2]; 2]; 2];
        for (j, plane) in out.iter_mut().enumerate() {
            for (k, row) in plane.iter_mut().enumerate() {
                for (l, v) in row.iter_mut().enumerate() {
                    *v = r[6 + j + k + l];
                }
            }
        }
        out
    };
    let h2 = [second(&t.f), second(&t.g)];
    let h3 = [third(&t.f), third(&t.g)];
    if h2
        .iter()
        .flatten()
        .flatten()
        .chain(h3.iter().flatten().flatten().flatten())
        .any(|v| !v.is_finite())
    {
        return None;
    }
    let bform = |u: [C; 2], v: [C; 2]| -> [C; 2] {
        let mut out = [C::new(0.0, 0.0); 2];
        for (i, o) in out.iter_mut().enumerate() {
            for j in 0..2 {
                for k in 0..2 {
                    *o = *o + u[j] * v[k] * h2[i][j][k];
                }
            }
        }
        out
    };
    let cform = |u: [C; 2], v: [C; 2], w: [C; 2]| -> [C; 2] {
        let mut out = [C::new(0.0, 0.0); 2];
        for (i, o) in out.iter_mut().enumerate() {
            for j in 0..2 {
                for k in 0..2 {
                    for l in 0..2 {
                        *o = *o + u[j] * v[k] * w[l] * h3[i][j][k][l];
                    }
                }
            }
        }
        out
    };
    let iw = C::new(0.0, omega);
    // Right eigenvector for iω: (b, iω − a) or (iω − d, c).
    let mut q = if b.abs() >= c.abs() {
        [C::new(b, 0.0), iw - C::new(a, 0.0)]
    } else {
        [iw - C::new(d, 0.0), C::new(c, 0.0)]
    };
    let nq = (q[0].abs2() + q[1].abs2()).sqrt();
    if nq <= 0.0 || nq.is_nan() {
        return None;
    }
    q = q.map(|z| z * (1.0 / nq));
    // Left eigenvector: Aᵀp = −iωp, i.e. (c, −iω − a) or (−iω − d, b).
    let mut p = if c.abs() >= b.abs() {
        [C::new(c, 0.0), C::new(-a, -omega)]
    } else {
        [C::new(-d, -omega), C::new(b, 0.0)]
    };
    let s = dot(p, q);
    if s.abs2() == 0.0 {
        return None;
    }
    let sc = s.conj();
    p = p.map(|z| z / sc);
    let qb = q.map(C::conj);

    // Real solve A z = r (r real here since B(q, q̄) is real).
    let det = a * d - b * c;
    if det == 0.0 {
        return None;
    }
    let solve_real = |r: [C; 2]| -> [C; 2] {
        [
            (r[0] * d - r[1] * b) * (1.0 / det),
            (r[1] * a - r[0] * c) * (1.0 / det),
        ]
    };
    // Complex solve (2iωI − A) z = r.
    let m11 = C::new(-a, 2.0 * omega);
    let m12 = C::new(-b, 0.0);
    let m21 = C::new(-c, 0.0);
    let m22 = C::new(-d, 2.0 * omega);
    let cdet = m11 * m22 - m12 * m21;
    let solve_complex = |r: [C; 2]| -> [C; 2] {
        [
            (r[0] * m22 - r[1] * m12) / cdet,
            (r[1] * m11 - r[0] * m21) / cdet,
        ]
    };
    let t1 = dot(p, cform(q, q, qb));
    let t2 = dot(p, bform(q, solve_real(bform(q, qb)))) * 2.0;
    let t3 = dot(p, bform(qb, solve_complex(bform(q, q))));
    let l1 = (t1 - t2 + t3).re / (2.0 * omega);
    let size = (t1.abs2().sqrt() + t2.abs2().sqrt() + t3.abs2().sqrt()) / (2.0 * omega);
    l1.is_finite().then_some((l1, size))
}

/// Return-map test on three small circles around the point.
fn return_map_test(
    model: &Model,
    x0: f64,
    y0: f64,
    omega: f64,
) -> Result<NonlinearVerdict, &'static str> {
    let w = model.window();
    // Distance to the nearest window edge bounds the circles; a point on an edge uses the
    // window's size instead.
    let edge = (x0 - w.x_min)
        .min(w.x_max - x0)
        .min(y0 - w.y_min)
        .min(w.y_max - y0);
    let reach = if edge > 0.0 {
        edge
    } else {
        0.1 * w.width().min(w.height())
    };
    let fractions = [0.01, 0.02, 0.04];
    let mut radii = Vec::new();
    let mut displacements = Vec::new();
    let mut noise = Vec::new();
    for frac in fractions {
        let r = frac * reach;
        let fine = orbit::radial_return(model, [x0, y0], r, omega, 1e-12)
            .ok_or("an orbit from a small circle did not come back around")?;
        let coarse = orbit::radial_return(model, [x0, y0], r, omega, 1e-10)
            .ok_or("an orbit from a small circle did not come back around")?;
        radii.push(r);
        displacements.push(fine);
        // NOTE: the integration error on the displacement is estimated from the difference
        // between two tolerances; a floor of 1e-11 covers the case where both agree by chance.
        noise.push((fine - coarse).abs().max(1e-11));
    }
    let decided_by = DecidedBy::ReturnMap {
        radii,
        displacements: displacements.clone(),
        noise: noise.clone(),
    };
    let significant: Vec<bool> = displacements
        .iter()
        .zip(&noise)
        .map(|(d, n)| d.abs() > 10.0 * n)
        .collect();
    let verdict = if significant.iter().all(|s| !s) {
        Verdict::Center
    } else if significant.iter().all(|s| *s) && displacements.iter().all(|d| *d < 0.0) {
        Verdict::StableFocus
    } else if significant.iter().all(|s| *s) && displacements.iter().all(|d| *d > 0.0) {
        Verdict::UnstableFocus
    } else {
        return Err("the return map gives no consistent sign at small radii");
    };
    Ok(NonlinearVerdict {
        verdict,
        decided_by,
    })
}
