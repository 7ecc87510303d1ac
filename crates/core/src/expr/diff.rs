//! Symbolic differentiation. Rates are differentiated up to third order (Jacobians, Hessians
//! and the third derivatives of Lyapunov coefficients), so every result is simplified and the
//! raw derivative is built with constructors that already drop zero and unit factors.

use super::ast::{BinOp, Expr};
use super::tape::Func;

impl Expr {
    /// The exact partial derivative `∂self/∂name`, simplified.
    ///
    /// `abs`, `min` and `max` differentiate piecewise through the internal function `sign`
    /// (`d|u| = sign(u)·du`, `d min(u, v) = (du + dv − sign(u − v)·(du − dv))/2`), whose own
    /// derivative is 0.
    pub fn derivative(&self, name: &str) -> Expr {
        d(self, name).simplify()
    }
}

fn zero() -> Expr {
    Expr::Number(0.0)
}

fn is(e: &Expr, v: f64) -> bool {
    e.as_number() == Some(v)
}

fn add(a: Expr, b: Expr) -> Expr {
    if is(&a, 0.0) {
        b
    } else if is(&b, 0.0) {
        a
    } else {
        Expr::binary(BinOp::Add, a, b)
    }
}

fn sub(a: Expr, b: Expr) -> Expr {
    if is(&b, 0.0) {
        a
    } else if is(&a, 0.0) {
        neg(b)
    } else {
        Expr::binary(BinOp::Sub, a, b)
    }
}

fn neg(a: Expr) -> Expr {
    match a {
        Expr::Number(v) => Expr::Number(-v),
        Expr::Neg(inner) => *inner,
        other => Expr::neg(other),
    }
}

fn mul(a: Expr, b: Expr) -> Expr {
    if is(&a, 0.0) || is(&b, 0.0) {
        zero()
    } else if is(&a, 1.0) {
        b
    } else if is(&b, 1.0) {
        a
    } else {
        Expr::binary(BinOp::Mul, a, b)
    }
}

fn div(a: Expr, b: Expr) -> Expr {
    if is(&a, 0.0) {
        zero()
    } else if is(&b, 1.0) {
        a
    } else {
        Expr::binary(BinOp::Div, a, b)
    }
}

fn pow(a: Expr, b: Expr) -> Expr {
    Expr::binary(BinOp::Pow, a, b)
}

fn num(v: f64) -> Expr {
    Expr::Number(v)
}

/// The derivative of `f` at `u`, to be multiplied by `du`.
fn outer(f: Func, u: &Expr) -> Expr {
    let u = u.clone();
    match f {
        Func::Exp => Expr::call(Func::Exp, u),
        Func::Ln => div(num(1.0), u),
        Func::Log10 => div(num(1.0), mul(u, num(std::f64::consts::LN_10))),
        Func::Sqrt => div(num(1.0), mul(num(2.0), Expr::call(Func::Sqrt, u))),
        Func::Abs => Expr::call(Func::Sign, u),
        Func::Sin => Expr::call(Func::Cos, u),
        Func::Cos => neg(Expr::call(Func::Sin, u)),
        // 1 + tan² rather than 1/cos²: it reuses the tan(u) the rate already computes.
        Func::Tan => add(num(1.0), pow(Expr::call(Func::Tan, u), num(2.0))),
        Func::Sign => zero(),
    }
}

