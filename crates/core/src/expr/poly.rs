//! Multivariate polynomials with `f64` coefficients, for exact symbolic checks such as a
//! reversing symmetry: `f(x, 2·y0 − y) + f(x, y)` is identically zero as a polynomial, which no
//! finite set of sample points can prove.

use std::collections::BTreeMap;
use std::ops::{Add, Mul, Neg, Sub};

use super::ast::{BinOp, Expr};

/// Highest power of a polynomial that [`Expr::to_polynomial`] expands (`(x + y)^64` has 65
/// terms; beyond that the expansion is not worth it for a symmetry check).
pub const MAX_EXPANDED_POWER: u32 = 64;

/// A polynomial in a fixed number of variables, stored canonically as a map from exponent
/// vectors (one `u32` per variable) to non-zero coefficients.
#[derive(Clone, Debug, PartialEq)]
pub struct Polynomial {
    n_vars: usize,
    terms: BTreeMap<Vec<u32>, f64>,
}

impl Polynomial {
    /// The zero polynomial in `n_vars` variables.
    pub fn zero(n_vars: usize) -> Polynomial {
        Polynomial {
            n_vars,
            terms: BTreeMap::new(),
        }
    }

    /// The constant `c`.
    pub fn constant(n_vars: usize, c: f64) -> Polynomial {
        let mut p = Polynomial::zero(n_vars);
        p.add_term(vec![0; n_vars], c);
        p
    }

    /// The variable with index `i` (the zero polynomial if `i >= n_vars`).
    pub fn var(n_vars: usize, i: usize) -> Polynomial {
        let mut p = Polynomial::zero(n_vars);
        if i < n_vars {
            let mut e = vec![0; n_vars];
            e[i] = 1;
            p.add_term(e, 1.0);
        }
        p
    }

    /// Number of variables.
    pub fn n_vars(&self) -> usize {
        self.n_vars
    }

    /// The terms as (exponents, coefficient), in lexicographic order of the exponents.
    pub fn terms(&self) -> impl Iterator<Item = (&[u32], f64)> {
        self.terms.iter().map(|(e, &c)| (e.as_slice(), c))
    }

    /// The coefficient of the monomial with these exponents (0 if absent).
    pub fn coefficient(&self, exponents: &[u32]) -> f64 {
        self.terms.get(exponents).copied().unwrap_or(0.0)
    }

    /// Highest total degree of a term (0 for constants and for the zero polynomial).
    pub fn degree(&self) -> u32 {
        self.terms.keys().map(|e| e.iter().sum()).max().unwrap_or(0)
    }

    /// The constant value if the polynomial has no variable terms.
    pub fn as_constant(&self) -> Option<f64> {
        match self.terms.len() {
            0 => Some(0.0),
            1 => self.terms.get(&vec![0; self.n_vars]).copied(),
            _ => None,
        }
    }

    /// Largest absolute value of a coefficient (0 for the zero polynomial).
    pub fn max_abs_coefficient(&self) -> f64 {
        self.terms.values().fold(0.0, |m, c| m.max(c.abs()))
    }

    /// Whether every coefficient has absolute value at most `tol` (an absolute tolerance).
    pub fn is_zero(&self, tol: f64) -> bool {
        self.terms.values().all(|c| c.abs() <= tol)
    }

    /// Whether every coefficient of `self - other` is at most `rel_tol` times the largest
    /// coefficient of either polynomial in absolute value (so cancellation in a sum of large
    /// terms is judged against those terms, not against the tiny remainder).
    pub fn approx_eq(&self, other: &Polynomial, rel_tol: f64) -> bool {
        if self.n_vars != other.n_vars {
            return false;
        }
        let scale = self.max_abs_coefficient().max(other.max_abs_coefficient());
        (self - other).is_zero(rel_tol * scale)
    }

    /// The value at `point` (`point[i]` for variable `i`; missing values read NaN).
    pub fn evaluate(&self, point: &[f64]) -> f64 {
        self.terms
            .iter()
            .map(|(e, &c)| {
                e.iter().enumerate().fold(c, |acc, (i, &k)| {
                    let x = point.get(i).copied().unwrap_or(f64::NAN);
                    acc * x.powi(i32::try_from(k).unwrap_or(i32::MAX))
                })
            })
            .sum()
    }

    /// `self^n` by repeated squaring.
    pub fn pow(&self, n: u32) -> Polynomial {
        let mut result = Polynomial::constant(self.n_vars, 1.0);
        let mut base = self.clone();
        let mut n = n;
        while n > 0 {
            if n & 1 == 1 {
                result = &result * &base;
            }
            n >>= 1;
            if n > 0 {
                base = &base * &base;
            }
        }
        result
    }