fn d(e: &Expr, x: &str) -> Expr {
    match e {
        Expr::Number(_) | Expr::Constant(_) => zero(),
        Expr::Name { name, .. } => num(if name == x { 1.0 } else { 0.0 }),
        Expr::Neg(a) => neg(d(a, x)),
        Expr::Call(Func::Sign, _) => zero(),
        Expr::Call(f, u) => {
            let du = d(u, x);
            if is(&du, 0.0) {
                return zero();
            }
            mul(outer(*f, u), du)
        }
        Expr::Binary(op, u, v) => {
            let (du, dv) = (d(u, x), d(v, x));
            let (u, v) = ((**u).clone(), (**v).clone());
            match op {
                BinOp::Add => add(du, dv),
                BinOp::Sub => sub(du, dv),
                BinOp::Mul => add(mul(du, v.clone()), mul(u, dv)),
                BinOp::Div => {
                    if is(&dv, 0.0) {
                        div(du, v)
                    } else {
                        div(sub(mul(du, v.clone()), mul(u, dv)), pow(v, num(2.0)))
                    }
                }
                BinOp::Pow => {
                    if is(&dv, 0.0) && !v.depends_on(x) {
                        if is(&du, 0.0) {
                            return zero();
                        }
                        // d u^c = c·u^(c−1)·du
                        let reduced = match v.as_number() {
                            Some(c) => num(c - 1.0),
                            None => sub(v.clone(), num(1.0)),
                        };
                        mul(mul(v, pow(u, reduced)), du)
                    } else if !u.depends_on(x) {
                        // d c^v = c^v·ln(c)·dv
                        mul(mul(e.clone(), Expr::call(Func::Ln, u)), dv)
                    } else {
                        // d u^v = u^v·(dv·ln u + v·du/u)
                        let inner =
                            add(mul(dv, Expr::call(Func::Ln, u.clone())), div(mul(v, du), u));
                        mul(e.clone(), inner)
                    }
                }
                BinOp::Min | BinOp::Max => {
                    // min(u, v) = (u + v − |u − v|)/2 and max(u, v) = (u + v + |u − v|)/2.
                    let kink = mul(
                        Expr::call(Func::Sign, sub(u, v)),
                        sub(du.clone(), dv.clone()),
                    );
                    let sum = add(du, dv);
                    let top = if *op == BinOp::Min {
                        sub(sum, kink)
                    } else {
                        add(sum, kink)
                    };
                    mul(num(0.5), top)
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use crate::expr::{Expr, parse};

    fn p(s: &str) -> Expr {
        parse(s).unwrap_or_else(|e| panic!("{s}: {e}"))
    }

    #[test]
    fn textbook_derivatives_print_simply() {
        // Reference: standard differentiation rules, by hand.
        assert_eq!(
            p("a*x - alpha*x*y").derivative("x").to_string(),
            "a - alpha*y"
        );
        assert_eq!(p("a*x - alpha*x*y").derivative("y").to_string(), "-alpha*x");
        assert_eq!(p("x^3").derivative("x").to_string(), "3*x^2");
        assert_eq!(p("sin(x)").derivative("x").to_string(), "cos(x)");
        assert_eq!(p("ln(x)").derivative("x").to_string(), "1/x");
        assert_eq!(p("abs(x)").derivative("x").to_string(), "sign(x)");
        assert_eq!(p("y^2").derivative("x").to_string(), "0");
        assert_eq!(
            p("x^3")
                .derivative("x")
                .derivative("x")
                .derivative("x")
                .to_string(),
            "6"
        );
    }

    /// xorshift64*, deterministic.
    struct Rng(u64);
    impl Rng {
        fn uniform(&mut self, lo: f64, hi: f64) -> f64 {
            self.0 ^= self.0 >> 12;
            self.0 ^= self.0 << 25;
            self.0 ^= self.0 >> 27;
            let bits = self.0.wrapping_mul(0x2545_F491_4F6C_DD1D) >> 11;
            lo + (hi - lo) * (bits as f64 / (1u64 << 53) as f64)
        }
    }

    /// Checks `analytic` against the central difference of `g` in `var` at the point.
    /// NOTE: the difference has truncation error ~h²|g'''|/6 and rounding error
    /// ~eps·|g|/h; with h = 1e-5·max(1, |x|) both are near 1e-10 relative, so the tolerance
    /// is 1e-6 relative to the size of the values plus the rounding term.
    fn check(g: &Expr, analytic: &Expr, var: &str, point: &[(&str, f64)], what: &str) {
        let at = |shift: f64| {
            move |n: &str| {
                point
                    .iter()
                    .find(|(m, _)| *m == n)
                    .map(|&(m, v)| if m == var { v + shift } else { v })
            }
        };
        let x = point.iter().find(|(m, _)| *m == var).map_or(0.0, |p| p.1);
        let h = 1e-5 * x.abs().max(1.0);
        let (gp, gm) = (g.eval_with(&at(h)), g.eval_with(&at(-h)));
        let fd = (gp - gm) / (2.0 * h);
        let exact = analytic.eval_with(&at(0.0));
        let tol =
            1e-6 * (1.0 + exact.abs() + fd.abs()) + 1e2 * f64::EPSILON * gp.abs().max(gm.abs()) / h;
        assert!(
            (fd - exact).abs() <= tol,
            "{what} d/d{var} at {point:?}: analytic {exact} ({analytic}) vs finite difference {fd}"
        );
    }

    #[test]
    fn derivatives_of_every_function_up_to_third_order_match_finite_differences() {
        // Each formula with the expressions whose zeros are its kinks (abs, min, max).
        let formulas: [(&str, &[&str]); 18] = [
            ("exp(x*y)", &[]),
            ("ln(x + y^2)", &[]),
            ("log10(x*y)", &[]),
            ("sqrt(x + 2*y)", &[]),
            ("abs(x - y)*x", &["x - y"]),
            ("sin(x*y) + cos(x - y)", &[]),
            ("tan(x*y)", &[]),
            ("min(x, y^2)", &["x - y^2"]),
            ("max(x*y, y - x)", &["x*y - y + x"]),
            ("x^y", &[]),
            ("2^x*y^-2", &[]),
            ("x^2.5*y^3", &[]),
            ("a*x - alpha*x*y", &[]),
            ("a*x*y/(1 + a*h*x)", &[]),
            ("r*x*(1 - x/K) - q*x*y/(b + x)", &[]),
            ("x/(y + exp(-x))^2 - sqrt(abs(sin(x)))", &["sin(x)"]),
            ("(x*y + 1)^(x/y)", &[]),
            (
                "-x^3 + max(min(x, 2*y), x*y)^2",
                &["x - 2*y", "min(x, 2*y) - x*y"],
            ),
        ];
        let params = [
            ("a", 1.1),
            ("alpha", 0.4),
            ("h", 0.3),
            ("r", 0.9),
            ("K", 5.0),
            ("q", 0.2),
            ("b", 0.6),
        ];
        let mut rng = Rng(0x1234_5678_9ABC_DEF1);
        let mut checks = 0;
        for (f, kinks) in formulas {
            let e = p(f);
            let kinks: Vec<Expr> = kinks.iter().map(|k| p(k)).collect();
            for _ in 0..6 {
                let x = rng.uniform(0.3, 1.2);
                let y = rng.uniform(0.3, 1.2);
                let xy = |n: &str| match n {
                    "x" => Some(x),
                    "y" => Some(y),
                    _ => None,
                };
                // Stay off the kinks, where one-sided derivatives differ.
                if kinks.iter().any(|k| k.eval_with(&xy).abs() < 0.02) {
                    continue;
                }
                let mut point = vec![("x", x), ("y", y)];
                point.extend_from_slice(&params);
                for v1 in ["x", "y"] {
                    let d1 = e.derivative(v1);
                    check(&e, &d1, v1, &point, f);
                    checks += 1;
                    for v2 in ["x", "y"] {
                        let d2 = d1.derivative(v2);
                        check(&d1, &d2, v2, &point, f);
                        for v3 in ["x", "y"] {
                            let d3 = d2.derivative(v3);
                            check(&d2, &d3, v3, &point, f);
                        }
                    }
                }
            }
        }
        assert!(checks > 150, "only {checks} points checked");
    }

    #[test]
    fn mixed_partials_commute() {
        // Reference: Schwarz's theorem, for smooth functions.
        let e = p("a*x*y/(1 + a*h*x) - sin(x*y)*exp(-y)");
        let xy = e.derivative("x").derivative("y");
        let yx = e.derivative("y").derivative("x");
        for &(x, y) in &[(0.5, 0.7), (1.2, 0.3)] {
            let lookup = |n: &str| match n {
                "x" => Some(x),
                "y" => Some(y),
                "a" => Some(1.5),
                "h" => Some(0.2),
                _ => None,
            };
            let (u, v) = (xy.eval_with(&lookup), yx.eval_with(&lookup));
            assert!((u - v).abs() <= 1e-12 * (1.0 + u.abs()), "{u} vs {v}");
        }
    }

    #[test]
    fn third_derivatives_stay_small() {
        // A Holling type II predator rate and a harvested logistic: the third derivatives that
        // a Lyapunov coefficient needs must not swell out of control.
        for f in [
            "a*x*y/(1 + a*h*x)",
            "r*x*(1 - x/K) - q*E*x/(c + x)",
            "exp(-x*y)*sin(x)/(1 + y^2)",
        ] {
            let e = p(f);
            let d3 = e.derivative("x").derivative("x").derivative("x");
            let mixed = e.derivative("x").derivative("y").derivative("y");
            assert!(d3.size() < 40 * e.size(), "{f}: {} nodes: {d3}", d3.size());
            assert!(
                mixed.size() < 40 * e.size(),
                "{f}: {} nodes: {mixed}",
                mixed.size()
            );
        }
    }

    #[test]
    fn derivative_of_sign_is_zero_and_of_constants_is_zero() {
        assert_eq!(
            p("abs(x)").derivative("x").derivative("x"),
            Expr::number(0.0)
        );
        assert_eq!(p("pi*e + k").derivative("x"), Expr::number(0.0));
    }
}