    /// Multiplies every coefficient by `k`.
    pub fn scale(&self, k: f64) -> Polynomial {
        let mut p = Polynomial::zero(self.n_vars);
        for (e, &c) in &self.terms {
            p.add_term(e.clone(), c * k);
        }
        p
    }

    fn add_term(&mut self, exponents: Vec<u32>, c: f64) {
        let sum = self.coefficient(&exponents) + c;
        // Keep the representation canonical: no explicit zero coefficients.
        if sum == 0.0 {
            self.terms.remove(&exponents);
        } else {
            self.terms.insert(exponents, sum);
        }
    }
}

impl Add for &Polynomial {
    type Output = Polynomial;
    fn add(self, other: &Polynomial) -> Polynomial {
        let mut p = self.clone();
        p.n_vars = p.n_vars.max(other.n_vars);
        for (e, &c) in &other.terms {
            p.add_term(e.clone(), c);
        }
        p
    }
}

impl Sub for &Polynomial {
    type Output = Polynomial;
    fn sub(self, other: &Polynomial) -> Polynomial {
        self + &(-other)
    }
}

impl Neg for &Polynomial {
    type Output = Polynomial;
    fn neg(self) -> Polynomial {
        self.scale(-1.0)
    }
}

impl Mul for &Polynomial {
    type Output = Polynomial;
    fn mul(self, other: &Polynomial) -> Polynomial {
        let n = self.n_vars.max(other.n_vars);
        let mut p = Polynomial::zero(n);
        for (e1, &c1) in &self.terms {
            for (e2, &c2) in &other.terms {
                let e = (0..n)
                    .map(|i| {
                        let a = e1.get(i).copied().unwrap_or(0);
                        a.saturating_add(e2.get(i).copied().unwrap_or(0))
                    })
                    .collect();
                p.add_term(e, c1 * c2);
            }
        }
        p
    }
}

macro_rules! by_value {
    ($trait:ident, $method:ident) => {
        impl $trait for Polynomial {
            type Output = Polynomial;
            fn $method(self, other: Polynomial) -> Polynomial {
                (&self).$method(&other)
            }
        }
    };
}
by_value!(Add, add);
by_value!(Sub, sub);
by_value!(Mul, mul);

impl Neg for Polynomial {
    type Output = Polynomial;
    fn neg(self) -> Polynomial {
        -&self
    }
}

impl Expr {
    /// This expression as a polynomial in `vars`, with every other name replaced by its value
    /// from `values`.
    ///
    /// `None` if a name is neither in `vars` nor known to `values`, or if the expression is not
    /// a polynomial in `vars`: division by a non-constant, a function, `min` or `max` of a
    /// variable, or a variable raised to anything but a constant non-negative integer (at most
    /// [`MAX_EXPANDED_POWER`]). Constant subexpressions are evaluated as
    /// [`Expr::eval_with`] would.
    pub fn to_polynomial(
        &self,
        vars: &[&str],
        values: &dyn Fn(&str) -> Option<f64>,
    ) -> Option<Polynomial> {
        let n = vars.len();
        let constant = |c: f64| Some(Polynomial::constant(n, c));
        match self {
            Expr::Number(v) => constant(*v),
            Expr::Constant(c) => constant(c.value()),
            Expr::Name { name, .. } => match vars.iter().position(|v| v == name) {
                Some(i) => Some(Polynomial::var(n, i)),
                None => constant(values(name)?),
            },
            Expr::Neg(a) => Some(-a.to_polynomial(vars, values)?),
            Expr::Call(f, a) => constant(f.apply(a.to_polynomial(vars, values)?.as_constant()?)),
            Expr::Binary(op, a, b) => {
                let pa = a.to_polynomial(vars, values)?;
                let pb = b.to_polynomial(vars, values)?;
                match op {
                    BinOp::Add => Some(&pa + &pb),
                    BinOp::Sub => Some(&pa - &pb),
                    BinOp::Mul => Some(&pa * &pb),
                    BinOp::Div => {
                        let d = pb.as_constant()?;
                        if let Some(c) = pa.as_constant() {
                            return constant(c / d);
                        }
                        (d != 0.0 && d.is_finite()).then(|| pa.scale(1.0 / d))
                    }
                    BinOp::Pow => {
                        let k = pb.as_constant()?;
                        if let Some(c) = pa.as_constant() {
                            let v = Expr::binary(BinOp::Pow, Expr::Number(c), Expr::Number(k));
                            return constant(v.eval_with(&|_| None));
                        }
                        let ok =
                            k.fract() == 0.0 && (0.0..=f64::from(MAX_EXPANDED_POWER)).contains(&k);
                        // The range check makes the cast exact.
                        ok.then(|| pa.pow(k as u32))
                    }
                    BinOp::Min | BinOp::Max => {
                        let (x, y) = (pa.as_constant()?, pb.as_constant()?);
                        constant(if *op == BinOp::Min {
                            x.min(y)
                        } else {
                            x.max(y)
                        })
                    }
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::expr::parse;

    fn p(s: &str) -> Expr {
        parse(s).unwrap_or_else(|e| panic!("{s}: {e}"))
    }

    fn lv_params(n: &str) -> Option<f64> {
        match n {
            "a" => Some(1.1),
            "alpha" => Some(0.4),
            "c" => Some(0.9),
            "gamma" => Some(0.3),
            _ => None,
        }
    }

    #[test]
    fn lotka_volterra_rates_are_polynomials_with_the_expected_coefficients() {
        // Reference: closed form, dx/dt = a·x − alpha·x·y.
        let f = p("a*x - alpha*x*y").to_polynomial(&["x", "y"], &lv_params);
        let f = f.unwrap_or_else(|| panic!("not a polynomial"));
        assert_eq!(f.terms().count(), 2);
        assert_eq!(f.coefficient(&[1, 0]), 1.1);
        assert_eq!(f.coefficient(&[1, 1]), -0.4);
        assert_eq!(f.degree(), 2);
        let expected = &(&Polynomial::var(2, 0) * &Polynomial::constant(2, 1.1))
            - &(&Polynomial::var(2, 0) * &Polynomial::var(2, 1)).scale(0.4);
        assert!(f.approx_eq(&expected, 1e-15));
        assert!((f.evaluate(&[2.0, 3.0]) - (1.1 * 2.0 - 0.4 * 6.0)).abs() < 1e-15);
    }

    #[test]
    fn a_reversing_symmetry_shows_as_an_identically_zero_polynomial() {
        // Reference: closed form; g = x*(y - y0) gives g(x, 2*y0 - y) = x*(y0 - y) = -g(x, y).
        let g = p("x*(y - y0)");
        let reflected = g.substitute("y", &p("2*y0 - y"));
        let y0 = |n: &str| (n == "y0").then_some(1.5);
        let sum = Expr::binary(BinOp::Add, reflected, g.clone()).to_polynomial(&["x", "y"], &y0);
        let sum = sum.unwrap_or_else(|| panic!("not a polynomial"));
        assert!(sum.is_zero(1e-12), "{sum:?}");
        // And a rate without the symmetry is caught.
        let h = p("x*y");
        let reflected = h.substitute("y", &p("2*y0 - y"));
        let sum = Expr::binary(BinOp::Add, reflected, h).to_polynomial(&["x", "y"], &y0);
        assert!(sum.is_some_and(|s| !s.is_zero(1e-12)));
    }

    #[test]
    fn non_polynomials_are_rejected() {
        let vars = ["x", "y"];
        for f in [
            "x/y",
            "sin(x)",
            "x^0.5",
            "x^-1",
            "x^y",
            "2^x",
            "min(x, 1)",
            "abs(y)",
            "a*x + unknown",
            "x^65",
            "x/0",
        ] {
            assert!(p(f).to_polynomial(&vars, &lv_params).is_none(), "{f}");
        }
    }

    #[test]
    fn constant_subexpressions_of_any_kind_are_allowed() {
        // Reference: closed form; sin(pi/2) = 1 and sqrt(alpha*10) = 2.
        let f = p("sin(pi/2)*x^2/sqrt(alpha*10) + max(a, c)*y - (x + y)^2");
        let f = f
            .to_polynomial(&["x", "y"], &lv_params)
            .unwrap_or_else(|| panic!("none"));
        let expected =
            p("0.5*x^2 + 1.1*y - x^2 - 2*x*y - y^2").to_polynomial(&["x", "y"], &|_| None);
        let expected = expected.unwrap_or_else(|| panic!("none"));
        assert!(f.approx_eq(&expected, 1e-14), "{f:?}");
    }

    #[test]
    fn arithmetic_follows_the_ring_laws() {
        // Reference: the binomial theorem, (x + y)^3 = x^3 + 3x^2y + 3xy^2 + y^3.
        let s = &Polynomial::var(2, 0) + &Polynomial::var(2, 1);
        let cube = s.pow(3);
        assert_eq!(cube.coefficient(&[2, 1]), 3.0);
        assert_eq!(cube.coefficient(&[0, 3]), 1.0);
        assert!((&cube - &(&s * &s.pow(2))).is_zero(0.0));
        assert_eq!(Polynomial::zero(2).as_constant(), Some(0.0));
        assert!((s.clone() - s).terms().next().is_none());
    }
}
